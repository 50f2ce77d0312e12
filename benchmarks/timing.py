"""What the benchmark scripts share: the timing helper and the 12 MP photo."""

from __future__ import annotations

import contextlib
import tempfile
import time
from pathlib import Path
from typing import Callable, Iterator


def best(fn: Callable[[], object], repeat: int = 5, *, warm_up: bool = True) -> float:
    """Best wall time of `repeat` calls of `fn` [s], after one untimed call."""
    if warm_up:
        fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)



@contextlib.contextmanager
def twelve_megapixel_photo() -> Iterator[tuple[Path, object]]:
    """The synthetic 12 MP photo as a JPEG (quality 92) in a temporary folder, and its render: an
    invented waney joist beside a 9 x 6 target of 15 mm squares, tilted 6 deg, measured with
    ``target="9x6:15mm"``."""
    import cv2

    from tracer.inputs.photo.renders.scene import Scene
    from tracer.inputs.photo.renders.synth import render
    from tracer.section.shapes import rectangle

    scene = Scene(section=rectangle(b=120.0, h=240.0, wane={"top_left": 25.0}, chord_angle=0.05).translated(60, -40),
                  target=(9, 6, 15.0), target_at=(-150.0, -60.0), px_per_mm=8.6, tilt=6.0, blur=1.5, margin=30.0)
    r = render(scene)
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "photo.jpg"
        cv2.imwrite(str(path), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
        yield path, r
