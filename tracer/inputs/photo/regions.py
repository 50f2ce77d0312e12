"""Region models of a photo: colour in CIELAB and local texture, and a minimum graph cut over them.

A member and its ground differ in colour, in brightness, in texture, or in all three; one grey
level separates a dark member from a light ground and little else. Each pixel of a reduced copy
of the photo is described by its CIELAB colour [1]_ (from linear light, so that shading divides
out of hue) and the local spread of its lightness (growth rings, saw marks, gravel and grass are
rough; paint, steel and sky smooth), and quantised into a palette of a few dozen such looks by
k-means. A region model is the histogram of the palette over the region's pixels, so that a
member of several looks (heartwood, sapwood and bark; rust, mill scale and bright steel) is one
model. Member and ground are separated by the minimum cut of a graph whose terminal weights are
the two models' costs of each pixel and whose neighbour weights fall with the colour difference
across them [2]_, [3]_; the models are re-estimated from the cut and cut again, as in [3]_.
PyMaxflow's implementation of [4]_ finds the cut.

Near a boundary already found, local models follow a member or a ground whose colour changes
along it: a Gaussian in CIELAB about each one's mean colour near every pixel (:func:`local_costs`;
the means by normalised convolution, :func:`local_mean`). :func:`nearer_model` tells which of two
regions' models a pixel's features are nearer to.

Why this and not the alternatives (measured on the real photos and renders of the tests): OpenCV's
GrabCut took 0.3-1.8 s on a 0.15 MP copy, with colour models only; a palette of colour and
texture with PyMaxflow takes 5-15 ms a cut on a 0.06 MP copy and let texture enter the model.

References
----------
.. [1] CIE 15:2004, *Colorimetry*, 3rd ed., sec. 8.2.1 (CIE 1976 L*a*b*).
.. [2] Y. Boykov and M.-P. Jolly, "Interactive graph cuts for optimal boundary and region
       segmentation of objects in N-D images," in *Proc. ICCV*, 2001, pp. 105-112.
       doi: 10.1109/ICCV.2001.937505.
.. [3] C. Rother, V. Kolmogorov and A. Blake, "GrabCut: interactive foreground extraction using
       iterated graph cuts," *ACM Trans. Graph.*, vol. 23, no. 3, pp. 309-314, 2004.
       doi: 10.1145/1015706.1015720.
.. [4] Y. Boykov and V. Kolmogorov, "An experimental comparison of min-cut/max-flow algorithms
       for energy minimization in vision," *IEEE Trans. Pattern Anal. Mach. Intell.*, vol. 26,
       no. 9, pp. 1124-1137, 2004. doi: 10.1109/TPAMI.2004.60.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Appearance", "appearance", "region_costs", "min_cut", "grow_region", "first_guess", "PALETTE_SIZE",
           "CHROMA_WEIGHT", "pattern_features", "local_costs", "nearer_model"]

#: Looks in the palette (k-means clusters of colour and texture).
PALETTE_SIZE = 24
# Pixels sampled to fit the palette.
_PALETTE_SAMPLE = 12_000
# Weight of a* and b* against L* in the colour palette's distance (a hue difference tells
# materials apart more surely than a lightness difference, which shading also makes).
CHROMA_WEIGHT = 1.5
_TEXTURE_WEIGHT = 1.0
# Scales of the pattern's chromaticity (a share, 0 to 1) and log-luminance spread.
_CHROMATICITY = 100.0
_LOG_TEXTURE = 50.0
# The wider texture window [px of the working copy] and the weight of the busyness it measures.
_BUSY_SIGMA = 3.0
_BUSY_WEIGHT = 0.0
# Pseudo-count of each palette entry in a region model (an unseen look is unlikely, not impossible).
_PRIOR_COUNT = 0.5
# Weight of the neighbour terms against the models' costs [nats].
SMOOTHNESS = 2.0
# A hard constraint's terminal weight.
_HARD = 1e9
# Floor on a local model's feature variance.
_MIN_VAR = 1.0


@dataclass(frozen=True)
class Appearance:
    """The looks of a (reduced) photo that region models are made of.

    Attributes
    ----------
    lab : ndarray (h, w, 3) float32
        CIELAB colour of each pixel (L* 0 to 100).
    texture : ndarray (h, w) float32 or None
        Local spread (standard deviation) of L* around each pixel.
    codes : ndarray (h, w) intp or None
        The palette entry each pixel looks most like.
    palette : ndarray (K, 4) float32 or None
        The entries' centres: L*, weighted a*, weighted b*, texture.
    right, down : ndarray (h, w) float32
        Neighbour weights to the pixel on the right and below, exp(-β |ΔLab|²) with β the
        inverse of twice the mean |ΔLab|² [3]; 0 past the last column or row.
    edge : ndarray (h, w) float32 or None
        Colour gradient magnitude (Sobel of Lab smoothed over a pixel, per pixel); with the
        looks only.
    """

    lab: np.ndarray
    texture: np.ndarray | None
    codes: np.ndarray | None
    palette: np.ndarray | None
    right: np.ndarray
    down: np.ndarray
    edge: np.ndarray | None

    @property
    def shape(self) -> tuple[int, int]:
        return self.lab.shape[:2]

    @property
    def n_looks(self) -> int:
        return len(self.palette)


def appearance(light_bgr: np.ndarray, *, texture_px: float = 1.2, usable: np.ndarray | None = None, seed: int = 0,
               looks: bool = True) -> Appearance:
    """The appearance of `light_bgr` (h, w, 3), linear light 0..1 in BGR order.

    Parameters
    ----------
    light_bgr : ndarray
        The (reduced) photo in linear light.
    texture_px : float
        Scale of the texture window [px of this copy] (a Gaussian σ).
    usable : ndarray (h, w) bool, optional
        Pixels the palette is fitted on (scale references left out).
    seed : int
        Seed of the palette's k-means (fixed: the same photo always gives the same palette).
    looks : bool
        Fit and apply the palette; without it the codes and palette are None and texture and
        edges are not computed (enough for cuts between local models, :func:`min_cut`).
    """
    import cv2

    light = np.ascontiguousarray(light_bgr, dtype=np.float32)
    lab = cv2.cvtColor(light, cv2.COLOR_LBGR2Lab)
    L = lab[..., 0]
    texture = codes = palette = edge = None
    if looks:
        s = max(0.8, float(texture_px))
        mean = cv2.GaussianBlur(L, (0, 0), s)
        texture = np.sqrt(np.maximum(cv2.GaussianBlur(L * L, (0, 0), s) - mean * mean, 0.0))
        feats = np.empty(lab.shape[:2] + (4,), np.float32)
        feats[..., 0] = L
        feats[..., 1:3] = lab[..., 1:] * CHROMA_WEIGHT
        feats[..., 3] = texture * _TEXTURE_WEIGHT
        flat = feats.reshape(-1, 4)
        palette = _fit_palette(flat if usable is None else flat[usable.ravel()], seed, PALETTE_SIZE)
        codes = _nearest(flat, palette).reshape(lab.shape[:2])
        smooth = cv2.GaussianBlur(lab, (0, 0), 1.0)                # noise and JPEG blocks out
        gx = cv2.Sobel(smooth, cv2.CV_32F, 1, 0)
        gy = cv2.Sobel(smooth, cv2.CV_32F, 0, 1)
        edge = np.sqrt(np.square(gx).sum(axis=2) + np.square(gy).sum(axis=2)) / 8.0
    dr = np.zeros(L.shape, np.float32)
    dd = np.zeros(L.shape, np.float32)
    dr[:, :-1] = np.square(lab[:, 1:] - lab[:, :-1]).sum(axis=2)
    dd[:-1, :] = np.square(lab[1:] - lab[:-1]).sum(axis=2)
    n = dr[:, :-1].size + dd[:-1, :].size
    beta = 1.0 / (2.0 * (float(dr.sum()) + float(dd.sum())) / max(n, 1) + 1e-9)
    right = np.exp(-beta * dr).astype(np.float32)
    down = np.exp(-beta * dd).astype(np.float32)
    right[:, -1] = 0.0
    down[-1, :] = 0.0
    return Appearance(lab=lab, texture=texture, codes=codes, palette=palette, right=right, down=down, edge=edge)


def region_costs(app: Appearance, member: np.ndarray, ground: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each pixel's cost [nats] of being member and of being ground, -log of its look's share
    in the member's and the ground's model, the models made from the weights `member` and
    `ground` (h, w) (bool or float)."""
    K = app.n_looks
    codes = app.codes.ravel()
    pm = np.bincount(codes, weights=np.asarray(member, np.float64).ravel(), minlength=K) + _PRIOR_COUNT
    pg = np.bincount(codes, weights=np.asarray(ground, np.float64).ravel(), minlength=K) + _PRIOR_COUNT
    cm = -np.log(pm / pm.sum()).astype(np.float32)
    cg = -np.log(pg / pg.sum()).astype(np.float32)
    return cm[app.codes], cg[app.codes]


