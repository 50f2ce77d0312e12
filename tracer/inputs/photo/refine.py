"""The member's region cut again finely: at up to four times the working copy's resolution (the
photo's own at most), in a band round its boundary, between local colour models of the member and
of the ground next to it (:func:`~tracer.inputs.photo.regions.local_costs`), so that shading,
heartwood and sapwood, or a ground that changes along the member are followed. Holes narrower than
the texture size (a check, a crack, the pith) are filled; wider ones (a tube's bore, bolt holes)
stay holes.
"""

from __future__ import annotations

import math

import numpy as np

from ...errors import MeasurementError
from .hints import Hints
from .masks import fill_holes
from .regions import appearance, local_costs, min_cut
from .workcopy import WorkingCopy

__all__ = ["refine"]

# Finest step of the band cut [full-size px per pixel], and its step against the working copy's.
_FINE_RATIO = 4.0
# Most pixels of the member's box in the band cut.
_FINE_PIXELS = 250_000
# A hole narrower than this share of the member's equivalent diameter is texture.
_HOLE_WIDTH_SHARE = 0.04


def refine(photo, ctx: WorkingCopy, region: np.ndarray, hints: Hints) -> tuple[np.ndarray, tuple, tuple, int]:
    """The chosen region cut again at a finer step in a band round its boundary.

    Parameters
    ----------
    photo : Photo
    ctx : WorkingCopy
    region : ndarray (h, w) bool
        The member on the working copy.
    hints : Hints
        Points on the member and on the ground are held to them in the fine cut too.

    Returns
    -------
    mask : ndarray (m, n) bool
        The member (holes False) on the fine grid.
    step : (fx, fy)
        Full-size pixels per pixel of `mask`.
    origin : (x0, y0)
        The full-size pixel where `mask` starts.
    filled : int
        Pixels of holes filled as texture.

    Raises
    ------
    MeasurementError
        The fine cut found no member.
    """
    import cv2

    from .tone import LIGHT_OF_8BIT

    H, W = ctx.shape
    sx, sy = ctx.scale
    coarse = math.sqrt(sx * sy)
    ys, xs = np.nonzero(region)
    pad = 4
    x0 = max(0.0, (xs.min() - pad) * sx)
    y0 = max(0.0, (ys.min() - pad) * sy)
    x1 = min(float(W), (xs.max() + 1 + pad) * sx)
    y1 = min(float(H), (ys.max() + 1 + pad) * sy)
    c0, r0, c1, r1 = int(x0), int(y0), int(math.ceil(x1)), int(math.ceil(y1))
    fine = max(1.0, coarse / _FINE_RATIO, math.sqrt((c1 - c0) * (r1 - r0) / _FINE_PIXELS))
    n, m = max(8, round((c1 - c0) / fine)), max(8, round((r1 - r0) / fine))
    fx, fy = (c1 - c0) / n, (r1 - r0) / m
    crop = photo.color[r0:r1, c0:c1]
    small = crop if (n, m) == (c1 - c0, r1 - r0) else cv2.resize(crop, (n, m), interpolation=cv2.INTER_AREA)
    # The coarse region on the fine grid (pixel centres mapped), and the band either side of
    # its boundary where the fine cut is free.
    gx = ((np.arange(n) + 0.5) * fx + c0) / sx - 0.5
    gy = ((np.arange(m) + 0.5) * fy + r0) / sy - 0.5
    mx, my = np.meshgrid(gx.astype(np.float32), gy.astype(np.float32))
    shading = cv2.remap(ctx.shading, mx, my, cv2.INTER_LINEAR, borderMode=cv2.BORDER_REPLICATE)
    on = cv2.remap(region.astype(np.float32), mx, my, cv2.INTER_LINEAR, borderMode=cv2.BORDER_CONSTANT) > 0.5
    refs = cv2.remap(ctx.refs.astype(np.uint8), mx, my, cv2.INTER_NEAREST, borderMode=cv2.BORDER_CONSTANT) > 0
    band = max(2, int(round(2.0 * coarse / fine)))
    kern = cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (2 * band + 1, 2 * band + 1))
    inner = cv2.erode(on.astype(np.uint8), kern).astype(bool)
    outer = ~cv2.dilate(on.astype(np.uint8), kern).astype(bool)
    near = cv2.dilate(on.astype(np.uint8), cv2.getStructuringElement(cv2.MORPH_ELLIPSE,
                                                                      (6 * band + 1, 6 * band + 1))).astype(bool)
    ring = near & outer & ~refs
    app = appearance(LIGHT_OF_8BIT[small] / shading[..., None], looks=False)
    cm, cg = local_costs(app.lab, inner, ring if ring.any() else outer & ~refs, 3.0 * band)
    hard_ground = outer | refs
    if hints.outside:
        q = np.round(((np.asarray(hints.outside, float) - (c0, r0)) + 0.5) / (fx, fy) - 0.5).astype(int)
        ok = (q[:, 0] >= 0) & (q[:, 0] < n) & (q[:, 1] >= 0) & (q[:, 1] < m)
        hard_ground[q[ok, 1], q[ok, 0]] = True
    hard_member = inner & ~hard_ground
    if hints.seeds:
        q = np.round(((np.asarray(hints.seeds, float) - (c0, r0)) + 0.5) / (fx, fy) - 0.5).astype(int)
        q = np.clip(q, 0, [n - 1, m - 1])
        hard_member[q[:, 1], q[:, 0]] = True
    cut = min_cut(app, cm, cg, member=hard_member, ground=hard_ground)
    # The component of the cut that holds most of the coarse region.
    k, labels, stats, _ = cv2.connectedComponentsWithStats(cut.astype(np.uint8), connectivity=8)
    if k < 2:
        raise MeasurementError("nothing segmented: the member's edge could not be found")
    votes = np.bincount(labels[inner | on].ravel(), minlength=k)
    votes[0] = 0
    member = labels == int(np.argmax(votes))
    before = int((~member).sum())
    member = _fill_narrow_holes(member, min_width=2 * ctx.texture_px / fine)
    filled = before - int((~member).sum())
    return member, (fx, fy), (float(c0), float(r0)), filled


def _fill_narrow_holes(member: np.ndarray, *, min_width: float) -> np.ndarray:
    """Fill the holes that are texture: narrower than `min_width` [px] or than a share
    (:data:`_HOLE_WIDTH_SHARE`) of the member's equivalent diameter (a check, a crack, the pith,
    a knot's dark ring); wider ones (a bore, a bolt hole) stay openings."""
    import cv2

    solid = fill_holes(member, np.inf)
    holes = (solid & ~member).astype(np.uint8)
    if not holes.any():
        return member
    diameter = 2.0 * math.sqrt(float(solid.sum()) / math.pi)
    width = max(min_width, _HOLE_WIDTH_SHARE * diameter)
    n, labels = cv2.connectedComponents(holes, connectivity=4)
    # Each hole's width: twice the largest distance from its pixels to the member.
    dist = cv2.distanceTransform(holes, cv2.DIST_L2, 5)
    widest = np.zeros(n)
    np.maximum.at(widest, labels.ravel(), dist.ravel())
    narrow = 2.0 * widest < width
    narrow[0] = False
    return member | narrow[labels]
