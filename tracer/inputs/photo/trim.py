"""The ground a region took in, taken out again: openings made holes, ground in shade trimmed.

A cut that took in a tube's or a box's bore learnt the bore's look as the member's, so the bore is
told by what shade leaves alone (:func:`~tracer.inputs.photo.regions.pattern_features`): deep
inside the region, a part whose pattern and hue are the ground's round it and not its own outer
band's, and no lighter than that ground, is an opening (:func:`open_up`). The ground lit or in
shade that a region took in beside it (a cast shadow, a lighter patch of sand) keeps the ground's
chromaticity, which does not change with the light's strength (:func:`ground_colour`), and is
trimmed where what is left is still outlined by strong edges (:func:`shade_trim`).
"""

from __future__ import annotations

import numpy as np

from .masks import border_strip, fill_holes
from .regions import nearer_model
from .scoring import MIN_SHARE, criteria_of
from .workcopy import WorkingCopy

__all__ = ["open_up", "shade_trim", "ground_colour"]

# How far apart (pooled spreads) the ground's and the band's models must be to tell an opening:
# the band is a mix (a thin wall's band takes in some of the bore), so its spread is wide.
_OPENING_APART = 1.0
# An opening is at least this share of the member's outline's area.
_OPENING_SHARE = 0.03
# Shade: the ground's chromaticity (in the pattern's units, 100 x the share) is told from grey
# when this many of its spreads away from it; a pixel is the ground's within this many spreads
# (spread floored).
_SHADE_DISTINCT = 6.0
_SHADE_SPREADS = 3.0
_CHROMA_FLOOR = 0.4
_SHADE_PALER = 0.3
_SHADE_COS = 0.5
# At least this share of the region is shade for a trim; what is left has this much edge support.
_SHADE_LEAST = 0.05
_SHADE_EDGE = 0.6
_SHADE_EDGE_LOSS = 0.2
# ... and the trim is not made where the region goes on round what is left along this share of it.
_SHADE_ROUND = 0.75
# ... nor where what is left holds less than this share of the region not of the ground's colour.
_SHADE_KEEP = 0.5
_CHROMATICITY_GREY = 100.0 / 3.0


def open_up(ctx: WorkingCopy, region: np.ndarray, *, keep: np.ndarray | None = None) -> np.ndarray:
    """The region with its openings made holes: the parts deep inside it (away from its outline)
    whose pattern, what shade leaves alone, is the ground's round it and not its own outer
    band's: a tube's or box's bore shows the ground, darkened, and its look, learnt as member by
    a cut that took the bore in, is no proof against it. Heartwood, a paint mark or rust are
    the member's own and look like its band more than like the ground."""
    import cv2

    r8 = region.astype(np.uint8)
    k3 = np.ones((3, 3), np.uint8)
    solid = fill_holes(region, np.inf).astype(np.uint8)
    # The band clear of the outline's blend of face and ground; the ring likewise outside.
    band = (cv2.erode(r8, k3, iterations=2) > 0) & ~(cv2.erode(r8, k3, iterations=6) > 0)
    ring = (cv2.dilate(solid, k3, iterations=10) > 0) & ~(cv2.dilate(solid, k3, iterations=3) > 0) & ~ctx.refs
    deep = region & (cv2.erode(solid, k3, iterations=6) > 0)
    if band.sum() < 20 or ring.sum() < 20 or deep.sum() < 20:
        return region
    lab = ctx.app.lab
    # Like the ground round it in pattern and in hue, and no lighter than it (a bore is in shade;
    # a light face with the ground's grain is no opening).
    ground_like = (nearer_model(ctx.features, deep, ring, band, apart=_OPENING_APART)
                   & nearer_model(lab[..., 1:], deep, ring, band, apart=_OPENING_APART))
    L_ring = lab[..., 0][ring]
    ground_like &= lab[..., 0] <= float(L_ring.mean() + 0.5 * L_ring.std())
    if keep is not None:
        ground_like &= ~keep
    n, labels, stats, _ = cv2.connectedComponentsWithStats(ground_like.astype(np.uint8), connectivity=4)
    big = np.zeros(n, bool)
    big[1:] = stats[1:, cv2.CC_STAT_AREA] >= _OPENING_SHARE * float(solid.sum())
    if not big.any():
        return region
    # The opening reaches out to the band's inner edge (its rim pixels were outside `deep`).
    opening = cv2.dilate(big[labels].astype(np.uint8), k3, iterations=6).astype(bool) & region & ~band
    return region & ~opening