def min_cut(app: Appearance, cost_member: np.ndarray, cost_ground: np.ndarray, *,
            member: np.ndarray | None = None, ground: np.ndarray | None = None,
            smoothness: float = SMOOTHNESS) -> np.ndarray:
    """The labelling of least total cost [4]: True where member.

    `member` and `ground` (h, w bool) are hard constraints (a hint, a scale reference).
    """
    import maxflow

    h, w = app.shape
    g = maxflow.Graph[float](h * w, 2 * h * w)
    ids = g.add_grid_nodes((h, w))
    g.add_grid_edges(ids, weights=smoothness * app.right, structure=_RIGHT, symmetric=True)
    g.add_grid_edges(ids, weights=smoothness * app.down, structure=_DOWN, symmetric=True)
    # The source side is the member: a pixel cut off from the source pays its ground cost.
    src = cost_ground.astype(np.float64)
    snk = cost_member.astype(np.float64)
    if member is not None:
        src = np.where(member, _HARD, src)
        snk = np.where(member, 0.0, snk)
    if ground is not None:
        snk = np.where(ground, _HARD, snk)
        src = np.where(ground, 0.0, src)
    g.add_grid_tedges(ids, src, snk)
    g.maxflow()
    return ~g.get_grid_segments(ids)


def grow_region(app: Appearance, member: np.ndarray, ground: np.ndarray, *, hard_member: np.ndarray | None = None,
                hard_ground: np.ndarray | None = None, rounds: int = 2, smoothness: float = SMOOTHNESS,
                excess: float | None = None) -> np.ndarray:
    """Models from the first guesses `member` and `ground`, a cut, new models from the cut, and
    so on for `rounds` cuts [3]; the last cut (h, w bool).

    With `excess`, each new member model keeps only the looks commoner in the cut than in the
    rest (:func:`first_guess`), so that a patch of ground taken in once is not learnt as member.
    """
    cut = None
    for _ in range(rounds):
        cm, cg = region_costs(app, member, ground)
        cut = min_cut(app, cm, cg, member=hard_member, ground=hard_ground, smoothness=smoothness)
        if not cut.any() or cut.all():
            break
        member, ground = cut, ~cut
        if excess is not None:
            member = first_guess(app, cut, ~cut, excess=excess)
    return cut


