"""Speed of `tracer batch` on 20 photos: two workers against one.

Renders 20 synthetic photos once (invented members of four kinds beside a 6 x 4 target, about
0.5 MP each) into a temporary folder, then runs `tracer batch FOLDER --out NEW --jobs 1` and
`--jobs 2` as whole processes, alternately, twice each, into fresh output folders (so nothing is
skipped), and prints the best time of each and the speed-up (goal: at least 1.7x on 2 cores).
The machine's load average is printed beside it: other work on the cores lowers the figure.

Run:  python benchmarks/batch.py [--report html|pdf|none]   (default html, as tracer batch)
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import cv2

from tracer.inputs.photo.renders.scene import Scene
from tracer.inputs.photo.renders.synth import render
from tracer.section.shapes import channel, rectangle, tube

N_PHOTOS = 20


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--report", default="html", choices=("html", "pdf", "none"))
    ap.add_argument("--repeat", type=int, default=2)
    args = ap.parse_args()
    shapes = [rectangle(b=47.0, h=150.0, wane={"top_left": 12.0}, chord_angle=0.05),
              rectangle(b=75.0, h=100.0, chord_angle=0.05),
              channel(h=100.0, b=50.0, tw=6.0, tf=8.0, r=6.0, chord_angle=0.05),
              tube(d=88.9, t=5.0, chord_angle=0.05)]
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d) / "yard"
        folder.mkdir()
        for i in range(N_PHOTOS):
            s = shapes[i % len(shapes)]
            x0, y0, _, _ = s.bounds
            r = render(Scene(section=s.translated(85.0 - x0, -30.0 - y0), px_per_mm=4.0, tilt=3.0 + i % 4,
                             member="timber" if i % 4 < 2 else "steel", seed=100 + i))
            cv2.imwrite(str(folder / f"member-{i + 1:02d}.jpg"), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
        h, w = r.image.shape[:2]
        times: dict[int, list[float]] = {1: [], 2: []}
        for rep in range(args.repeat):
            for jobs in (1, 2):
                out = Path(d) / f"out-{jobs}-{rep}"
                t0 = time.perf_counter()
                subprocess.run([sys.executable, "-m", "tracer", "batch", str(folder), "--out", str(out),
                                "--target", "6x4:10mm", "--jobs", str(jobs), "--report", args.report],
                               check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
                times[jobs].append(time.perf_counter() - t0)
        t1, t2 = min(times[1]), min(times[2])
        print(f"{N_PHOTOS} photos of about {w} x {h} px, --report {args.report}, {os.cpu_count()} cores, "
              f"load average {' '.join(f'{v:.2f}' for v in os.getloadavg())} at the end")
        print(f"  tracer batch --jobs 1 : {t1:6.1f} s   ({N_PHOTOS / t1:.2f} photos per s)")
        print(f"  tracer batch --jobs 2 : {t2:6.1f} s   ({N_PHOTOS / t2:.2f} photos per s)")
        print(f"  speed-up              : {t1 / t2:6.2f}x  (goal >= 1.7x)")


if __name__ == "__main__":
    main()
