"""Scale references in view that are not the member: a checkerboard or a ruler lying about.

A target or a ruler that is not the scale reference of this measurement (a ``--scale`` photo with
a target still in it, say) is a compact, distinct, sharply outlined region: just what the member
looks like to the candidate search. These tests recognise them on a crop of the photo's grey
levels round a candidate, so that they are never taken for the member.
"""

from __future__ import annotations

import numpy as np

__all__ = ["reference_kind", "otsu"]

# Side of the crop the tests run on [px].
_CROP_PX = 400


def reference_kind(gray: np.ndarray, mask: np.ndarray) -> str | None:
    """``"checkerboard"``, ``"ruler"`` or None for the region `mask` of the grey crop `gray`
    (same shape; uint8 levels or floats)."""
    import cv2

    h, w = mask.shape
    f = min(1.0, _CROP_PX / max(h, w))
    if f < 1.0:
        size = (max(8, round(w * f)), max(8, round(h * f)))
        gray = cv2.resize(gray, size, interpolation=cv2.INTER_AREA)
        mask = cv2.resize(mask.astype(np.uint8), size, interpolation=cv2.INTER_NEAREST).astype(bool)
    g = gray.astype(np.float32)
    if not mask.any():
        return None
    if _looks_like_board(g, mask):
        return "checkerboard"
    if _looks_like_ruler(g, mask):
        return "ruler"
    return None


def _looks_like_board(g: np.ndarray, mask: np.ndarray) -> bool:
    """Six or more alike, squarish dark (or light) patches inside the region, each as far from
    its nearest neighbour as a diagonal step of a board (about √2 times their side). The cells
    of a multi-cell hollow section sit closer (side plus a wall), and a member's own pixels are
    one patch: both are kept."""
    import cv2

    vals = g[mask]
    t = otsu(vals, float(vals.min()), float(vals.max()))
    cross = np.ones((3, 3), np.uint8)                # squares meeting at a corner come apart
    return any(_squares_in_a_lattice(cv2.erode((mask & m).astype(np.uint8), cross)) for m in (g <= t, g > t))


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


def _looks_like_ruler(g: np.ndarray, mask: np.ndarray) -> bool:
    """A long straight strip (length over width of 5 or more) with a graduation: the grey
    profile along it, near either long edge, repeats with one period 20 or more times (its
    spectrum's strongest peak holds a large share of the power)."""
    import cv2

    cnts, _ = cv2.findContours(mask.astype(np.uint8), cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    if not cnts:
        return False
    (cx, cy), (a, b), angle = cv2.minAreaRect(max(cnts, key=cv2.contourArea))
    long_, short = max(a, b), min(a, b)
    if short < 3 or long_ / short < 5:
        return False
    if a < b:
        angle += 90.0
    # The strip turned to lie along the rows.
    M = cv2.getRotationMatrix2D((cx, cy), angle, 1.0)
    M[:, 2] += (long_ / 2 - cx, short / 2 - cy)
    strip = cv2.warpAffine(g, M, (int(long_), int(short)), flags=cv2.INTER_LINEAR)
    if strip.shape[0] < 4 or strip.shape[1] < 40:
        return False
    band = max(1, strip.shape[0] // 4)
    for rows in (strip[:band], strip[-band:]):
        prof = rows.mean(axis=0)
        prof = prof - np.convolve(prof, np.ones(9) / 9, mode="same")          # the slow trend out
        power = np.abs(np.fft.rfft(prof[4:-4])) ** 2
        n = len(prof) - 8
        k = np.arange(len(power))
        usable = (k >= 20) & (n / np.maximum(k, 1) >= 2.5)                   # 20+ periods, 2.5+ px each
        if usable.any() and power[usable].max() > 0.25 * power[1:].sum():
            return True
    return False


def otsu(values: np.ndarray, lo: float, hi: float) -> float:
    """Otsu's threshold [1] of `values` over 256 bins from `lo` to `hi`.

    References
    ----------
    .. [1] N. Otsu, "A threshold selection method from gray-level histograms," *IEEE Trans.
           Syst., Man, Cybern.*, vol. 9, no. 1, pp. 62-66, 1979. doi: 10.1109/TSMC.1979.4310076.
    """
    if hi <= lo:
        return lo
    hist, edges = np.histogram(values, bins=256, range=(lo, hi))
    p = hist / max(hist.sum(), 1)
    centres = 0.5 * (edges[:-1] + edges[1:])
    w0 = np.cumsum(p)
    mu = np.cumsum(p * centres)
    with np.errstate(divide="ignore", invalid="ignore"):
        between = (mu[-1] * w0 - mu) ** 2 / (w0 * (1.0 - w0))
    return float(centres[int(np.nanargmax(between))])