def first_guess(app: Appearance, inside: np.ndarray, ground: np.ndarray, *, excess: float = 1.0) -> np.ndarray:
    """Weights (h, w) of a first member model: the pixels `inside` whose looks are not explained
    by `ground`'s, a look counting where its share inside is over `excess` times its share in
    the ground (weight 1 - excess x ground share / inside share, clipped to 0..1).

    Everything inside, ground and member alike, would make a member model that fits the ground
    as well as the ground's own does, and the first cut would then be drawn at random through
    the ground (GrabCut [3] avoids it with a box whose outside is held to the ground; a member in
    view has no such box).
    """
    K = app.n_looks
    p_in = np.bincount(app.codes[inside], minlength=K) / max(int(inside.sum()), 1)
    p_ground = np.bincount(app.codes[ground], minlength=K) / max(int(ground.sum()), 1)
    share = np.clip(1.0 - excess * p_ground / np.maximum(p_in, 1e-12), 0.0, 1.0)
    weights = np.where(inside, share[app.codes], 0.0)
    return weights if weights.sum() >= 1.0 else inside.astype(float)


_RIGHT = np.array([[0, 0, 0], [0, 0, 1], [0, 0, 0]])
_DOWN = np.array([[0, 0, 0], [0, 0, 0], [0, 1, 0]])


def pattern_features(light: np.ndarray, s: float) -> np.ndarray:
    """What shade leaves alone, per pixel: the light's chromaticity (each channel's share of the
    sum, two of them) and the spread of log luminance over a σ = `s` and a σ = 3 px window,
    scaled to units of about the colour palette's."""
    import cv2

    total = light.sum(axis=2) + 0.02
    # The floor keeps the sensor noise of dark pixels from reading as texture in the logarithm.
    y = np.log(light @ np.array([0.0722, 0.7152, 0.2126], np.float32) + 0.02)
    out = np.empty(light.shape[:2] + (4,), np.float32)
    out[..., 0] = _CHROMATICITY * light[..., 0] / total
    out[..., 1] = _CHROMATICITY * light[..., 2] / total
    for i, sigma in ((2, s), (3, _BUSY_SIGMA)):
        m = cv2.GaussianBlur(y, (0, 0), sigma)
        out[..., i] = _LOG_TEXTURE * np.sqrt(np.maximum(cv2.GaussianBlur(y * y, (0, 0), sigma) - m * m, 0.0))
    return out


