"""Which pixels are the member: a mask of its cut face, holes kept, references left out.

The image is smoothed, split into two classes by Otsu's threshold, and the member is the
connected region of one class that holds the seed point, or, unattended, the largest region that
stands out from the ground round it (by several times that ground's spread) and touches neither
the image border nor a scale reference (the target's sheet, a ruler, a checkerboard's squares).
Candidates come from Otsu's level and from the two levels of a three-class split (a thin member
on a mottled ground merges, at Otsu's level, with the darker or lighter patches of the ground that
this level splits). Texture
narrower than a set size (growth rings, checks, saw marks, rust speckle) is closed over; openings
larger than that (a tube's bore, bolt holes) stay holes whatever their shade.

References
----------
.. [1] N. Otsu, "A threshold selection method from gray-level histograms," *IEEE Trans. Syst.,
       Man, Cybern.*, vol. 9, no. 1, pp. 62-66, 1979. doi: 10.1109/TSMC.1979.4310076.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError, MeasurementError
from .tone import to_light

__all__ = ["Segmentation", "segment_member"]

# Pixels of the reduced copy the mask is found on (it only has to find the edge's band: the
# edge itself is traced at full resolution).
_WORK_PIXELS = 600_000
# Long side of the copy the uneven light is estimated on [px] (light varies slowly).
_LIGHT_PX = 128.0
# A candidate region stands out when its level differs from the ground round it by more than
# this many times that ground's spread (strongly: twice as many).
_STANDS_OUT = 3.0


@dataclass(frozen=True)
class Segmentation:
    """The member's mask and the levels that separate it from its surroundings.

    A large photo is segmented on a reduced copy; the mask and the light are kept at that size
    and brought to full resolution only where the edge is traced (:meth:`field_in` over a
    rectangle, :meth:`field_at` at points).

    Attributes
    ----------
    mask : ndarray (h, w) bool
        The member's cut face (holes False), on the working copy.
    smooth : ndarray float32
        The smoothed light of the working copy (sRGB levels decoded, see :mod:`tracer.photo.tone`),
        with the uneven light divided out, that the threshold was applied to.
    threshold : float
        The level on `smooth` that gave the member's region (Otsu's, or one of a three-class
        split).
    member_is_bright : bool
    light : ndarray (h, w) float32
        The uneven light divided out (1 where even), on the working copy.
    shape : (H, W)
        The full photo's size.
    step : int
        Full-size pixels per pixel of the working copy (it is the photo averaged over step x
        step blocks, the last rows and columns beyond a whole block left out).
    """

    mask: np.ndarray
    smooth: np.ndarray
    threshold: float
    member_is_bright: bool
    light: np.ndarray
    shape: tuple[int, int] = (0, 0)
    step: int = 1

    def box(self, pad: int = 0) -> tuple[int, int, int, int]:
        """Rows r0:r1 and columns c0:c1 of the full photo that hold the member, `pad` px wider."""
        H, W = self.shape
        ys, xs = np.nonzero(self.mask.any(axis=1))[0], np.nonzero(self.mask.any(axis=0))[0]
        k = self.step
        r0 = int(ys[0]) * k - k - pad
        r1 = (int(ys[-1]) + 1) * k + k + pad
        c0 = int(xs[0]) * k - k - pad
        c1 = (int(xs[-1]) + 1) * k + k + pad
        return max(0, r0), min(H, r1), max(0, c0), min(W, c1)

    def field_in(self, small: np.ndarray, r0: int, r1: int, c0: int, c1: int) -> np.ndarray:
        """A field of the working copy's size, brought to full resolution over rows r0:r1,
        columns c0:c1 (bilinear, with cv2.resize's pixel-centre mapping)."""
        import cv2

        k = self.step
        if k == 1:
            return small[r0:r1, c0:c1]
        # Enlarge the working copy's pixels around the box by k (cv2.resize keeps the pixel
        # centres where field_at puts them), a pixel of margin so that no edge is clamped.
        h, w = small.shape[:2]
        s0, s1 = max(0, r0 // k - 1), min(h, (r1 - 1) // k + 2)
        t0, t1 = max(0, c0 // k - 1), min(w, (c1 - 1) // k + 2)
        big = cv2.resize(small[s0:s1, t0:t1].astype(np.float32, copy=False), ((t1 - t0) * k, (s1 - s0) * k),
                         interpolation=cv2.INTER_LINEAR)
        out = big[r0 - s0 * k:r1 - s0 * k, c0 - t0 * k:c1 - t0 * k]
        if out.shape[:2] != (r1 - r0, c1 - c0):        # past the copy's last whole block: as field_at
            mx = ((np.arange(c0, c1, dtype=np.float32) + 0.5) / k - 0.5)[None, :]
            my = ((np.arange(r0, r1, dtype=np.float32) + 0.5) / k - 0.5)[:, None]
            out = self._remap(small, np.repeat(mx, r1 - r0, axis=0), np.repeat(my, c1 - c0, axis=1))
        return out

    def field_at(self, small: np.ndarray, xy: np.ndarray) -> np.ndarray:
        """A field of the working copy's size, sampled (bilinear) at full-resolution points (N, 2)
        (column, row)."""
        k = np.float32(1.0 / self.step)
        p = np.asarray(xy, np.float32).reshape(-1, 2)
        n = len(p)
        cols = min(max(n, 1), 4096)                    # cv2.remap takes maps under 32767 a side
        q = np.zeros((-(-n // cols) * cols, 2), np.float32)
        q[:n] = p
        mx = ((q[:, 0] + 0.5) * k - 0.5).reshape(-1, cols)
        my = ((q[:, 1] + 0.5) * k - 0.5).reshape(-1, cols)
        return self._remap(small, mx, my).ravel()[:n]

    @staticmethod
    def _remap(small: np.ndarray, mx: np.ndarray, my: np.ndarray) -> np.ndarray:
        import cv2

        return cv2.remap(small.astype(np.float32, copy=False), np.ascontiguousarray(mx, np.float32),
                         np.ascontiguousarray(my, np.float32), cv2.INTER_LINEAR, borderMode=cv2.BORDER_REPLICATE)


def segment_member(gray: np.ndarray, *, texture_px: float, seed: tuple[float, float] | None = None,
                   keep_out: list[np.ndarray] = (), alpha: np.ndarray | None = None,
                   _given_seed: tuple[float, float] | None = None, _in_light: bool = False) -> Segmentation:
    """Find the member in `gray` (H, W floats 0..1).

    Parameters
    ----------
    gray : ndarray
        Grey levels as stored (sRGB), uint8 (0..255) or float 0..1; the mask is found on the
        light they stand for (:mod:`tracer.photo.tone`).
    texture_px : float
        Cracks and specks narrower than this [px] are texture, not edges or holes.
    seed : (x, y), optional
        A pixel on the member (column, row), where several objects are in view.
    keep_out : list of (N, 2) arrays
        Polygons [px] of the scale references.
    alpha : ndarray, optional
        Opaque pixels of a transparent image (the rest is background).

    Raises
    ------
    InputError
        The seed lies outside the image.
    MeasurementError
        Nothing segmented, the seed on background, or the member cut off by the image border.
    """
    import cv2

    given = _given_seed or seed                    # as the user wrote it, for the messages
    H0, W0 = gray.shape
    # Work on a reduced copy of a large photo: the mask only has to find the edge's band; the
    # edge itself is traced at full resolution.
    if seed is not None and not _inside(seed, W0, H0):
        raise InputError(f"--seed {seed[0]:g},{seed[1]:g} lies outside the {W0} x {H0} image")
    f = min(1.0, (_WORK_PIXELS / (H0 * W0)) ** 0.5)
    f = max(f, min(1.0, 3.0 / texture_px))          # texture stays at least 3 px wide
    k = int(1.0 / f)                                # whole blocks: the fast exact average
    if k > 1:
        src = gray if gray.dtype == np.uint8 else gray.astype(np.float32)
        h, w = H0 // k, W0 // k
        small = to_light(cv2.resize(src[:h * k, :w * k], (w, h), interpolation=cv2.INTER_AREA))

        def to_small(p):
            return (np.asarray(p, float) + 0.5) / k - 0.5

        seg = segment_member(small, texture_px=texture_px / k,
                             seed=None if seed is None else tuple(np.clip(to_small(seed), 0, [w - 1, h - 1])),
                             _given_seed=seed, _in_light=True,
                             keep_out=[to_small(p) for p in keep_out],
                             alpha=None if alpha is None else cv2.resize(alpha[:h * k, :w * k].astype(np.uint8), (w, h),
                                                                          interpolation=cv2.INTER_NEAREST).astype(bool))
        return Segmentation(mask=seg.mask, smooth=seg.smooth, threshold=seg.threshold,
                            member_is_bright=seg.member_is_bright, light=seg.light, shape=(H0, W0), step=k)
    h, w = H0, W0
    sigma = max(1.0, 0.25 * texture_px)
    smooth = cv2.GaussianBlur(gray.astype(np.float32) if _in_light else to_light(gray), (0, 0), sigma)
    refs = np.zeros((h, w), np.uint8)
    for poly in keep_out:
        cv2.fillPoly(refs, [np.round(poly).astype(np.int32)], 1)
    usable = refs == 0
    if alpha is not None:
        usable &= alpha
    light = _light(smooth, usable)
    smooth = smooth / light
    sample = smooth[::2, ::2][usable[::2, ::2]]      # every other pixel: the same histogram
    t = _otsu(sample)
    r = max(1, int(round(texture_px / 2)))
    disk = cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (2 * r + 1, 2 * r + 1))
    if seed is not None:
        bright = smooth > t
        sx, sy = seed                                  # inside the image: checked above
        cls = bool(bright[int(sy), int(sx)])
        m = _closed_and_opened((bright if cls else ~bright) & usable, disk, usable)
        n, labels, stats, _ = cv2.connectedComponentsWithStats(m, connectivity=8)
        lab = labels[int(sy), int(sx)]
        x, y, bw, bh, _ = stats[lab] if lab else (0, 0, w, h, 0)
        if lab == 0 or x == 0 or y == 0 or x + bw == w or y + bh == h:
            raise MeasurementError(f"--seed {given[0]:g},{given[1]:g} is on the background, not on a member "
                                   "(its region reaches the image border); pick a point well inside the "
                                   "cut face, and photograph the whole face")
        best = (stats[lab][4], labels == lab, cls, t)
    else:
        found, cut_off = _regions(smooth, usable, t, disk)
        # The ground's own spread over the photo (the class of the border at Otsu's level): a
        # mottled ground's patches differ from their surroundings by about that much.
        ground_bright = bool(np.median(np.concatenate([smooth[0], smooth[-1], smooth[:, 0], smooth[:, -1]])) > t)
        ground = sample[(sample > t) == ground_bright]
        floor = 1.4826 * float(np.median(np.abs(ground - np.median(ground)))) if len(ground) else 0.0
        at_otsu = [(f, _stand_out_ratio(smooth, usable, f[1], r, floor)) for f in found]
        # A thin member on a mottled ground can merge, at Otsu's level, with the darker (or
        # lighter) patches of the ground that this level splits: the levels of a three-class
        # split give candidates too. The largest region that stands out strongly at Otsu's level
        # is taken; else the largest at the other levels; else the largest that stands out at all.
        at_three = []
        if not any(q >= 2 * _STANDS_OUT for _, q in at_otsu):
            for t3 in _otsu3(sample):
                at_three += [(f, _stand_out_ratio(smooth, usable, f[1], r, floor)) for f in _regions(smooth, usable, t3, disk)[0]]
        tiers = ([f for f, q in at_otsu if q >= 2 * _STANDS_OUT], [f for f, q in at_three if q >= 2 * _STANDS_OUT],
                 [f for f, q in at_otsu + at_three if q > _STANDS_OUT], found)
        pool = next((t for t in tiers if t), [])
        best = max(pool, key=lambda f: f[0]) if pool else None
        if best is None and cut_off:
            raise MeasurementError("the member is cut off by the image border; photograph the whole cut face "
                                   "with some ground around it")
        if best is None:
            raise MeasurementError("nothing segmented: no region stands out from its surroundings apart from the "
                                   "references; give --seed X,Y on the member, or photograph it against a "
                                   "contrasting ground")
    _, region, cls, t = best
    ys, xs = np.nonzero(region)
    if xs.min() == 0 or ys.min() == 0 or xs.max() == w - 1 or ys.max() == h - 1:
        raise MeasurementError("the member is cut off by the image border; photograph the whole cut face "
                               "with some ground around it")
    mask = _fill_small_holes(region, min_area=(2 * texture_px) ** 2)
    return Segmentation(mask=mask, smooth=smooth, threshold=float(t), member_is_bright=cls, light=light,
                        shape=(H0, W0))


def _closed_and_opened(m: np.ndarray, disk: np.ndarray, usable: np.ndarray) -> np.ndarray:
    """Texture narrower than the disk closed over, then specks opened away (uint8 mask)."""
    import cv2

    m = cv2.morphologyEx(m.astype(np.uint8), cv2.MORPH_CLOSE, disk)
    m = cv2.morphologyEx(m, cv2.MORPH_OPEN, disk)
    return m & usable.astype(np.uint8)


def _regions(smooth: np.ndarray, usable: np.ndarray, t: float, disk: np.ndarray) -> tuple[list, bool]:
    """Candidate members at level `t`: regions of either class, large enough, touching neither
    the border nor a reference, not a ruler or a checkerboard, nor lying in another one's
    opening (a tube's bore); and whether a region of the member's class was cut off."""
    import cv2

    h, w = smooth.shape
    bright = smooth > t
    border = np.concatenate([bright[0], bright[-1], bright[:, 0], bright[:, -1]])
    ground_is_bright = bool(border.mean() > 0.5)
    found, cut_off = [], False                      # (area, region, class, level)
    for cls in (True, False):
        same = bright if cls else ~bright
        n, labels, stats, _ = cv2.connectedComponentsWithStats(_closed_and_opened(same & usable, disk, usable),
                                                               connectivity=8)
        for k in range(1, n):
            x, y, bw, bh, area = stats[k]
            touches = x == 0 or y == 0 or x + bw == w or y + bh == h
            if (area >= 0.002 * h * w and not touches and not _looks_like_ruler(labels == k)
                    and not _looks_like_board(labels[y:y + bh, x:x + bw] == k, same[y:y + bh, x:x + bw])):
                found.append((area, labels == k, cls, t))
            elif touches and cls != ground_is_bright and area >= 0.002 * h * w:
                cut_off = True
    filled = [_fill_small_holes(f[1], min_area=np.inf) for f in found]
    found = [f for i, f in enumerate(found) if not any(j != i and filled[j][f[1]].all() for j in range(len(found)))]
    return found, cut_off


def _stand_out_ratio(smooth: np.ndarray, usable: np.ndarray, region: np.ndarray, r: int, floor: float) -> float:
    """How many times the ground's spread the region's level differs from the ground round it
    (robust: medians and 1.4826 MAD), the spread being at least `floor` (the ground's over the
    whole photo); 0 where no ground is round it. The ground is read in a ring a little away
    from the region, where a threshold has not cut its distribution short: a patch of a
    mottled ground then differs by about one spread, a member by many."""
    import cv2

    ys, xs = np.nonzero(region.any(axis=1))[0], np.nonzero(region.any(axis=0))[0]
    pad = 6 * r + 4
    r0, r1 = max(0, ys[0] - pad), ys[-1] + 1 + pad
    c0, c1 = max(0, xs[0] - pad), xs[-1] + 1 + pad
    reg = region[r0:r1, c0:c1]
    solid = _fill_small_holes(reg, min_area=np.inf).astype(np.uint8)
    disk = lambda n: cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (2 * n + 1, 2 * n + 1))
    ring = (cv2.dilate(solid, disk(6 * r + 2)) > cv2.dilate(solid, disk(2 * r + 1))) & usable[r0:r1, c0:c1]
    if ring.sum() < 20:
        return 0.0
    img = smooth[r0:r1, c0:c1]
    inside, around = np.median(img[reg]), img[ring]
    spread = 1.4826 * float(np.median(np.abs(around - np.median(around))))
    return abs(float(inside) - float(np.median(around))) / max(spread, floor, 1e-3)


def _otsu3(values: np.ndarray) -> tuple[float, float]:
    """The two levels of a three-class Otsu split of values in 0..1 (exhaustive over the
    histogram's bins; between-class variance, as [1] for two classes)."""
    bins = 128
    idx = np.clip((np.asarray(values, np.float32) * np.float32(bins)).astype(np.intp), 0, bins - 1)
    p = np.bincount(idx, minlength=bins).astype(np.float64)
    p /= max(p.sum(), 1.0)
    c = (np.arange(bins) + 0.5) / bins
    w0, m0 = np.cumsum(p), np.cumsum(p * c)                 # weight and first moment below each bin
    i, j = np.triu_indices(bins - 1, k=1)                   # split after bin i and after bin j
    wa, ma = w0[i], m0[i]
    wb, mb = w0[j] - w0[i], m0[j] - m0[i]
    wc, mc = 1.0 - w0[j], m0[-1] - m0[j]
    with np.errstate(divide="ignore", invalid="ignore"):
        between = ma ** 2 / wa + mb ** 2 / wb + mc ** 2 / wc
    k = int(np.nanargmax(np.where((wa > 0) & (wb > 0) & (wc > 0), between, np.nan)))
    return float((i[k] + 1) / bins), float((j[k] + 1) / bins)


def _light(img: np.ndarray, usable: np.ndarray) -> np.ndarray:
    """The uneven light, estimated from the ground (the class that holds the border).

    The ground's brightness is interpolated over the whole image by normalised convolution
    (the member and references left out) on a reduced copy; light multiplies member and ground
    alike, so dividing by it evens both. Two rounds, each with a better split.
    """
    import cv2

    h, w = img.shape
    f = min(1.0, _LIGHT_PX / max(h, w))
    small = cv2.resize(img, (max(2, int(w * f)), max(2, int(h * f))), interpolation=cv2.INTER_AREA)
    use = cv2.resize(usable.astype(np.uint8), small.shape[::-1], interpolation=cv2.INTER_NEAREST).astype(bool)
    sigma = max(small.shape) / 8.0
    flat = small.copy()
    light = np.ones_like(small)
    for _ in range(2):
        t = _otsu(flat[use])
        cls = flat > t
        border = np.concatenate([cls[0], cls[-1], cls[:, 0], cls[:, -1]])
        ground = (cls == (border.mean() > 0.5)) & use
        if ground.sum() < 0.05 * ground.size:
            return np.ones_like(img)
        num = cv2.GaussianBlur(np.where(ground, small, 0).astype(np.float32), (0, 0), sigma)
        den = cv2.GaussianBlur(ground.astype(np.float32), (0, 0), sigma)
        light = num / np.maximum(den, 1e-6)
        light = light / float(np.median(light[ground]))
        flat = small / np.maximum(light, 1e-3)
    big = cv2.resize(light.astype(np.float32), (w, h), interpolation=cv2.INTER_LINEAR)
    return np.maximum(big, 1e-3).astype(np.float32)


def _inside(seed: tuple[float, float], w: int, h: int) -> bool:
    return 0 <= seed[0] < w and 0 <= seed[1] < h


def _otsu(values: np.ndarray) -> float:
    """Otsu's threshold of values in 0..1 [1]."""
    bins = 512
    idx = (np.asarray(values, np.float32) * np.float32(bins)).astype(np.intp)
    hist = np.bincount(np.clip(idx, 0, bins - 1), minlength=bins)      # np.histogram's bins, faster
    p = hist.astype(np.float64) / max(hist.sum(), 1)
    centres = (np.arange(bins) + 0.5) / bins
    w0 = np.cumsum(p)
    mu = np.cumsum(p * centres)
    with np.errstate(divide="ignore", invalid="ignore"):
        between = (mu[-1] * w0 - mu) ** 2 / (w0 * (1.0 - w0))
    return float(centres[int(np.nanargmax(between))])


def _fill_small_holes(region: np.ndarray, *, min_area: float) -> np.ndarray:
    """Fill the holes of `region` smaller than `min_area` [px²]; larger ones are real openings."""
    import cv2

    ys, xs = np.nonzero(region.any(axis=1))[0], np.nonzero(region.any(axis=0))[0]
    if not len(ys):
        return region
    # Within the region's box and a pixel round it: what reaches the frame is outside.
    r0, r1, c0, c1 = max(0, ys[0] - 1), ys[-1] + 2, max(0, xs[0] - 1), xs[-1] + 2
    crop = region[r0:r1, c0:c1]
    holes = (~crop).astype(np.uint8)
    n, labels, stats, _ = cv2.connectedComponentsWithStats(holes, connectivity=4)
    h, w = crop.shape
    x, y, bw, bh, area = stats.T
    outside = (x == 0) | (y == 0) | (x + bw == w) | (y + bh == h)
    fill = ~outside & (area < min_area)
    fill[0] = False                                   # label 0 is the region itself
    out = region.copy()
    out[r0:r1, c0:c1] |= fill[labels]
    return out


def _looks_like_board(region: np.ndarray, same: np.ndarray) -> bool:
    """A checkerboard target (its sheet, or some of its squares run together at their corners).

    `same` is the region's class before the texture was closed over. Either the region's own
    pixels or the other class's inside its outline fall into six or more alike, squarish
    patches, each as far from its nearest neighbour as a diagonal step of a board (about √2
    times their side). The cells of a multi-cell hollow section sit closer (side plus a wall),
    and a member's own pixels are one patch: both are kept.
    """
    import cv2

    filled = _fill_small_holes(region, min_area=np.inf)
    cross = np.ones((3, 3), np.uint8)               # squares meeting at a corner come apart
    return any(_squares_in_a_lattice(cv2.erode(m.astype(np.uint8), cross))
               for m in (region & same, filled & ~same))


def _squares_in_a_lattice(patches: np.ndarray) -> bool:
    import cv2

    n, labels, stats, cents = cv2.connectedComponentsWithStats(patches, connectivity=4)
    x, y, bw, bh, area = stats.T
    keep = area >= 9
    keep[0] = False
    if keep.sum() < 6:
        return False
    med = float(np.median(area[keep]))
    alike = keep & (area > med / 1.6) & (area < med * 1.6) & (bw < 1.7 * bh) & (bh < 1.7 * bw)
    if alike.sum() < 6:
        return False
    c = cents[alike]
    d = np.hypot(*(c[:, None, :] - c[None, :, :]).transpose(2, 0, 1))
    np.fill_diagonal(d, np.inf)
    ratio = float(np.median(d.min(axis=1))) / np.sqrt(med)
    return 1.25 <= ratio <= 1.8


def _looks_like_ruler(region: np.ndarray) -> bool:
    """A long straight strip whose edge is notched by many graduation marks."""
    import cv2

    cnts, _ = cv2.findContours(region.astype(np.uint8), cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    if not cnts:
        return False
    c = max(cnts, key=cv2.contourArea)
    (_, _), (a, b), _ = cv2.minAreaRect(c)
    if min(a, b) == 0 or max(a, b) / min(a, b) < 5:
        return False
    hull = cv2.convexHull(c, returnPoints=False)
    try:
        defects = cv2.convexityDefects(c, hull)
    except cv2.error:
        return False
    if defects is None:
        return False
    deep = np.count_nonzero(defects.reshape(-1, 4)[:, 3] / 256.0 > 1.0)
    return deep >= 15
