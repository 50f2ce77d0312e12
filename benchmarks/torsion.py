"""Speed of the finite-element torsion analysis of a 2,000-vertex traced outline.

Goals: J, shear centre and Cw in under 2 s; with 200 Monte Carlo draws of them in under 10 s.
Each figure is printed with its ratio to the goal (below 1.0 meets it).

Run:  python benchmarks/torsion.py [--vertices N] [--draws D]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from tracer.section.geometry import Section
from tracer.torsion import evaluate_torsion, torsion_properties
from tracer.uncertainty import BoundaryOffset, ErrorModel, PointNoise, ScaleError


def traced_outline(n: int) -> Section:
    """A wavy closed outline with n vertices and a bolt hole, about 300 x 200 mm."""
    t = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    r = 1.0 + 0.05 * np.sin(7 * t) + 0.02 * np.cos(23 * t)
    hole = np.column_stack([8 * np.cos(t[::20]) + 330, 8 * np.sin(t[::20]) + 250])
    return Section(np.column_stack([150 * r * np.cos(t) + 400, 100 * r * np.sin(t) + 250]), [hole])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--vertices", type=int, default=2000)
    ap.add_argument("--draws", type=int, default=200)
    args = ap.parse_args()
    section = traced_outline(args.vertices)
    model = ErrorModel((PointNoise(0.05, correlation_length=2.0, direction="normal"), BoundaryOffset(0.1),
                        ScaleError(1e-3)))
    torsion_properties(section)      # imports and warm-up
    t0 = time.perf_counter()
    tor = torsion_properties(section)
    t1 = time.perf_counter() - t0
    t0 = time.perf_counter()
    tor, unc = evaluate_torsion(section, model, draws=args.draws)
    t2 = time.perf_counter() - t0
    print(f"outline of {section.n_vertices:,} vertices (one hole); mesh of {tor.triangles:,} quadratic triangles")
    print(f"  J = {tor.J:.6g} mm^4, Cw = {tor.Cw:.6g} mm^6, shear centre ({tor.xs:.2f}, {tor.ys:.2f}) mm")
    print(f"  J, shear centre, Cw               : {t1:6.2f} s   ratio to 2 s goal  {t1 / 2.0:5.2f}")
    print(f"  the same with {args.draws} Monte Carlo draws: {t2:6.2f} s   ratio to 10 s goal {t2 / 10.0:5.2f}")
    print(f"  u(J) = {unc.u['J']:.3g} mm^4, u(Cw) = {unc.u['Cw']:.3g} mm^6")


if __name__ == "__main__":
    main()