def shade_trim(ctx: WorkingCopy, region: np.ndarray, *, keep: np.ndarray | None = None) -> np.ndarray:
    """The region less the ground, lit or in shade, that it took in (a cast shadow beside the
    member, a tube's or box's bore, a lighter patch of sand): its parts of the ground's own
    chromaticity (see :func:`ground_colour`).

    Only done where what is taken away does not lie all round what is left, and what is left is
    outlined by strong edges, nearly as much as the region was (a member of the ground's own
    colour stays whole), and never where a point a person put on the member (`keep`) is of the
    ground's colour (timber on timber decking)."""
    import cv2

    h, w = region.shape
    like = ground_colour(ctx, region)
    if like is None:
        return region
    k3 = np.ones((3, 3), np.uint8)
    # The outline's own pixels blend member and ground (a grey member's, paler ground): kept.
    rim = region & ~(cv2.erode(region.astype(np.uint8), k3) > 0)
    if keep is not None and (keep & like & ~rim).any():
        return region                                   # a person put a point on that colour: it is member
    member = region & ~(like & ~rim)
    if keep is not None:
        member |= keep & region
    if member.sum() > (1 - _SHADE_LEAST) * region.sum():
        return region                                   # little or no ground taken in
    opened = cv2.morphologyEx(member.astype(np.uint8), cv2.MORPH_OPEN, k3).astype(bool)
    n, labels, stats, _ = cv2.connectedComponentsWithStats(opened.astype(np.uint8), connectivity=4)
    if n < 2:
        return region
    if keep is not None and (keep & opened).any():
        out = np.isin(labels, np.unique(labels[keep & opened]))     # the piece the seeds are on
    else:
        out = labels == 1 + int(np.argmax(stats[1:, cv2.CC_STAT_AREA]))
    # What is left is one piece holding most of what is not of the ground's colour (a thin
    # member broken up by the trim is not trimmed).
    if out.sum() < _SHADE_KEEP * (region & ~like).sum():
        return region
    # What was taken away lies beside what is left (a shadow) or inside it (a bore), not all
    # round it: a ring of the ground's colour round the rest is the member's own (sapwood
    # round heartwood).
    solid = fill_holes(out, np.inf).astype(np.uint8)
    ring = (cv2.dilate(solid, k3, iterations=3) > 0) & ~solid.astype(bool)
    if (ring & region).sum() > _SHADE_ROUND * ring.sum():
        return region
    edge_out = criteria_of(ctx, out)["edge"]
    if out.sum() < MIN_SHARE * h * w or edge_out < max(_SHADE_EDGE, criteria_of(ctx, region)["edge"] - _SHADE_EDGE_LOSS):
        return region
    return out


def ground_colour(ctx: WorkingCopy, region: np.ndarray) -> np.ndarray | None:
    """Pixels of the ground's chromaticity (within a few of its spreads, from the border strip
    outside `region`), or of one a little paler (shade lit by the sky is paler and bluer: moved
    at most ``_SHADE_PALER`` of the way to grey, within 60 degrees of that way); None against a
    grey ground (chromaticity near grey), where shade cannot be told so.

    Chromaticity (each channel's share of the light) does not change with the light's strength,
    so a shaded patch of sand, grass or decking keeps the ground's."""
    h, w = region.shape
    strip = border_strip(h, w) & ~ctx.refs & ~region
    if ctx.features is None or strip.sum() < 50 or not region.any():
        return None
    chroma = ctx.features[..., :2]
    g = chroma[strip]
    med = np.median(g, axis=0)
    spread = np.maximum(1.4826 * np.median(np.abs(g - med), axis=0), _CHROMA_FLOOR)
    grey = np.full(2, _CHROMATICITY_GREY, np.float32)
    if float(np.sqrt(np.sum(((med - grey) / spread) ** 2))) < _SHADE_DISTINCT:
        return None
    v = grey - med
    d = chroma - med
    size = np.linalg.norm(d, axis=2)
    towards = (d @ v) >= _SHADE_COS * size * float(np.linalg.norm(v))
    return ((np.abs(d) <= _SHADE_SPREADS * spread).all(axis=2)
            | (towards & (size <= _SHADE_PALER * float(np.linalg.norm(v)))))
