"""The review picture: the photo with what was traced, so a person sees at a glance if it is right.

Drawn on the photo: the traced boundary (green) and holes (orange), the scale reference's marks
(target corners, the two scale points or a ruler's ticks, blue) and the area it covers, the centroid, and the principal axes (major
solid, minor dashed), mapped back from the mm plane into the image.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..files import write_atomic_bytes
from ..inputs.photo.pipeline import PhotoMeasurement
from ..section.properties import Properties

__all__ = ["overlay_image", "overlay_bytes", "write_overlay"]


def overlay_image(pm: PhotoMeasurement, props: Properties, u: dict[str, float] | None = None) -> np.ndarray:
    """A BGR image of the photo with the trace, references, centroid and principal axes.

    The label gives A, I1 and I2 with their expanded uncertainty U = 2u where `u` is given.
    """
    import cv2

    img = pm.photo.color.copy()
    h, w = img.shape[:2]
    lw = max(1, int(round(max(h, w) / 700)))
    for i, ring in enumerate(pm.trace.rings_px):
        colour = (60, 200, 60) if i == 0 else (0, 140, 255)
        pts = np.round(ring * 16).astype(np.int32).reshape(-1, 1, 2)
        cv2.polylines(img, [pts], True, colour, lw, lineType=cv2.LINE_AA, shift=4)
    for poly in pm.plane.keep_out:                       # the reference's own area, never the member
        pts = np.round(np.asarray(poly) * 16).astype(np.int32).reshape(-1, 1, 2)
        cv2.polylines(img, [pts], True, (255, 120, 0), max(1, lw // 2), lineType=cv2.LINE_AA, shift=4)
    many = len(pm.plane.marks) > 80                      # a ruler's ticks: dots, not rings
    for x, y in pm.plane.marks:
        centre = (int(round(x * 16)), int(round(y * 16)))
        if many:
            cv2.circle(img, centre, lw * 16, (255, 120, 0), -1, cv2.LINE_AA, 4)
        else:
            cv2.circle(img, centre, 3 * lw * 16, (255, 120, 0), lw, cv2.LINE_AA, 4)
    c = np.array([[props.cx, props.cy]])
    x0, y0, x1, y1 = pm.measurement.section.bounds
    half = 0.6 * math.hypot(x1 - x0, y1 - y0)
    t = math.radians(props.theta)
    for k, (dx, dy) in enumerate(((math.cos(t), math.sin(t)), (-math.sin(t), math.cos(t)))):
        ends = pm.plane.to_px(np.array([[props.cx - half * dx, props.cy - half * dy],
                                        [props.cx + half * dx, props.cy + half * dy]]))
        p0, p1 = (tuple(int(round(v)) for v in e) for e in ends)
        if k == 0:
            cv2.line(img, p0, p1, (40, 40, 230), lw, cv2.LINE_AA)
        else:
            _dashed(cv2, img, ends, (40, 40, 230), lw)
    cp = pm.plane.to_px(c)[0]
    cv2.drawMarker(img, (int(round(cp[0])), int(round(cp[1]))), (40, 40, 230), cv2.MARKER_CROSS, 12 * lw, lw)
    from .table import format_measured, format_value

    def show(key: str, unit: str) -> str:
        v = getattr(props, key)
        text = format_measured(v, 2 * u[key]) if u and key in u else format_value(v)
        return f"{key} = {text} {unit}"

    label = "   ".join([show("A", "mm2"), show("I1", "mm4"), show("I2", "mm4")]) + ("   (U = 2u)" if u else "")
    size = 0.6 * lw
    (tw, _), _ = cv2.getTextSize(label, cv2.FONT_HERSHEY_SIMPLEX, size, 3 * lw)
    size *= min(1.0, (w - 20) / tw)                    # the whole label fits across the picture
    cv2.putText(img, label, (10, 24 * lw), cv2.FONT_HERSHEY_SIMPLEX, size, (0, 0, 0), 3 * lw, cv2.LINE_AA)
    cv2.putText(img, label, (10, 24 * lw), cv2.FONT_HERSHEY_SIMPLEX, size, (255, 255, 255), lw, cv2.LINE_AA)
    return img


def overlay_bytes(pm: PhotoMeasurement, props: Properties, u: dict[str, float] | None = None, *,
                  ext: str = ".png", max_side: int | None = None) -> bytes:
    """The review picture encoded as `ext` (``.png`` or ``.jpg``), reduced to `max_side` px if given."""
    import cv2

    img = overlay_image(pm, props, u)
    if max_side is not None and max(img.shape[:2]) > max_side:
        f = max_side / max(img.shape[:2])
        img = cv2.resize(img, None, fx=f, fy=f, interpolation=cv2.INTER_AREA)
    ok, buf = cv2.imencode(ext, img)
    if not ok:
        raise OSError(f"the review picture could not be encoded as {ext}")
    return buf.tobytes()


def write_overlay(path: str | Path, pm: PhotoMeasurement, props: Properties,
                  u: dict[str, float] | None = None) -> None:
    """Write the review picture as PNG, atomically."""
    write_atomic_bytes(path, overlay_bytes(pm, props, u))


def _dashed(cv2, img, ends, colour, lw) -> None:
    a, b = ends
    n = 24
    for i in range(0, n, 2):
        p = a + (b - a) * i / n
        q = a + (b - a) * (i + 1) / n
        cv2.line(img, tuple(int(round(v)) for v in p), tuple(int(round(v)) for v in q), colour, lw, cv2.LINE_AA)
