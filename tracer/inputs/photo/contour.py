"""Sub-pixel boundary rings of the member, found along the normals of the segmented boundary,
mapped to millimetres, with their uncertainty.

The segmentation's boundary (:meth:`Segmentation.rings_px`) is right to about a pixel of its
grid. Along the outward normal of each of its points, one pixel apart, the photo is read at full
resolution, in linear light (the sRGB curve undone: a lens blurs light, see
:mod:`tracer.inputs.photo.tone`), lightly smoothed (σ = 0.7 px), in colour. The member's colour and the
ground's are the medians of the profile's two ends, evened along the boundary; the profile is
projected on their difference, the one direction of colour that best separates these two
(Fisher's discriminant for noise alike in every channel [1]_), and scaled so that the ground
reads 0 and the member 1. The edge is where that profile crosses one half, found to a fraction
of a sample by linear interpolation: for a blurred straight edge the half-level crossing is the
true edge whatever the blur. Of several crossings (texture near the edge) the one nearest the
segmented boundary with a clean step either side is taken; a normal without a clean step keeps
the segmented boundary and counts against the trace's edge support (:mod:`tracer.inputs.photo.check`).
Rings are simplified within 0.1 px, mapped through the plane map, and this is the one place where
image rows (down) turn into y (up).

The edge uncertainty comes from the profiles: the noise of the projected profile off the edge
over its slope at the crossing is each point's independent scatter (correlated over the blur
and smoothing length); the scatter of the two levels' estimates, the share of the boundary
without a clean step, and a floor for blur asymmetry and compression make a systematic offset of
the whole boundary.

References
----------
.. [1] R. A. Fisher, "The use of multiple measurements in taxonomic problems," *Annals of
       Eugenics*, vol. 7, no. 2, pp. 179-188, 1936. doi: 10.1111/j.1469-1809.1936.tb02137.x.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...errors import GeometryError, MeasurementError
from ...section.geometry import Section
from .scale import PlaneMap
from .segment import Segmentation

__all__ = ["on_the_edge", "Trace", "trace_boundary", "hand_trace", "coarser_section", "EdgeProfiles"]

# Simplification tolerance of the pixel rings [px].
_SIMPLIFY_PX = 0.1
# Smoothing of the photo the profiles are read on [px]: enough against noise and JPEG blocks,
# small because smoothing moves curved edges inward by about σ²/(2R) and rounds corners.
_EDGE_SIGMA = 0.7
# Spacing of the normals along the boundary [px] and of the samples along each [px].
_SPACING = 1.0
_SAMPLE = 0.5
# At most this many normals a ring (a longer ring has them further apart).
_MAX_NORMALS = 16_000
# A floor on the systematic edge offset [px]: blur asymmetry and JPEG ringing.
_OFFSET_FLOOR_PX = 0.15
# The member's and the ground's light must differ by at least this share of the brighter.
_MIN_CONTRAST = 0.05
# A clean step: the profile reaches this far past the half level within a few px either side,
# and the step is this many times the profile's noise.
_CLEAN = 0.25
_MIN_SNR = 3.0
# The projected profile's noise is taken as at least this (an 8-bit level's quantisation over a
# contrast of about a tenth of full scale: (1/255)/√12/0.1).
_NOISE_FLOOR = 0.011
# Normals per block read from the photo together.
_BLOCK = 384


@dataclass(frozen=True)
class EdgeProfiles:
    """What the normals found along one ring.

    Attributes
    ----------
    points : ndarray (N, 2)
        The edge points [px] (x, y), segmented boundary where no clean step was found.
    clean : ndarray (N,) bool
        A clean step was found along this normal.
    offset : ndarray (N,)
        The edge's distance from the segmented boundary along the outward normal [px].
    slope : ndarray (N,)
        The projected profile's slope at the crossing [per px] (1 over the step's width).
    noise : ndarray (N,)
        The projected profile's noise off the edge (its scale: member 1, ground 0).
    contrast : ndarray (N,)
        |member - ground| light difference (the projection's length).
    level_in, level_out : ndarray (N,)
        Grey light of the member's and the ground's side.
    level_error : ndarray (N,)
        How far the errors of the two levels' estimates move the crossing [px] (standard).
    normals : ndarray (N, 2)
        The outward unit normals [px] (away from the member).
    """

    points: np.ndarray
    clean: np.ndarray
    offset: np.ndarray
    slope: np.ndarray
    noise: np.ndarray
    contrast: np.ndarray
    level_in: np.ndarray
    level_out: np.ndarray
    level_error: np.ndarray
    normals: np.ndarray | None = None


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
        The edge statistics behind the uncertainty: slope, blur, noise, offset and scatter
        (px and mm), and the share of the boundary on a clean step.
    pixel_check : dict
        Area and second moments summed over the mask's pixels, for the cross-check.
    profiles : list of EdgeProfiles
        Per ring, what the normals found (outer first), for the trace check.
    """

    section: Section
    rings_px: list
    edge: dict
    pixel_check: dict
    profiles: list


def trace_boundary(seg: Segmentation, photo, plane: PlaneMap, *, smoothing_px: float = 1.0) -> Trace:
    """Trace the member of `seg` in `photo` to sub-pixel precision and map it with `plane`.

    Parameters
    ----------
    seg : Segmentation
    photo : Photo
        The photo (:class:`~tracer.inputs.photo.load.Photo`), read in linear light along the normals.
    plane : PlaneMap
    smoothing_px : float
        The texture smoothing of the segmentation [px]: rings smaller than (2 x this)² go.
    """
    import shapely

    rings = seg.rings_px()
    if not rings:
        raise MeasurementError("nothing segmented: the member's edge could not be traced")
    reach = float(math.ceil(2.0 * max(seg.step) + 4.0))
    profiles = []
    kept = []
    for i, ring in enumerate(rings):
        pts, normals = _normals(ring, outward_is_left=(i > 0))
        if len(pts) < 8:
            continue
        prof = _read_profiles(photo, pts, normals, reach)
        if i == 0 or shapely.Polygon(prof.points).area >= (2 * smoothing_px) ** 2:
            profiles.append(prof)
            kept.append(prof.points)
    if not kept:
        raise MeasurementError("nothing segmented: the member's edge could not be traced")
    outer = _clean_ring(kept[0])
    outer_poly = shapely.Polygon(outer)
    holes = []
    for hole in kept[1:]:
        h = _clean_ring(hole)
        if h is not None and outer_poly.contains(shapely.Polygon(h)):
            holes.append(h)
    if outer is None:
        raise MeasurementError("nothing segmented: the member's edge could not be traced")
    try:
        section = Section(plane.to_mm(outer), [plane.to_mm(h) for h in holes])
    except GeometryError as e:
        raise MeasurementError(f"the traced boundary is not a valid section ({e}); look at the review picture "
                               "(--overlay) and give --seed X,Y on the member") from None
    edge = _edge_statistics(profiles, plane, outer)
    return Trace(section=section, rings_px=[outer] + holes, edge=edge,
                 pixel_check=_pixel_moments(seg, plane), profiles=profiles)


def hand_trace(points: list, holes: list, plane: PlaneMap, *, allowance_px: float = 0.5) -> Trace:
    """A boundary placed by hand (image pixels), mapped with `plane`; its edge statistics are the
    hand-placement allowance `allowance_px`, as a systematic offset and as each point's scatter.

    Raises
    ------
    MeasurementError
        The rings do not make a valid section (they cross, a hole lies outside the outline).
    """
    outer = np.asarray(points, float)
    rings = [np.asarray(h, float) for h in holes]
    try:
        section = Section(plane.to_mm(outer), [plane.to_mm(h) for h in rings])
    except GeometryError as e:
        raise MeasurementError(f"the hand-edited boundary ([trace]) is not a valid section: {e}") from None
    s = plane.mm_per_px(outer.mean(axis=0))
    edge = {"offset_px": allowance_px, "scatter_px": allowance_px, "correlation_px": 0.0, "mm_per_px": s,
            "offset_mm": allowance_px * s, "scatter_mm": allowance_px * s, "correlation_mm": 0.0}
    return Trace(section=section, rings_px=[outer] + rings, edge=edge, pixel_check={}, profiles=[])


def on_the_edge(photo, rings_px: list, within_px: float) -> float:
    """The share of a boundary placed by hand (all its rings, by length) that lies on an edge of
    the photo: where the normals find a clean step from member to ground within `within_px` of
    it. A careless outline (an ellipse round an irregular log, a corner clicked off) scores low."""
    reach = float(math.ceil(within_px + 4.0))
    near = []
    for i, ring in enumerate(rings_px):
        pts, normals = _normals(np.asarray(ring, float), outward_is_left=(i > 0))
        prof = _read_profiles(photo, pts, normals, reach)
        near.append(prof.clean & (np.abs(prof.offset) <= within_px))
    allpts = np.concatenate(near) if near else np.zeros(0, bool)
    return float(allpts.mean()) if len(allpts) else 0.0


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


# ---------------------------------------------------------------------------------------------
def _normals(ring: np.ndarray, *, outward_is_left: bool) -> tuple[np.ndarray, np.ndarray]:
    """Points evenly spaced along a closed ring and the unit normals pointing away from the
    member (a hole's ring: into the hole)."""
    closed = np.vstack([ring, ring[:1]])
    seg = np.hypot(*np.diff(closed, axis=0).T)
    s = np.concatenate([[0.0], np.cumsum(seg)])
    length = s[-1]
    n = int(min(_MAX_NORMALS, max(8, round(length / _SPACING))))
    t = np.arange(n) * (length / n)
    pts = np.column_stack([np.interp(t, s, closed[:, 0]), np.interp(t, s, closed[:, 1])])
    tang = np.roll(pts, -1, axis=0) - np.roll(pts, 1, axis=0)
    tang /= np.maximum(np.hypot(*tang.T), 1e-12)[:, None]
    # A ring with a positive shoelace sum in (x, y-down) coordinates has its inside on the left
    # of its direction, (-ty, tx) in those coordinates; the outward normal is the opposite.
    area2 = float(np.sum(pts[:, 0] * np.roll(pts[:, 1], -1) - np.roll(pts[:, 0], -1) * pts[:, 1]))
    away = np.column_stack([tang[:, 1], -tang[:, 0]])
    outward = away if area2 > 0 else -away
    if outward_is_left:                                          # a hole: away from the member is inward
        outward = -outward
    return pts, outward


def _read_profiles(photo, pts: np.ndarray, normals: np.ndarray, reach: float) -> EdgeProfiles:
    """Read the photo along the normals and find each one's edge (see the module notes).

    Twice: first with the two levels taken at the profile's ends, then with them taken either
    side of the edge first found, clear of its blur (2.5 σ away), reading longer profiles where
    the blur asks for it. Levels taken closer on one side than the other would move the half
    level towards the nearer side (by about 0.07 px at σ = 2 px, 0.4 px at 3 px, measured on
    renders: the segmentation's boundary lies on the darker side of a blurred edge).
    """
    t, prof = _sample(photo, pts, normals, reach)
    n = len(pts)
    first = _locate(prof, t, np.zeros(n), np.full(n, reach / 3.0), reach / 3.0 * 2.0)
    clean = first["clean"]
    if not clean.any():
        return _profiles(pts, normals, first)
    sigma = float(np.median(1.0 / (math.sqrt(2 * math.pi) * np.maximum(first["slope"][clean], 1e-6))))
    gap = 2.5 * math.hypot(sigma, 0.0) + 1.0
    width = max(3.0, 2.0 * sigma)
    far = float(np.percentile(np.abs(first["offset"][clean]), 95))
    need = math.ceil(far + gap + width + 1.0)
    if need > reach:
        t, prof = _sample(photo, pts, normals, float(min(need, 4 * reach)))
    centre = np.where(clean, first["offset"], 0.0)
    second = _locate(prof, t, centre, np.full(n, gap), width)
    return _profiles(pts, normals, second)


def _sample(photo, pts: np.ndarray, normals: np.ndarray, reach: float) -> tuple[np.ndarray, np.ndarray]:
    """Linear light (BGR), lightly smoothed, at -reach..reach px along each normal."""
    import cv2

    H, W = photo.shape
    t = np.arange(-reach, reach + 1e-9, _SAMPLE)
    M = len(t)
    n = len(pts)
    prof = np.empty((n, M, 3), np.float32)
    for a in range(0, n, _BLOCK):                                # blocks of neighbouring normals
        b = min(n, a + _BLOCK)
        xy = pts[a:b, None, :] + t[None, :, None] * normals[a:b, None, :]
        c0 = max(0, int(math.floor(xy[..., 0].min())) - 4)
        c1 = min(W, int(math.ceil(xy[..., 0].max())) + 5)
        r0 = max(0, int(math.floor(xy[..., 1].min())) - 4)
        r1 = min(H, int(math.ceil(xy[..., 1].max())) + 5)
        light = cv2.GaussianBlur(photo.light_in(r0, r1, c0, c1), (0, 0), _EDGE_SIGMA)
        mx = (xy[..., 0] - c0).astype(np.float32)
        my = (xy[..., 1] - r0).astype(np.float32)
        prof[a:b] = cv2.remap(light, mx, my, cv2.INTER_LINEAR, borderMode=cv2.BORDER_REPLICATE)
    return t, prof


def _locate(prof: np.ndarray, t: np.ndarray, centre: np.ndarray, gap: np.ndarray, width: float) -> dict:
    """The edge along each normal, the two levels taken over `width` px starting `gap` px either
    side of `centre` (each normal's, px), the crossing nearest the centre."""
    n, M, _ = prof.shape
    L = max(2, int(round(width / _SAMPLE)))
    rows = np.arange(n)[:, None]

    def side(start: np.ndarray) -> np.ndarray:
        i0 = np.clip(np.round((start - t[0]) / _SAMPLE).astype(int), 0, M - L)
        return prof[rows, i0[:, None] + np.arange(L)[None, :]]            # (n, L, 3)

    win_in = side(centre - gap - width)
    win_out = side(centre + gap)
    c_in = _smooth_along(np.median(win_in, axis=1), 6.0)
    c_out = _smooth_along(np.median(win_out, axis=1), 6.0)
    d = c_in - c_out
    dd = np.maximum(np.einsum("nc,nc->n", d, d), 1e-12)
    g = np.einsum("nmc,nc->nm", prof - c_out[:, None, :], d) / dd[:, None]
    gin = np.einsum("nlc,nc->nl", win_in - c_out[:, None, :], d) / dd[:, None]
    gout = np.einsum("nlc,nc->nl", win_out - c_out[:, None, :], d) / dd[:, None]
    # Noise of the projected profile on its two flat sides (robust spread about their medians).
    lo = gin - np.median(gin, axis=1, keepdims=True)
    hi = gout - np.median(gout, axis=1, keepdims=True)
    noise = np.maximum(1.4826 * np.median(np.abs(np.concatenate([lo, hi], axis=1)), axis=1), _NOISE_FLOOR)
    # Downward crossings of one half, to a fraction of a sample.
    a, b = g[:, :-1], g[:, 1:]
    cross = (a >= 0.5) & (b < 0.5)
    frac = np.where(cross, (a - 0.5) / np.where(cross, a - b, 1.0), 0.0)
    tc = t[:-1][None, :] + frac * _SAMPLE
    # Clean: within a few px before the crossing the profile is well above one half, after it
    # well below (a step, not a wiggle of texture).
    win = max(3, int(round(3.0 / _SAMPLE)))
    before = _running(g, win, np.maximum, back=True)[:, :-1]
    after = _running(g, win, np.minimum, back=False)[:, 1:]
    clean_x = cross & (before >= 1.0 - _CLEAN) & (after <= _CLEAN)
    # The clean crossing nearest the centre.
    dist = np.where(clean_x, np.abs(tc - centre[:, None]), np.inf)
    k = np.argmin(dist, axis=1)
    r = np.arange(n)
    found = np.isfinite(dist[r, k])
    offset = np.where(found, tc[r, k], 0.0)
    slope = np.where(found, (a[r, k] - b[r, k]) / _SAMPLE, 0.0)
    clean = found & (1.0 / np.maximum(noise, 1e-6) >= _MIN_SNR)
    # Each level is a median of `width` px (samples about 1.5 px apart are independent after
    # the smoothing), evened over about 6 normals: its error over the slope moves the edge.
    n_eff = max(1.0, width / 1.5) * 6.0
    level_error = np.where(slope > 0, noise / np.sqrt(n_eff) / np.maximum(slope, 1e-6), 0.0)
    grey = np.array([0.114, 0.587, 0.299], np.float32)            # BGR weights, as the grey levels
    return {"clean": clean, "offset": np.where(clean, offset, 0.0), "slope": slope, "noise": noise,
            "contrast": np.sqrt(dd), "level_in": c_in @ grey, "level_out": c_out @ grey, "level_error": level_error}


def _profiles(pts: np.ndarray, normals: np.ndarray, found: dict) -> EdgeProfiles:
    offset = _fill_gaps(found["offset"], found["clean"])
    return EdgeProfiles(points=pts + offset[:, None] * normals, clean=found["clean"], offset=offset,
                        slope=found["slope"], noise=found["noise"], contrast=found["contrast"],
                        level_in=found["level_in"], level_out=found["level_out"], level_error=found["level_error"],
                        normals=normals)


def _running(g: np.ndarray, win: int, op, *, back: bool) -> np.ndarray:
    """Running max/min of each row over the `win` samples before (back) or after each sample."""
    out = g.copy()
    shifted = g
    for _ in range(win):                                           # a few shifts of whole arrays
        shifted = np.concatenate([shifted[:, :1], shifted[:, :-1]], axis=1) if back else \
            np.concatenate([shifted[:, 1:], shifted[:, -1:]], axis=1)
        out = op(out, shifted)
    return out


def _fill_gaps(offset: np.ndarray, good: np.ndarray) -> np.ndarray:
    """Offsets of normals without a clean step: interpolated between the clean ones on either side
    along the ring where they are near (a few normals), else 0 (the segmented boundary)."""
    n = len(offset)
    if good.all() or not good.any():
        return offset
    idx = np.nonzero(good)[0]
    pos = np.arange(n)
    ext = np.concatenate([idx - n, idx, idx + n])
    val = np.concatenate([offset[idx]] * 3)
    filled = np.interp(pos, ext, val)
    # Distance to the nearest clean normal along the ring.
    right = ext[np.searchsorted(ext, pos)]
    left = ext[np.searchsorted(ext, pos, side="right") - 1]
    near = np.minimum(right - pos, pos - left) <= 4
    return np.where(good, offset, np.where(near, filled, 0.0))


def _smooth_along(v: np.ndarray, sigma: float) -> np.ndarray:
    """Gaussian smoothing of per-normal values along a closed ring (circular)."""
    n = len(v)
    r = int(min(n // 2 - 1, math.ceil(3 * sigma)))
    if r < 1:
        return v
    k = np.exp(-0.5 * (np.arange(-r, r + 1) / sigma) ** 2)
    k /= k.sum()
    padded = np.concatenate([v[-r:], v, v[:r]])
    return np.stack([np.convolve(padded[:, j], k, mode="valid") for j in range(v.shape[1])], axis=1) \
        if v.ndim == 2 else np.convolve(padded, k, mode="valid")


def _clean_ring(points: np.ndarray) -> np.ndarray | None:
    """A simple ring from the edge points: made valid (a crossing of neighbouring normals at a
    tight concave corner leaves a tiny loop), its largest part, simplified within 0.1 px."""
    import shapely

    poly = shapely.Polygon(points)
    if not poly.is_valid:
        poly = shapely.make_valid(poly)
        parts = [g for g in getattr(poly, "geoms", [poly]) if g.geom_type == "Polygon"]
        if not parts:
            return None
        poly = max(parts, key=lambda g: g.area)
        poly = shapely.Polygon(poly.exterior)
    simple = poly.simplify(_SIMPLIFY_PX, preserve_topology=True)
    if simple.is_empty or simple.geom_type != "Polygon" or len(simple.exterior.coords) < 4:
        return None
    return np.asarray(simple.exterior.coords)[:-1]


def _edge_statistics(profiles: list[EdgeProfiles], plane: PlaneMap, outer: np.ndarray) -> dict:
    """The numbers behind the edge's uncertainty (see the module notes)."""
    clean = np.concatenate([p.clean for p in profiles])
    if not clean.any():
        raise MeasurementError("the member's edge shows no clean step anywhere along its boundary; photograph it "
                               "against a contrasting ground, or check the review picture (--overlay)")
    slope = np.concatenate([p.slope for p in profiles])[clean]
    noise = np.concatenate([p.noise for p in profiles])[clean]
    contrast = np.concatenate([p.contrast for p in profiles])[clean]
    lin = np.concatenate([p.level_in for p in profiles])[clean]
    lout = np.concatenate([p.level_out for p in profiles])[clean]
    relative = float(np.median(contrast / np.maximum(np.maximum(lin, lout), 1e-6)))
    if relative < _MIN_CONTRAST:
        raise MeasurementError("the member hardly stands out from its surroundings (their light differs by "
                               f"{100 * relative:.1f} %); photograph it against a contrasting ground")
    g = float(np.median(slope))
    scatter_px = float(np.median(noise / np.maximum(slope, 1e-6)))
    blur = 1.0 / (math.sqrt(2 * math.pi) * max(g, 1e-6))           # a Gaussian edge's σ from its slope
    level_px = float(np.median(np.concatenate([p.level_error for p in profiles])[clean]))
    share = float(clean.mean())
    # Where no clean step was found the segmented boundary stands, right to about a pixel.
    unsupported_px = (1.0 - share) * 1.0
    offset_px = math.sqrt(_OFFSET_FLOOR_PX ** 2 + level_px ** 2 + unsupported_px ** 2)
    centre = outer.mean(axis=0)
    s = plane.mm_per_px(centre)
    corr = math.hypot(blur, _EDGE_SIGMA)
    return {"gradient_per_px": g, "contrast": float(np.median(contrast)), "blur_px": blur,
            "noise": float(np.median(noise)), "offset_px": offset_px, "scatter_px": scatter_px,
            "correlation_px": corr, "mm_per_px": s, "offset_mm": offset_px * s, "scatter_mm": scatter_px * s,
            "correlation_mm": corr * s, "clean_share": share}


def _pixel_moments(seg: Segmentation, plane: PlaneMap) -> dict:
    """A and centroidal second moments summed over the mask's pixels, each a small area at its
    place in the mm plane (every k-th pixel of every k-th row, each standing for k x k)."""
    mask = seg.mask
    k = max(1, int(math.sqrt(mask.sum() / 30_000)))
    sub = mask[k // 2::k, k // 2::k]
    if min(sub.shape) < 2:
        return {"A": 0.0, "Ix": 0.0, "Iy": 0.0}
    jj, ii = np.mgrid[k // 2:mask.shape[0]:k, k // 2:mask.shape[1]:k]
    grid = seg.to_full(np.column_stack([ii.ravel(), jj.ravel()]).astype(np.float64))
    mm = plane.to_mm(grid).reshape(ii.shape + (2,))
    sx, sy = seg.step
    dx = np.gradient(mm, axis=1) / (k * sx)
    dy = np.gradient(mm, axis=0) / (k * sy)
    area = (np.abs(dx[..., 0] * dy[..., 1] - dx[..., 1] * dy[..., 0]) * (k * sx) * (k * sy)).ravel()
    inside = sub.ravel()
    area = area[inside]
    mm = mm.reshape(-1, 2)[inside]
    A = float(area.sum())
    if A <= 0:
        return {"A": 0.0, "Ix": 0.0, "Iy": 0.0}
    c = (area[:, None] * mm).sum(axis=0) / A
    d = mm - c
    return {"A": A, "Ix": float((area * d[:, 1] ** 2).sum()), "Iy": float((area * d[:, 0] ** 2).sum())}
