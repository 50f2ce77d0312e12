"""Speed of the exact moment integrator against shapely, measured side by side in one run.

Computes A, cx, cy, Ix, Iy, Ixy of one 1,000,000-vertex polygon with tracer, and the area plus
centroid of the same polygon with shapely (GEOS), and prints the ratio of the best times
(tracer / shapely; goal <= 1.0). Also times one whole ``tracer measure`` process on a sheet.

Run:  python benchmarks/integrator.py [--vertices N] [--repeat K]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import shapely

from timing import best
from tracer.section.geometry import Section
from tracer.section.properties import area_moments


def wavy_ring(n: int) -> np.ndarray:
    """A star-like ring with n vertices, placed far from the origin as a traced outline is."""
    t = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    r = 100.0 + 10.0 * np.sin(37.0 * t)
    return np.column_stack([r * np.cos(t) + 1500.0, r * np.sin(t) + 900.0])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--vertices", type=int, default=1_000_000)
    ap.add_argument("--repeat", type=int, default=15)
    args = ap.parse_args()

    ring = wavy_ring(args.vertices)
    section = Section(ring)
    poly = shapely.Polygon(ring)
    section.packed()  # the packed arrays are built once per Section, like shapely's coordinates

    ours = area_moments(section)
    assert abs(ours.A / poly.area - 1) < 1e-12, "integrators disagree on the area"
    assert abs(ours.cx - poly.centroid.x) < 1e-9 and abs(ours.cy - poly.centroid.y) < 1e-9

    # Interleave the two so that machine noise hits both alike.
    t_ours, t_geos = [], []
    for _ in range(3):
        t_ours.append(best(lambda: area_moments(section), args.repeat))
        t_geos.append(best(lambda: (poly.area, poly.centroid), args.repeat))
    a, g = min(t_ours), min(t_geos)
    print(f"polygon of {args.vertices:,} vertices, best of {3 * args.repeat} runs each")
    print(f"  tracer  A, cx, cy, Ix, Iy, Ixy : {a * 1e3:8.2f} ms")
    print(f"  shapely area + centroid        : {g * 1e3:8.2f} ms")
    print(f"  ratio tracer / shapely         : {a / g:8.2f}   (goal <= 1.0)")

    sheet = Path(__file__).resolve().parents[1] / "tracer" / "examples" / "reclaimed-i-beam.toml"
    runs = []
    for _ in range(5):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "tracer", "measure", str(sheet)], check=True,
                       stdout=subprocess.DEVNULL)
        runs.append(time.perf_counter() - t0)
    t0 = time.perf_counter()
    for _ in range(5):
        subprocess.run([sys.executable, "-c", "pass"], check=True)
    bare = (time.perf_counter() - t0) / 5
    print(f"  tracer measure {sheet.name} (whole process): best {min(runs):.3f} s "
          f"(goal < 0.4 s; a bare python start here takes {bare:.3f} s)")


if __name__ == "__main__":
    main()
