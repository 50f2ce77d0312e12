"""Speed of uncertainty propagation on a 5,000-vertex traced outline, on one core.

Goals: linear propagation (exact sensitivities of every property, and the variance of each error
component) in under 20 ms; 2,000 Monte Carlo draws of the six moments in under 1 s; also shown,
2,000 draws of every property. Each figure is the best of several runs; the ratio to its goal is
printed beside it (below 1.0 meets the goal).

Run:  python benchmarks/uncertainty.py [--vertices N] [--draws D]
"""

from __future__ import annotations

import os

for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):   # one core
    os.environ.setdefault(var, "1")

import argparse  # noqa: E402

import numpy as np  # noqa: E402

from timing import best  # noqa: E402
from tracer.uncertainty.ensemble import ensemble_properties  # noqa: E402
from tracer.section.geometry import Section  # noqa: E402
from tracer.section.properties import section_properties  # noqa: E402
from tracer.uncertainty import (BoundaryOffset, ErrorModel, PointNoise, ScaleError, TiltAllowance,  # noqa: E402
                                _Context, _draw, propagate_linear)


def traced_outline(n: int) -> Section:
    """A wavy closed outline with n vertices, about 300 x 200 mm, as a photo trace would give."""
    t = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    r = 1.0 + 0.05 * np.sin(7 * t) + 0.02 * np.cos(23 * t)
    return Section(np.column_stack([150 * r * np.cos(t) + 400, 100 * r * np.sin(t) + 250]))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--vertices", type=int, default=5000)
    ap.add_argument("--draws", type=int, default=2000)
    args = ap.parse_args()

    section = traced_outline(args.vertices)
    props = section_properties(section)
    model = ErrorModel((PointNoise(0.05, correlation_length=2.0, direction="normal"), BoundaryOffset(0.1),
                        ScaleError(1e-3), TiltAllowance(2.0)))
    ctx = _Context.of(section, props)
    rng = np.random.default_rng(1)
    x, y = _draw(ctx, model, rng, args.draws)

    t_lin = best(lambda: propagate_linear(section, model, props))
    t_draw = best(lambda: _draw(ctx, model, rng, args.draws), repeat=3)
    t_mom = best(lambda: ensemble_properties(section, x, y, base=props, moments_only=True), repeat=3)
    t_all = best(lambda: ensemble_properties(section, x, y, base=props), repeat=3)

    print(f"outline of {args.vertices:,} vertices; error model: correlated normal noise, boundary offset, "
          "scale, tilt allowance")
    print(f"  linear propagation, all properties         : {t_lin * 1e3:8.1f} ms   ratio to 20 ms goal {t_lin / 0.020:5.2f}")
    print(f"  drawing {args.draws:,} perturbed outlines          : {t_draw * 1e3:8.1f} ms")
    print(f"  {args.draws:,} draws, six moments                 : {t_mom * 1e3:8.1f} ms   ratio to 1 s goal  {t_mom / 1.0:5.2f}")
    print(f"  {args.draws:,} draws, six moments incl. drawing   : {(t_mom + t_draw) * 1e3:8.1f} ms   "
          f"ratio to 1 s goal  {(t_mom + t_draw) / 1.0:5.2f}")
    print(f"  {args.draws:,} draws, every property              : {t_all * 1e3:8.1f} ms")


if __name__ == "__main__":
    main()
