"""Which pixels are the member: a mask of its cut face, holes kept, references left out.

The image is smoothed, split into two classes by Otsu's threshold, and the member is the
connected region of one class that holds the seed point, or, unattended, the largest region that
touches neither the image border nor a scale reference (the target's sheet, a ruler). Texture
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

__all__ = ["Segmentation", "segment_member"]

# Pixels of the reduced copy the mask is found on.
_WORK_PIXELS = 2_000_000


@dataclass(frozen=True)
class Segmentation:
    """The member's mask and the levels that separate it from its surroundings.

    A large photo is segmented on a reduced copy; the mask and the light are kept at that size
    and brought to full resolution only over the member's box (:meth:`mask_in`,
    :meth:`light_in`), where the edge is traced.

    Attributes
    ----------
    mask : ndarray (h, w) bool
        The member's cut face (holes False), on the working copy.
    smooth : ndarray float32
        The smoothed grey image, with uneven light divided out, that the threshold was applied to
        (of the working copy).
    threshold : float
        Otsu's level on `smooth`.
    member_is_bright : bool
    light : ndarray (h, w) float32
        The uneven light divided out (1 where even), on the working copy.
    shape : (H, W)
        The full photo's size.
    """

    mask: np.ndarray
    smooth: np.ndarray
    threshold: float
    member_is_bright: bool
    light: np.ndarray
    shape: tuple[int, int] = (0, 0)

    def box(self, pad: int = 0) -> tuple[int, int, int, int]:
        """Rows r0:r1 and columns c0:c1 of the full photo that hold the member, `pad` px wider."""
        H, W = self.shape
        h, w = self.mask.shape
        ys, xs = np.nonzero(self.mask)
        sy, sx = H / h, W / w
        r0 = int(np.floor(ys.min() * sy)) - int(np.ceil(sy)) - pad
        r1 = int(np.ceil((ys.max() + 1) * sy)) + int(np.ceil(sy)) + pad
        c0 = int(np.floor(xs.min() * sx)) - int(np.ceil(sx)) - pad
        c1 = int(np.ceil((xs.max() + 1) * sx)) + int(np.ceil(sx)) + pad
        return max(0, r0), min(H, r1), max(0, c0), min(W, c1)

    def mask_in(self, r0: int, r1: int, c0: int, c1: int) -> np.ndarray:
        """The mask at full resolution over rows r0:r1, columns c0:c1 (bilinear, as cv2.resize)."""
        return self._full(self.mask.astype(np.float32), r0, r1, c0, c1) > 0.5

    def light_in(self, r0: int, r1: int, c0: int, c1: int) -> np.ndarray:
        """The uneven light at full resolution over rows r0:r1, columns c0:c1."""
        return self._full(self.light.astype(np.float32), r0, r1, c0, c1)

    def _full(self, small: np.ndarray, r0: int, r1: int, c0: int, c1: int) -> np.ndarray:
        import cv2

        H, W = self.shape
        h, w = small.shape
        if (h, w) == (H, W):
            return small[r0:r1, c0:c1]
        # cv2.resize's pixel-centre mapping, evaluated on the box alone.
        mx = ((np.arange(c0, c1, dtype=np.float32) + 0.5) * (w / W) - 0.5)[None, :]
        my = ((np.arange(r0, r1, dtype=np.float32) + 0.5) * (h / H) - 0.5)[:, None]
        mx, my = np.broadcast_to(mx, (r1 - r0, c1 - c0)), np.broadcast_to(my, (r1 - r0, c1 - c0))
        return cv2.remap(small, np.ascontiguousarray(mx), np.ascontiguousarray(my), cv2.INTER_LINEAR,
                         borderMode=cv2.BORDER_REPLICATE)


def segment_member(gray: np.ndarray, *, texture_px: float, seed: tuple[float, float] | None = None,
                   keep_out: list[np.ndarray] = (), alpha: np.ndarray | None = None) -> Segmentation:
    """Find the member in `gray` (H, W floats 0..1).

    Parameters
    ----------
    gray : ndarray
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

    H0, W0 = gray.shape
    # Work on a reduced copy of a large photo: the mask only has to find the edge's band; the
    # edge itself is traced at full resolution.
    if seed is not None and not _inside(seed, W0, H0):
        raise InputError(f"--seed {seed[0]:g},{seed[1]:g} lies outside the {W0} x {H0} image")
    f = min(1.0, (_WORK_PIXELS / (H0 * W0)) ** 0.5)
    f = max(f, min(1.0, 3.0 / texture_px))          # texture stays at least 3 px wide
    if f < 1.0:
        small = cv2.resize(gray.astype(np.float32), (max(2, int(W0 * f)), max(2, int(H0 * f))),
                           interpolation=cv2.INTER_AREA)
        seg = segment_member(small, texture_px=texture_px * f,
                             seed=None if seed is None else (seed[0] * f, seed[1] * f),
                             keep_out=[np.asarray(p) * f for p in keep_out],
                             alpha=None if alpha is None else cv2.resize(alpha.astype(np.uint8), small.shape[::-1],
                                                                          interpolation=cv2.INTER_NEAREST).astype(bool))
        return Segmentation(mask=seg.mask, smooth=seg.smooth, threshold=seg.threshold,
                            member_is_bright=seg.member_is_bright, light=seg.light, shape=(H0, W0))
    h, w = H0, W0
    sigma = max(1.0, 0.25 * texture_px)
    smooth = cv2.GaussianBlur(gray.astype(np.float32), (0, 0), sigma)
    refs = np.zeros((h, w), np.uint8)
    for poly in keep_out:
        cv2.fillPoly(refs, [np.round(poly).astype(np.int32)], 1)
    usable = refs == 0
    if alpha is not None:
        usable &= alpha
    light = _light(smooth, usable)
    smooth = smooth / light
    t = _otsu(smooth[usable])
    bright = smooth > t
    r = max(1, int(round(texture_px / 2)))
    disk = cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (2 * r + 1, 2 * r + 1))

    if seed is not None:
        sx, sy = seed                                  # inside the image: checked above
        classes = [bool(bright[int(sy), int(sx)])]
    else:
        classes = [True, False]
    found = []                                    # (area, region, class)
    border = np.concatenate([bright[0], bright[-1], bright[:, 0], bright[:, -1]])
    ground_is_bright = bool(border.mean() > 0.5)
    cut_off = False
    for cls in classes:
        m = (bright if cls else ~bright) & usable
        m = cv2.morphologyEx(m.astype(np.uint8), cv2.MORPH_CLOSE, disk)
        m = cv2.morphologyEx(m, cv2.MORPH_OPEN, disk)
        m &= usable.astype(np.uint8)
        n, labels, stats, _ = cv2.connectedComponentsWithStats(m, connectivity=8)
        if seed is not None:
            lab = labels[int(sy), int(sx)]
            x, y, bw, bh, _ = stats[lab] if lab else (0, 0, w, h, 0)
            if lab == 0 or x == 0 or y == 0 or x + bw == w or y + bh == h:
                raise MeasurementError(f"--seed {seed[0]:g},{seed[1]:g} is on the background, not on a member "
                                       "(its region reaches the image border); pick a point well inside the "
                                       "cut face, and photograph the whole face")
            found.append((stats[lab][4], labels == lab, cls))
            continue
        for k in range(1, n):
            x, y, bw, bh, area = stats[k]
            touches = x == 0 or y == 0 or x + bw == w or y + bh == h
            if area >= 0.002 * h * w and not touches and not _looks_like_ruler(labels == k):
                found.append((area, labels == k, cls))
            elif touches and cls != ground_is_bright and area >= 0.002 * h * w:
                cut_off = True
    if seed is None:
        # A region lying in another region's opening is that opening's inside (a tube's bore),
        # not a member of its own.
        filled = [_fill_small_holes(r, min_area=np.inf) for _, r, _ in found]
        found = [f for i, f in enumerate(found)
                 if not any(j != i and filled[j][f[1]].all() for j in range(len(found)))]
    best = max(found, key=lambda f: f[0]) if found else None
    if best is None and cut_off:
        raise MeasurementError("the member is cut off by the image border; photograph the whole cut face "
                               "with some ground around it")
    if best is None:
        raise MeasurementError("nothing segmented: no region stands out from its surroundings apart from the "
                               "references; give --seed X,Y on the member, or photograph it against a "
                               "contrasting ground")
    _, region, cls = best
    ys, xs = np.nonzero(region)
    if xs.min() == 0 or ys.min() == 0 or xs.max() == w - 1 or ys.max() == h - 1:
        raise MeasurementError("the member is cut off by the image border; photograph the whole cut face "
                               "with some ground around it")
    mask = _fill_small_holes(region, min_area=(2 * texture_px) ** 2)
    return Segmentation(mask=mask, smooth=smooth, threshold=float(t), member_is_bright=cls, light=light,
                        shape=(H0, W0))


