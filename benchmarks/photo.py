"""Speed of measuring a 12-megapixel JPEG end to end, against decoding it alone.

Renders a synthetic 4000 x 3000 photo (an invented member beside a 9 x 6 target), then times,
side by side in one process: cv2.imread of the file, and tracer's whole in-process path (load,
target, segmentation, trace, properties and uncertainty); prints the ratio (goal: at most 3x).
Then times `tracer measure PHOTO` as a whole process (goal: under 2 s). Then the same two for a
real photo of a log end (tests/data/real-photos/p14, 0.6 MP as shipped, measured with --dpi 25.4),
the real kind of texture and edge; its decode is small, so its ratio is larger than a 12 MP
photo's.

Run:  python benchmarks/photo.py
"""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

import cv2

from timing import best, twelve_megapixel_photo
from tracer.inputs.photo.pipeline import measure_photo
from tracer.result import measure


def main() -> None:
    with twelve_megapixel_photo() as (path, r):
        h, w = r.image.shape[:2]
        _side_by_side(f"photo of {w} x {h} = {w * h / 1e6:.1f} MP, JPEG", path, ["--target", "9x6:15mm"],
                      dict(target="9x6:15mm"), goal="   (goal <= 3)", runs=2)
    real = next((Path(__file__).resolve().parents[1] / "tests" / "data" / "real-photos").glob("p14_*.jpg"))
    h, w = cv2.imread(str(real)).shape[:2]
    _side_by_side(f"real photo {real.name}, {w} x {h} = {w * h / 1e6:.1f} MP, JPEG", real, ["--dpi", "25.4"],
                  dict(dpi=25.4), goal="", runs=1)


def _side_by_side(title: str, path: Path, args: list[str], kw: dict, *, goal: str, runs: int) -> None:
    """cv2.imread of `path` and tracer's whole in-process path on it, each timed in turn, five
    rounds, the best of each kept; then `tracer measure` as a process (the best of `runs`)."""

    def ours():
        measure(measure_photo(path, **kw).measurement)

    t_read, t_ours = [], []
    for _ in range(5):
        t_read.append(best(lambda: cv2.imread(str(path)), 2))
        t_ours.append(best(ours, 2))
    t_read, t_ours = min(t_read), min(t_ours)
    print(title)
    print(f"  cv2.imread alone                 : {1e3 * t_read:6.0f} ms")
    print(f"  tracer, whole path in-process    : {1e3 * t_ours:6.0f} ms")
    print(f"  ratio                            : {t_ours / t_read:6.2f}{goal}")
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "tracer", "measure", str(path), *args], check=True,
                       stdout=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    print(f"  tracer measure PHOTO, a process  : {min(times):6.2f} s   (goal < 2 s)")


if __name__ == "__main__":
    main()
