"""Sub-pixel boundary rings of the member, mapped to millimetres, with their uncertainty.

The boundary is the iso-line of the smoothed image, decoded from sRGB levels to light (a lens
blurs light; see :mod:`tracer.photo.tone`), at the level halfway between the member's and the
ground's light, found by marching squares to sub-pixel precision [1]_ (see
:mod:`tracer.photo.isolines`) in a band along the mask's edge (elsewhere the image is replaced by
the two levels, so texture inside the member and on the ground draws no lines). Only the tiles
the band passes through are read at full resolution. For a blurred straight edge the half-level
line is the true edge whatever the blur. Rings are simplified within 0.1 px, mapped through the
plane map, and this is the one place where image rows (down) turn into y (up).

The edge uncertainty comes from the image: the grey-level gradient across the edge and the
image noise just off it give each point's independent scatter (correlated over the smoothing
length), and the variation of the two levels along the boundary (uneven light) a systematic
offset of the whole boundary.

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
from .isolines import Isolines
from .tone import to_light
from .scale import PlaneMap
from .segment import Segmentation

__all__ = ["Trace", "trace_boundary", "coarser_section"]

# Simplification tolerance of the pixel rings [px].
_SIMPLIFY_PX = 0.1
# Smoothing of the image the edge is found on [px]: enough against noise and JPEG blocks, small
# because smoothing moves curved edges inward by about σ²/(2R) and rounds corners.
_EDGE_SIGMA = 0.7
# A floor on the systematic edge offset [px]: threshold, blur asymmetry and JPEG ringing.
_OFFSET_FLOOR_PX = 0.15
# The member's and the ground's light must differ by at least this share of the brighter.
_MIN_CONTRAST = 0.05
# Side of the tiles the band along the edge is read in [px].
_TILE = 32


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
    the heavier smoothing that made the mask would pull curved edges inward. Only the band
    along the mask's edge is read at full resolution, tile by tile; the slowly varying fields
    (distance to the edge, the levels either side) come from the working copy.
    """
    import cv2
    import shapely

    band_r = int(math.ceil(3 * smoothing_px + 3))     # past the mask's own smoothing
    H, W = seg.shape
    k = seg.step
    fs = 1.0 / k                                      # working copy / full size
    # The working copy's fields over the member's box, with room for the widest window below;
    # `shift` takes photo pixels to the pixels of that part (field_in, field_at).
    ys, xs = np.nonzero(seg.mask.any(axis=1))[0], np.nonzero(seg.mask.any(axis=0))[0]
    room = int(math.ceil((9 * band_r + 2 * _TILE) * fs)) + 2
    s0, s1 = max(0, ys[0] - room), min(seg.mask.shape[0], ys[-1] + 1 + room)
    t0, t1 = max(0, xs[0] - room), min(seg.mask.shape[1], xs[-1] + 1 + room)
    shift = np.array([t0 * k, s0 * k], dtype=float)
    part = seg.mask[s0:s1, t0:t1]
    # Signed distance to the mask's edge [full px], positive inside, zero on the edge.
    m8 = part.astype(np.uint8)
    d_in = cv2.distanceTransform(m8, cv2.DIST_L2, 5)
    d_out = cv2.distanceTransform(1 - m8, cv2.DIST_L2, 5)
    sd = (np.where(part, d_in - 0.5, 0.5 - d_out) / fs).astype(np.float32)
    inner_s = sd > band_r
    outer_s = sd < -band_r
    sm = seg.smooth[s0:s1, t0:t1]
    level_in = float(np.median(sm[inner_s])) if inner_s.any() else float(np.median(sm[part]))
    ring_out = outer_s & (sd >= -2 * band_r)
    level_out = float(np.median(sm[ring_out])) if ring_out.any() else float(seg.threshold)
    level = 0.5 * (level_in + level_out)
    # Local levels on either side (uneven light moves both): the edge is where the image
    # crosses their mean, so a brightness gradient across the photo shifts no edge.
    win = (_odd((4 * band_r + 1) * fs),) * 2
    n_in = cv2.blur(inner_s.astype(np.float32), win)
    n_out = cv2.blur(outer_s.astype(np.float32), win)
    local_in = cv2.blur(np.where(inner_s, sm, 0).astype(np.float32), win) / np.maximum(n_in, 1e-6)
    local_out = cv2.blur(np.where(outer_s, sm, 0).astype(np.float32), win) / np.maximum(n_out, 1e-6)
    mid = np.where((n_in > 0.02) & (n_out > 0.02), 0.5 * (local_in + local_out), level).astype(np.float32)
    c_in, c_out = level_in - level, level_out - level

    # The member's box, in tiles; the tiles the band passes through are read at full size.
    r0, r1, c0, c1 = seg.box(pad=band_r + _TILE)
    R, C = r1 - r0, c1 - c0
    ty, tx = -(-R // _TILE), -(-C // _TILE)
    gy, gx = np.mgrid[0:ty, 0:tx]
    centres = np.column_stack([(c0 + np.minimum((gx.ravel() + 0.5) * _TILE, C - 0.5)),
                               (r0 + np.minimum((gy.ravel() + 0.5) * _TILE, R - 0.5))])
    sd_c = seg.field_at(sd, centres - shift).reshape(ty, tx)
    need = np.abs(sd_c) <= band_r + 0.75 * _TILE + 2.0 / fs + 2.0
    resid_vals, blocks = [], []
    block_of = np.full((ty, tx), -1)
    lines = Isolines(width=C)
    edges = np.diff(np.pad(need.astype(np.int8), ((0, 0), (1, 1))), axis=1)
    run_row, run_a = np.nonzero(edges == 1)
    _, run_b = np.nonzero(edges == -1)
    halo = 12                                         # room for the σ = 1 and σ = 2 blurs
    # The light, the distance and the mid level, brought to full size together.
    fields = np.ascontiguousarray(np.dstack([seg.light[s0:s1, t0:t1], sd, mid]), dtype=np.float32)
    sx, sy = int(shift[0]), int(shift[1])
    for j0, j1, a, b in _stacked(run_row, run_a, run_b):   # a few blocks of tiles
        # A block owns the cells whose top-left pixel is in its tiles; it reads one more row
        # and column of pixels for their far corners.
        ra, ca = j0 * _TILE, a * _TILE
        rb, cb = min(R, j1 * _TILE + 1), min(C, b * _TILE + 1)
        ya, yb = max(0, r0 + ra - halo), min(H, r0 + rb + halo)
        xa, xb = max(0, c0 + ca - halo), min(W, c0 + cb + halo)
        light, sdp, midp = np.moveaxis(seg.field_in(fields, ya - sy, yb - sy, xa - sx, xb - sx), 2, 0)
        fp = cv2.GaussianBlur(to_light(gray[ya:yb, xa:xb]) / light, (0, 0), _EDGE_SIGMA)
        inside = (slice(r0 + ra - ya, r0 + rb - ya), slice(c0 + ca - xa, c0 + cb - xa))
        fi, sdi = fp[inside], sdp[inside]
        band = np.abs(sdi) <= band_r
        clean = np.where(band, fi - midp[inside], np.where(sdi > 0, c_in, c_out))
        lines.add(clean, ra, ca, min(j1 * _TILE, R - 1) - ra, min(b * _TILE, C - 1) - ca)
        block_of[j0:j1, a:b] = len(blocks)
        blocks.append((fp, ya - r0, xa - c0))
        resid = (fp - cv2.GaussianBlur(fp, (0, 0), 2.0))[inside]
        resid_vals.append(resid[~band].ravel()[::7])
    offset = np.array([c0, r0], dtype=float)
    raw = lines.rings()
    rings = []
    for xy in raw:                                        # (x = column, y = row) in the box
        if len(xy) < 8:
            continue
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

    # Edge statistics along the traced boundary.
    pts = np.vstack([outer_ring] + holes)
    grad = _gradient(blocks, block_of, pts - offset)
    g_med = float(np.median(grad))
    contrast = abs(level_in - level_out)
    relative = contrast / max(level_in, level_out, 1e-6)
    if g_med <= 0 or relative < _MIN_CONTRAST:
        raise MeasurementError("the member hardly stands out from its surroundings (their light differs by "
                               f"{100 * relative:.1f} %); photograph it against a contrasting ground")
    noise = _robust_spread(np.concatenate(resid_vals) if resid_vals else np.zeros(0))
    blur = contrast / (math.sqrt(2 * math.pi) * g_med)
    scatter_px = noise / g_med
    # What is left of the light's unevenness after the local levels: their scatter along the
    # boundary, over a longer window, as a share of the gradient (a systematic offset).
    wide = (_odd((8 * band_r + 1) * fs),) * 2
    mid_wide = cv2.blur(mid, wide)
    drift = float(np.std(seg.field_at(mid, pts - shift) - seg.field_at(mid_wide, pts - shift))) / g_med
    offset_px = math.hypot(drift, _OFFSET_FLOOR_PX)
    centre = outer_ring.mean(axis=0)
    s = plane.mm_per_px(centre)
    edge = {"gradient_per_px": g_med, "contrast": contrast, "blur_px": blur, "noise": noise,
            "offset_px": offset_px, "scatter_px": scatter_px, "correlation_px": math.hypot(blur, _EDGE_SIGMA),
            "mm_per_px": s, "offset_mm": offset_px * s, "scatter_mm": scatter_px * s,
            "correlation_mm": math.hypot(blur, _EDGE_SIGMA) * s}
    return Trace(section=section, rings_px=[outer_ring] + holes, edge=edge,
                 pixel_check=_pixel_moments(seg, plane, (r0, r1, c0, c1)))


def coarser_section(trace: Trace, plane: PlaneMap, tolerance_px: float) -> Section:
    """The traced section with its rings simplified within `tolerance_px` (instead of 0.1 px):
    fewer vertices for the Monte Carlo draws, whose spread does not depend on them to the
    digits reported."""
    import shapely

    rings = []
    for r in trace.rings_px:
        simple = shapely.Polygon(r).simplify(tolerance_px, preserve_topology=True)
        rings.append(np.asarray(simple.exterior.coords)[:-1] if simple.geom_type == "Polygon" and
                     len(simple.exterior.coords) > 3 else r)
    return Section(plane.to_mm(rings[0]), [plane.to_mm(h) for h in rings[1:]])


def _gradient(blocks: list, block_of: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """|grad f| at points (x, y) of the box, by central differences of bilinear samples of the
    blocks' smoothed images (`block_of`: the block of each tile)."""
    tile = np.clip((pts[:, ::-1] // _TILE).astype(int), 0, np.array(block_of.shape) - 1)
    which = block_of[tile[:, 0], tile[:, 1]]
    grad = np.zeros(len(pts))
    for b in np.unique(which[which >= 0]):            # a loop over blocks
        sel = which == b
        fp, ya, xa = blocks[b]
        q = pts[sel] - (xa, ya)
        grad[sel] = np.hypot(_sample(fp, q + (1.0, 0.0)) - _sample(fp, q - (1.0, 0.0)),
                             _sample(fp, q + (0.0, 1.0)) - _sample(fp, q - (0.0, 1.0))) / 2.0
    return grad[which >= 0]


def _stacked(rows: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> list[tuple[int, int, int, int]]:
    """Runs of tiles (row, first, past-last column) stacked into blocks (first row, past-last
    row, first, past-last column) where runs in consecutive rows span the same columns."""
    open_: dict[tuple[int, int], list[int]] = {}
    blocks: list[list[int]] = []
    for j, a, b in zip(rows.tolist(), starts.tolist(), ends.tolist()):   # a loop over runs
        block = open_.get((a, b))
        if block is not None and block[1] == j:
            block[1] = j + 1
        else:
            block = [j, j + 1, a, b]
            open_[(a, b)] = block
            blocks.append(block)
    return [tuple(x) for x in blocks]


def _odd(size: float) -> int:
    """The odd window size nearest `size`, at least 3."""
    return max(3, int(round(size)) | 1)


def _sample(img: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """Bilinear samples of `img` at (x, y) points."""
    import cv2

    m = pts.astype(np.float32)
    return cv2.remap(img.astype(np.float32, copy=False), m[:, 0:1], m[:, 1:2], cv2.INTER_LINEAR,
                     borderMode=cv2.BORDER_REPLICATE).ravel()


def _robust_spread(vals: np.ndarray) -> float:
    """Noise of the edge image: robust spread (1.4826 MAD) of its fine residual off the edge."""
    if not len(vals):
        return 0.0
    return float(1.4826 * np.median(np.abs(vals - np.median(vals))))


def _pixel_moments(seg: Segmentation, plane: PlaneMap, box: tuple[int, int, int, int]) -> dict:
    """A and centroidal second moments summed over the mask's pixels, each a small area at its
    place, over the photo's rows r0:r1 and columns c0:c1 (`box`)."""
    r0, r1, c0, c1 = box
    fs2 = 1.0 / seg.step ** 2
    # Every k-th pixel of every k-th row, each standing for k x k pixels: plenty for a check.
    k = max(1, int(math.sqrt(seg.mask.sum() / fs2 / 30_000)))
    gx, gy = np.meshgrid(np.arange(c0 + k // 2, c1, k), np.arange(r0 + k // 2, r1, k))
    grid = np.column_stack([gx.ravel(), gy.ravel()]).astype(np.float64)
    if min(gx.shape) < 2:
        return {"A": 0.0, "Ix": 0.0, "Iy": 0.0}
    inside = seg.field_at(seg.mask.astype(np.float32), grid) > 0.5
    # The lattice mapped once; each point's area from the mapped lattice around it.
    mm = plane.to_mm(grid).reshape(gx.shape + (2,))
    dx = np.gradient(mm, axis=1) / k
    dy = np.gradient(mm, axis=0) / k
    area = (np.abs(dx[..., 0] * dy[..., 1] - dx[..., 1] * dy[..., 0]) * (k * k)).ravel()[inside]
    mm = mm.reshape(-1, 2)[inside]
    A = float(area.sum())
    c = (area[:, None] * mm).sum(axis=0) / A
    d = mm - c
    return {"A": A, "Ix": float((area * d[:, 1] ** 2).sum()), "Iy": float((area * d[:, 0] ** 2).sum())}