def _light(img: np.ndarray, usable: np.ndarray) -> np.ndarray:
    """The uneven light, estimated from the ground (the class that holds the border).

    The ground's brightness is interpolated over the whole image by normalised convolution
    (the member and references left out) on a reduced copy; light multiplies member and ground
    alike, so dividing by it evens both. Two rounds, each with a better split.
    """
    import cv2

    h, w = img.shape
    f = min(1.0, 512.0 / max(h, w))
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
    hist, edges = np.histogram(values, bins=512, range=(0.0, 1.0))
    p = hist.astype(np.float64) / max(hist.sum(), 1)
    centres = 0.5 * (edges[:-1] + edges[1:])
    w0 = np.cumsum(p)
    mu = np.cumsum(p * centres)
    with np.errstate(divide="ignore", invalid="ignore"):
        between = (mu[-1] * w0 - mu) ** 2 / (w0 * (1.0 - w0))
    return float(centres[int(np.nanargmax(between))])


def _fill_small_holes(region: np.ndarray, *, min_area: float) -> np.ndarray:
    """Fill the holes of `region` smaller than `min_area` [px²]; larger ones are real openings."""
    import cv2

    holes = (~region).astype(np.uint8)
    n, labels, stats, _ = cv2.connectedComponentsWithStats(holes, connectivity=4)
    h, w = region.shape
    x, y, bw, bh, area = stats.T
    outside = (x == 0) | (y == 0) | (x + bw == w) | (y + bh == h)
    fill = ~outside & (area < min_area)
    fill[0] = False                                   # label 0 is the region itself
    return region | fill[labels]


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
    deep = np.count_nonzero(defects[:, 0, 3] / 256.0 > 1.0)
    return deep >= 15
