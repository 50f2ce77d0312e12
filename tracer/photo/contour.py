"""Sub-pixel boundary rings of the member, mapped to millimetres, with their uncertainty.

The boundary is the iso-line of the smoothed image at the level halfway between the member's and
the ground's grey level, found by marching squares to sub-pixel precision [1]_ in a band along
the mask's edge (elsewhere the image is replaced by the two levels, so texture inside the member
and on the ground draws no lines). For a blurred straight edge the half-level line is the true
edge whatever the blur. Rings are simplified within 0.1 px, mapped through the plane map, and
this is the one place where image rows (down) turn into y (up).

The edge uncertainty comes from the image: the grey-level gradient across the edge and the
image noise give each point's independent scatter (correlated over the smoothing length), and
the variation of the two levels along the boundary (uneven light) a systematic offset of the
whole boundary.

References
----------
.. [1] W. E. Lorensen and H. E. Cline, "Marching cubes: a high resolution 3D surface construction
       algorithm," *Computer Graphics*, vol. 21, no. 4, pp. 163-169, 1987.
       doi: 10.1145/37402.37422.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import GeometryError, MeasurementError
from ..geometry import Section
from .scale import PlaneMap
from .segment import Segmentation

__all__ = ["Trace", "trace_boundary"]

# Simplification tolerance of the pixel rings [px].
_SIMPLIFY_PX = 0.1
# Smoothing of the image the edge is found on [px].
_EDGE_SIGMA = 1.0
# A floor on the systematic edge offset [px]: threshold, blur asymmetry and JPEG ringing.
_OFFSET_FLOOR_PX = 0.15


@dataclass(frozen=True)
class Trace:
    """The traced boundary.

    Attributes
    ----------
    section : Section
        The member in the mm plane.
    rings_px : list of ndarray
        Each ring's points in the image [px] (column, row), outer first.
    edge : dict
        The edge statistics behind the uncertainty: gradient, blur, noise, offset and scatter
        (px and mm).
    pixel_check : dict
        Area and second moments summed over the mask's pixels, for the cross-check.
    """

    section: Section
    rings_px: list
    edge: dict
    pixel_check: dict


def trace_boundary(seg: Segmentation, gray: np.ndarray, plane: PlaneMap, *, smoothing_px: float) -> Trace:
    """Trace the member of `seg` in `gray` to sub-pixel precision and map it with `plane`.

    The edge is found on the photo with its light evened and only a light smoothing (σ = 1 px):
    the heavier smoothing that made the mask would pull curved edges inward.
    """
    import cv2
    import shapely
    from skimage.measure import find_contours

    band_r = int(math.ceil(3 * smoothing_px + 3))     # past the mask's own smoothing
    # Work in the member's bounding box, with room for the band and the level windows.
    r0, r1, c0, c1 = seg.box(pad=6 * band_r + 4)
    offset = np.array([c0, r0], dtype=float)
    f = cv2.GaussianBlur((gray[r0:r1, c0:c1] / seg.light_in(r0, r1, c0, c1)).astype(np.float32), (0, 0), _EDGE_SIGMA)
    full_mask = seg.mask_in(r0, r1, c0, c1)
    mask = full_mask.astype(np.uint8)
    # Distances to the mask's edge, inside and out (one pass each, instead of wide dilations).
    d_in = cv2.distanceTransform(mask, cv2.DIST_L2, 5)
    d_out = cv2.distanceTransform(1 - mask, cv2.DIST_L2, 5)
    inner = d_in > band_r
    outer = d_out > band_r
    band = ~inner & ~outer
    level_in = float(np.median(f[inner])) if inner.any() else float(np.median(f[mask.astype(bool)]))
    ring_out = outer & (d_out <= 2 * band_r)
    level_out = float(np.median(f[ring_out])) if ring_out.any() else float(seg.threshold)
    level = 0.5 * (level_in + level_out)
    # Local levels on either side (uneven light moves both): the edge is where the image
    # crosses their mean, so a brightness gradient across the photo shifts no edge.
    win = (4 * band_r + 1,) * 2
    local_in = cv2.blur(np.where(inner, f, 0).astype(np.float32), win) / np.maximum(
        cv2.blur(inner.astype(np.float32), win), 1e-6)
    local_out = cv2.blur(np.where(outer, f, 0).astype(np.float32), win) / np.maximum(
        cv2.blur(outer.astype(np.float32), win), 1e-6)
    have_in = cv2.blur(inner.astype(np.float32), win) > 0.02
    have_out = cv2.blur(outer.astype(np.float32), win) > 0.02
    mid = np.where(have_in & have_out, 0.5 * (local_in + local_out), level)
    clean = np.where(inner, level_in, np.where(outer, level_out, f)).astype(np.float64)
    clean = np.where(band, clean - mid, np.where(inner, level_in - level, level_out - level))
    raw = find_contours(clean, 0.0)
    rings = []
    for c in raw:
        if len(c) < 8 or not np.allclose(c[0], c[-1]):
            continue                                      # open lines cannot bound the member
        xy = c[:, ::-1]                                   # (row, col) -> (x = col, y = row), in the box
        ring = shapely.LinearRing(xy)
        poly = shapely.Polygon(ring)
        if poly.area < (2 * smoothing_px) ** 2:
            continue
        simple = poly.simplify(_SIMPLIFY_PX, preserve_topology=True)
        if simple.is_empty or simple.geom_type != "Polygon":
            continue
        rings.append(np.asarray(simple.exterior.coords)[:-1] + offset)
    if not rings:
        raise MeasurementError("nothing segmented: the member's edge could not be traced")
    # The outer ring is the largest; holes are the rings inside it.
    areas = [shapely.Polygon(r).area for r in rings]
    order = np.argsort(areas)[::-1]
    outer_ring = rings[order[0]]
    outer_poly = shapely.Polygon(outer_ring)
    holes = [rings[k] for k in order[1:] if outer_poly.contains(shapely.Polygon(rings[k]))]
    outline_mm = plane.to_mm(outer_ring)
    holes_mm = [plane.to_mm(hh) for hh in holes]
    try:
        section = Section(outline_mm, holes_mm)
    except GeometryError as e:
        raise MeasurementError(f"the traced boundary is not a valid section ({e}); look at the review picture "
                               "(--overlay) and give --seed X,Y on the member") from None

    # Edge statistics along the traced boundary (in the box's pixels).
    gy, gx = np.gradient(f)
    pts = np.vstack([outer_ring] + holes) - offset
    grad = _sample(np.hypot(gx, gy), pts)
    g_med = float(np.median(grad))
    contrast = abs(level_in - level_out)
    if g_med <= 0 or contrast < 0.02:
        raise MeasurementError("the member hardly stands out from its surroundings (contrast "
                               f"{100 * contrast:.1f} %); photograph it against a contrasting ground")
    noise = _noise(f, inner, outer)
    blur = contrast / (math.sqrt(2 * math.pi) * g_med)
    scatter_px = noise / g_med
    # What is left of the light's unevenness after the local levels: their scatter along the
    # boundary, over a longer window, as a share of the gradient (a systematic offset).
    wide = (8 * band_r + 1,) * 2
    mid_wide = cv2.blur(mid.astype(np.float32), wide)
    drift = float(np.std(_sample(mid, pts) - _sample(mid_wide, pts))) / g_med
    offset_px = math.hypot(drift, _OFFSET_FLOOR_PX)
    centre = outer_ring.mean(axis=0)
    s = plane.mm_per_px(centre)
    edge = {"gradient_per_px": g_med, "contrast": contrast, "blur_px": blur, "noise": noise,
            "offset_px": offset_px, "scatter_px": scatter_px, "correlation_px": math.hypot(blur, _EDGE_SIGMA),
            "mm_per_px": s, "offset_mm": offset_px * s, "scatter_mm": scatter_px * s,
            "correlation_mm": math.hypot(blur, _EDGE_SIGMA) * s}
    return Trace(section=section, rings_px=[outer_ring] + holes, edge=edge,
                 pixel_check=_pixel_moments(full_mask, plane, offset))


def _sample(img: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """Bilinear samples of `img` at (x, y) points."""
    import cv2

    m = pts.astype(np.float32)
    return cv2.remap(img.astype(np.float32), m[:, 0:1], m[:, 1:2], cv2.INTER_LINEAR,
                     borderMode=cv2.BORDER_REPLICATE).ravel()


def _noise(f: np.ndarray, inner: np.ndarray, outer: np.ndarray) -> float:
    """Noise of the edge image: robust spread of its fine residual in flat regions."""
    import cv2

    resid = f - cv2.GaussianBlur(f, (0, 0), 2.0)
    vals = np.concatenate([resid[inner].ravel()[::7], resid[outer].ravel()[::7]])
    if not len(vals):
        return 0.0
    return float(1.4826 * np.median(np.abs(vals - np.median(vals))))


def _pixel_moments(mask: np.ndarray, plane: PlaneMap, offset: np.ndarray) -> dict:
    """A and centroidal second moments summed over pixels, each a small area at its place
    (`mask` covers the photo from column, row `offset`)."""
    # Every k-th pixel of every k-th row, each standing for k x k pixels: plenty for a check.
    k = max(1, int(math.sqrt(mask.sum() / 30_000)))
    ys, xs = np.nonzero(mask[k // 2::k, k // 2::k])
    step = k * k
    pts = np.column_stack([xs * k + k // 2, ys * k + k // 2]).astype(np.float64) + offset
    mm = plane.to_mm(pts)
    e = 0.5
    dx = plane.to_mm(pts + (e, 0.0)) - mm
    dy = plane.to_mm(pts + (0.0, e)) - mm
    area = np.abs(dx[:, 0] * dy[:, 1] - dx[:, 1] * dy[:, 0]) / (e * e) * step
    A = float(area.sum())
    c = (area[:, None] * mm).sum(axis=0) / A
    d = mm - c
    return {"A": A, "Ix": float((area * d[:, 1] ** 2).sum()), "Iy": float((area * d[:, 0] ** 2).sum())}
