"""The working copy the member is searched on: the photo reduced to about 60,000 pixels, its
uneven light divided out, described by its colour and texture
(:mod:`tracer.inputs.photo.regions`), with the scale references (and transparent pixels) marked
so that every search holds them to the ground and leaves them out of its models.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .hints import Hints
from .masks import border_strip
from .regions import Appearance, appearance

__all__ = ["WorkingCopy", "working_copy"]

# Pixels of the working copy.
_WORK_PIXELS = 60_000
# Window (Gaussian σ) of the texture measure on the working copy [px].
_TEXTURE_SIGMA = 1.0
# The border's uneven light is divided out where a quadratic explains this share of its variation.
_SHADING_EXPLAINS = 0.3


def working_copy(photo, texture_px: float, keep_out, hints: Hints) -> WorkingCopy:
    """The working copy of `photo` (:class:`~tracer.inputs.photo.load.Photo`) and everything the
    searches on it share.

    Parameters
    ----------
    photo : Photo
    texture_px : float
        Cracks, checks and specks narrower than this [px] are texture, not edges or holes.
    keep_out : list of (N, 2) arrays
        Polygons [px] of the scale references: never the member.
    hints : Hints
        Checked against the image here.

    Raises
    ------
    InputError
        A hint outside the image or contradicting another.
    """
    import cv2

    from .tone import LIGHT_OF_8BIT

    H, W = photo.shape
    hints.check(W, H)
    step = max(1.0, math.sqrt(H * W / _WORK_PIXELS))
    w, h = max(16, round(W / step)), max(16, round(H / step))
    sx, sy = W / w, H / h
    small = cv2.resize(photo.color, (w, h), interpolation=cv2.INTER_AREA)
    light = LIGHT_OF_8BIT[small]
    shading = _shading(light, border_strip(h, w))
    light = light / shading[..., None]
    refs = np.zeros((h, w), np.uint8)
    for poly in keep_out:
        q = (np.asarray(poly, float) + 0.5) / (sx, sy) - 0.5
        cv2.fillPoly(refs, [np.round(q * 16).astype(np.int32)], 1, lineType=cv2.LINE_8, shift=4)
    # A pixel of margin round each reference: its anti-aliased rim is no member either.
    refs = cv2.dilate(refs, np.ones((3, 3), np.uint8)).astype(bool)
    if photo.alpha is not None:
        refs |= cv2.resize(photo.alpha.astype(np.uint8), (w, h), interpolation=cv2.INTER_NEAREST) == 0
    # Texture is the roughness at the working copy's own scale (its pixels average the photo's
    # finest grain), over a window small enough that an edge's step spills little into it (a
    # wide window makes a band of "edge" looks along every outline, taken for the member).
    app = appearance(light, texture_px=_TEXTURE_SIGMA, usable=~refs)
    strip = border_strip(h, w) & ~refs
    looks = np.bincount(app.codes[strip], minlength=app.n_looks) / max(int(strip.sum()), 1)
    return WorkingCopy(app=app, refs=refs, scale=(sx, sy), shape=(H, W), texture_px=texture_px, shading=shading,
                       gray=photo.levels, ground_looks=looks, features=_pattern(light))


@dataclass
class WorkingCopy:
    """The photo reduced for the member's search, and what every search on it shares.

    Attributes
    ----------
    app : Appearance
        The working copy's looks (:mod:`tracer.inputs.photo.regions`), its uneven light divided
        out.
    refs : ndarray (h, w) bool
        The scale references with a pixel round each, and transparent pixels: never the member.
    scale : (sx, sy)
        Full-size pixels per pixel of the working copy, across and down.
    shape : (H, W)
        The full photo's size.
    texture_px : float
        Cracks, checks and specks narrower than this [full-size px] are texture.
    shading : ndarray (h, w) float32
        The uneven light divided out (1 everywhere where it was taken as even).
    gray : ndarray (H, W) or None
        The full photo's grey levels (:attr:`~tracer.inputs.photo.load.Photo.levels`), where a region is tested for a scale
        reference.
    ground_looks : ndarray (K,) or None
        The share of each look in the border strip: the ground at the photo's edges.
    features : ndarray (h, w, 4) or None
        What shade leaves alone, per pixel (:func:`~tracer.inputs.photo.regions.pattern_features`).
    """

    app: Appearance
    refs: np.ndarray
    scale: tuple[float, float]
    shape: tuple[int, int]
    texture_px: float
    shading: np.ndarray
    gray: np.ndarray | None = None
    ground_looks: np.ndarray | None = None
    features: np.ndarray | None = None

    def to_small(self, xy) -> np.ndarray:
        """Full-size pixels (x, y) to the working copy's."""
        return (np.asarray(xy, float) + 0.5) / self.scale - 0.5

    def to_full(self, xy) -> np.ndarray:
        """The working copy's pixels (x, y) to full-size ones."""
        return (np.asarray(xy, float) + 0.5) * self.scale - 0.5

    def disc(self, points, radius: float) -> np.ndarray:
        """Discs of `radius` [working px] round `points` [full-size px], on the working copy."""
        import cv2

        h, w = self.app.shape
        m = np.zeros((h, w), np.uint8)
        for x, y in self.to_small(np.reshape(points, (-1, 2))):
            cv2.circle(m, (int(round(x)), int(round(y))), max(0, int(round(radius))), 1, -1)
        return m.astype(bool)

    def outside_box(self, box) -> np.ndarray:
        """The working copy outside `box` (x0, y0, x1, y1) [full-size px]; nothing where `box` is
        None."""
        h, w = self.app.shape
        m = np.ones((h, w), bool)
        if box is None:
            return np.zeros((h, w), bool)
        (x0, y0), (x1, y1) = self.to_small([box[:2], box[2:]])
        m[max(0, int(math.floor(y0))):int(math.ceil(y1)) + 1, max(0, int(math.floor(x0))):int(math.ceil(x1)) + 1] = False
        return m


