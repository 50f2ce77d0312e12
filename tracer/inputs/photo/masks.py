"""Masks the steps that find the member share: holes filled, the overlap of two regions, the
image's border strip.

Used by the member's search (:mod:`tracer.inputs.photo.candidates`,
:mod:`tracer.inputs.photo.scoring`, :mod:`tracer.inputs.photo.choice`), the trims
(:mod:`tracer.inputs.photo.trim`), the fine cut (:mod:`tracer.inputs.photo.refine`) and the bark
finder (:mod:`tracer.inputs.photo.bark`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["fill_holes", "iou", "border_strip"]

# Width of the border strip the ground model is learned from, as a share of the shorter side.
_BORDER_SHARE = 0.03


def fill_holes(region: np.ndarray, min_area: float) -> np.ndarray:
    """Fill the holes of `region` smaller than `min_area` [px²]; larger ones are real openings."""
    import cv2

    ys, xs = np.nonzero(region.any(axis=1))[0], np.nonzero(region.any(axis=0))[0]
    if not len(ys):
        return region
    r0, r1, c0, c1 = max(0, ys[0] - 1), ys[-1] + 2, max(0, xs[0] - 1), xs[-1] + 2
    crop = region[r0:r1, c0:c1]
    n, labels, stats, _ = cv2.connectedComponentsWithStats((~crop).astype(np.uint8), connectivity=4)
    hh, ww = crop.shape
    x, y, bw, bh, area = stats.T
    outside = (x == 0) | (y == 0) | (x + bw == ww) | (y + bh == hh)
    fill = ~outside & (area < min_area)
    fill[0] = False
    out = region.copy()
    out[r0:r1, c0:c1] |= fill[labels]
    return out


def iou(a: np.ndarray, b: np.ndarray) -> float:
    """The overlap of two masks: their intersection over their union."""
    return float((a & b).sum()) / max(float((a | b).sum()), 1.0)


def border_strip(h: int, w: int) -> np.ndarray:
    """The strip along the image's edges that the ground model is learned from: :data:`_BORDER_SHARE`
    of the shorter side wide, at least 2 px."""
    b = max(2, int(round(_BORDER_SHARE * min(h, w))))
    m = np.zeros((h, w), bool)
    m[:b] = m[-b:] = True
    m[:, :b] = m[:, -b:] = True
    return m