def local_mean(values: np.ndarray, where: np.ndarray, reach: float) -> tuple[np.ndarray, np.ndarray]:
    """The mean of `values` (h, w, c) over the pixels of `where` near each pixel: normalised
    convolution by a Gaussian of σ = `reach` px [1]_, and its weight (the blurred `where`).

    A wide Gaussian's result is smooth, so it is computed on a copy reduced by about a quarter
    of σ (area averaging) and enlarged again (bilinear): the same to well within the colour
    models' spread, at a small part of the cost.

    References
    ----------
    .. [1] H. Knutsson and C.-F. Westin, "Normalized and differential convolution," *Proc. IEEE
       Conf. Computer Vision and Pattern Recognition*, pp. 515-523, 1993.
    """
    import cv2

    h, w = where.shape
    f = max(1, int(reach // 4))
    wt = where.astype(np.float32)
    vals = values.astype(np.float32) * wt[..., None]
    if f > 1:
        size = (max(1, round(w / f)), max(1, round(h / f)))
        wt = cv2.resize(wt, size, interpolation=cv2.INTER_AREA)
        vals = cv2.resize(vals, size, interpolation=cv2.INTER_AREA)
    sigma = reach * wt.shape[1] / w
    wb = cv2.GaussianBlur(wt, (0, 0), sigma)
    vb = cv2.GaussianBlur(vals, (0, 0), sigma)
    if vb.ndim == 2:
        vb = vb[..., None]
    if f > 1:
        wb = cv2.resize(wb, (w, h), interpolation=cv2.INTER_LINEAR)
        vb = cv2.resize(vb, (w, h), interpolation=cv2.INTER_LINEAR)
        if vb.ndim == 2:
            vb = vb[..., None]
    return vb / np.maximum(wb, 1e-6)[..., None], wb


def local_costs(lab: np.ndarray, inner: np.ndarray, ring: np.ndarray, reach: float) -> tuple[np.ndarray, np.ndarray]:
    """Each pixel's cost of being member and ground under local colour models: Gaussians in
    CIELAB about the member's and the ground's mean colour near it (normalised convolution of
    `inner` and `ring` over `reach` px, so that shading, heartwood and sapwood, or a ground
    that changes along the member are followed), with one pooled spread."""

    def near(sel: np.ndarray) -> np.ndarray:
        m, w = local_mean(lab, sel, reach)
        whole = np.median(lab[sel], axis=0) if sel.any() else np.zeros(3, np.float32)
        return np.where((w > 1e-3)[..., None], m, whole).astype(np.float32)

    mu_in = near(inner)
    mu_out = near(ring)
    d_in = np.square(lab - mu_in).sum(axis=2)
    d_out = np.square(lab - mu_out).sum(axis=2)
    var = 0.5 * (float(np.median(d_in[inner])) if inner.any() else 1.0) + \
        0.5 * (float(np.median(d_out[ring])) if ring.any() else 1.0)
    var = max(var, 1.0)
    return (d_in / (2 * var)).astype(np.float32), (d_out / (2 * var)).astype(np.float32)


def nearer_model(feats: np.ndarray, where: np.ndarray, a: np.ndarray, b: np.ndarray, *,
                 apart: float = 3.0) -> np.ndarray:
    """Pixels of `where` nearer (Gaussian log-likelihood, independent features) to region `a`'s
    features than to region `b`'s, where the two differ clearly (means `apart` pooled spreads
    apart)."""
    fa, fb = feats[a], feats[b]
    ma, mb = fa.mean(axis=0), fb.mean(axis=0)
    va, vb = np.maximum(fa.var(axis=0), _MIN_VAR), np.maximum(fb.var(axis=0), _MIN_VAR)
    out = np.zeros(where.shape, bool)
    if float(np.sqrt(np.sum((ma - mb) ** 2 / (0.5 * (va + vb))))) < apart:
        return out
    x = feats[where]
    da = 0.5 * (((x - ma) ** 2) / va + np.log(va)).sum(axis=1)
    db = 0.5 * (((x - mb) ** 2) / vb + np.log(vb)).sum(axis=1)
    out[where] = da < db
    return out


def _fit_palette(feats: np.ndarray, seed: int, size: int) -> np.ndarray:
    """k-means centres of a fixed random sample of the features (deterministic)."""
    import cv2

    rng = np.random.default_rng(seed)
    n = len(feats)
    sample = feats[rng.choice(n, size=min(n, _PALETTE_SAMPLE), replace=False)] if n > _PALETTE_SAMPLE else feats
    # No more centres than distinct points (a flat image has few): counted on a part of the
    # sample first, the whole only where that part has too few.
    k = size
    if len(np.unique(sample[:4 * size].round(1), axis=0)) < size:
        k = min(size, max(2, len(np.unique(sample.round(1), axis=0))))
    cv2.setRNGSeed(seed)
    criteria = (cv2.TERM_CRITERIA_EPS + cv2.TERM_CRITERIA_MAX_ITER, 20, 0.2)
    _, _, centres = cv2.kmeans(np.ascontiguousarray(sample, np.float32), k, None, criteria, 1,
                               cv2.KMEANS_PP_CENTERS)
    return centres.astype(np.float32)


def _nearest(feats: np.ndarray, centres: np.ndarray) -> np.ndarray:
    """Index of the nearest centre of each feature row (squared Euclidean distance)."""
    d = (feats @ (-2.0 * centres.T)) + np.square(centres).sum(axis=1)[None, :]
    return np.argmin(d, axis=1)