def _pattern(light: np.ndarray) -> np.ndarray:
    """What shade leaves alone, per pixel of the working copy (see
    :func:`~tracer.inputs.photo.trim.open_up`)."""
    from .regions import pattern_features

    return pattern_features(light, _TEXTURE_SIGMA)


def _shading(light: np.ndarray, strip: np.ndarray) -> np.ndarray:
    """The uneven light over the working copy, from the border strip (the ground, mostly).

    A quadratic in x and y is fitted to the log lightness of the strip's pixels by least squares
    reweighted against outliers (Tukey's biweight, four rounds); light multiplies member and
    ground alike, so dividing by it evens both. Where the quadratic explains too little of the
    strip's variation (a mixed border, not shading), or would swing more than threefold, the
    light is taken as even (1 everywhere).
    """
    h, w = light.shape[:2]
    lum = np.maximum(light @ np.array([0.0722, 0.7152, 0.2126], np.float32), 1e-4)   # BGR: Rec. 709 Y
    ys, xs = np.nonzero(strip)
    u, v = xs / max(w - 1, 1) - 0.5, ys / max(h - 1, 1) - 0.5
    A = np.column_stack([np.ones_like(u), u, v, u * u, u * v, v * v])
    y = np.log(lum[ys, xs])
    wts = np.ones_like(y)
    coef = np.zeros(6)
    for _ in range(4):
        sw = np.sqrt(wts)
        coef = np.linalg.lstsq(A * sw[:, None], y * sw, rcond=None)[0]
        r = y - A @ coef
        scale = 4.685 * 1.4826 * max(float(np.median(np.abs(r))), 1e-3)
        wts = np.where(np.abs(r) < scale, (1 - (r / scale) ** 2) ** 2, 0.0)
    fit = A @ coef
    explained = 1.0 - float(np.sum(wts * (y - fit) ** 2)) / max(float(np.sum(wts * (y - np.average(y, weights=wts)) ** 2)), 1e-12)
    uu, vv = np.meshgrid(np.linspace(-0.5, 0.5, w), np.linspace(-0.5, 0.5, h))
    field = coef[1] * uu + coef[2] * vv + coef[3] * uu * uu + coef[4] * uu * vv + coef[5] * vv * vv
    field -= np.median(field)
    if explained < _SHADING_EXPLAINS or np.ptp(field) > math.log(3.0):
        return np.ones((h, w), np.float32)
    return np.exp(field).astype(np.float32)
