"""How much a region of the working copy looks like the member: the criteria it is scored by.

Each criterion is 0 to 1 and weighed by :data:`SCORE_WEIGHTS`: the region's size, its solidity
(area over its convex hull's), the share of its boundary on a strong colour edge, how distinct its
looks are from those of a ring of ground round it, and how near the centre of view it lies. Beside
them, unweighed, its contact with the image frame (a :class:`Candidate` touching it along more than
:data:`MAX_CONTACT` of its boundary is cut off) and how much it looks like the ground at the photo's
edges (:data:`GROUND_LIKE`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .masks import fill_holes
from .workcopy import WorkingCopy

__all__ = ["Candidate", "criteria_of", "make_candidate", "on_strong_edges", "frame_contact", "SCORE_WEIGHTS",
           "MIN_SHARE", "MAX_CONTACT", "GROUND_LIKE", "HOLDER_EDGE"]

#: Weights of the candidate criteria in the score (each criterion 0 to 1).
SCORE_WEIGHTS = {"size": 1.0, "solidity": 0.5, "edge": 1.5, "distinct": 1.5, "centre": 0.5}
#: Share of the image a candidate must cover at least.
MIN_SHARE = 0.003
#: A candidate may touch the image frame along this share of its boundary (a face that comes
#: within a pixel of the frame in the working copy) and still be whole.
MAX_CONTACT = 0.02
#: A candidate that looks this much like the ground at the photo's edges (the share of its looks
#: in common with theirs) is ground seen through or beside something, never the member.
GROUND_LIKE = 0.6
#: A candidate holds those inside its outline (they are parts of it) only if at least this share of
#: its boundary lies on strong edges.
HOLDER_EDGE = 0.4


@dataclass(frozen=True, eq=False)
class Candidate:
    """A region that may be the member (in the working copy).

    Attributes
    ----------
    mask : ndarray (h, w) bool
        The region, holes kept.
    criteria : dict
        Each scoring criterion, 0 to 1 (:data:`SCORE_WEIGHTS`), and ``contact`` (share of the
        boundary on the image frame) and ``ground_like`` (share of its looks in common with the
        ground's at the photo's edges) (:func:`criteria_of`).
    score : float
        The weighted sum of the criteria.
    centre, size : (x, y), (w, h)
        Where it lies in the full photo and how large its box is [px].
    inside : int or None
        The index of the candidate whose outline holds this one (it is then part of it).
    source : str
        ``"border"`` (a cut against the border's ground), ``"level"`` (a side of one grey level),
        ``"region"`` (a one-look region grown), ``"hint"`` (grown from points on the member) or
        ``"outline"`` (a rough outline drawn by a person).
    reference : str or None
        ``"checkerboard"`` or ``"ruler"`` where the region is a scale reference lying in view
        (:mod:`tracer.inputs.photo.lookalike`): never the member.
    """

    mask: np.ndarray = field(repr=False)
    criteria: dict
    score: float
    centre: tuple[float, float]
    size: tuple[float, float]
    inside: int | None = None
    source: str = "border"
    reference: str | None = None

    @property
    def cut_off(self) -> bool:
        """Whether the image frame cuts it off (it touches the frame along more than
        :data:`MAX_CONTACT` of its boundary)."""
        return self.criteria["contact"] > MAX_CONTACT

    def describe(self) -> str:
        """Where it lies, how large it is and its score, for a message."""
        return (f"at {self.centre[0]:.0f},{self.centre[1]:.0f} px (about {self.size[0]:.0f} x {self.size[1]:.0f} px, "
                f"score {self.score:.2f})")


def criteria_of(ctx: WorkingCopy, region: np.ndarray) -> dict:
    """The scoring criteria of a region of the working copy, each 0 to 1, its frame contact and how
    much it looks like the ground at the photo's edges (the keys of :attr:`Candidate.criteria`)."""
    import cv2

    app = ctx.app
    h, w = app.shape
    area = float(region.sum())
    m8 = region.astype(np.uint8)
    filled = fill_holes(region, np.inf).astype(np.uint8)
    cnts, _ = cv2.findContours(filled, cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    c = max(cnts, key=cv2.contourArea)
    hull = float(cv2.contourArea(cv2.convexHull(c)))
    solidity = min(1.0, float(filled.sum()) / max(hull + 0.5 * cv2.arcLength(c, True), 1.0))
    k3 = np.ones((3, 3), np.uint8)
    ring = (cv2.dilate(m8, k3, iterations=7) > 0) & ~(cv2.dilate(m8, k3, iterations=2) > 0) & ~ctx.refs
    edge = on_strong_edges(app, region, ctx.refs)
    K = app.n_looks
    if ring.any():
        hi = np.bincount(app.codes[region], minlength=K) + 0.5
        ho = np.bincount(app.codes[ring], minlength=K) + 0.5
        distinct = 1.0 - float(np.minimum(hi / hi.sum(), ho / ho.sum()).sum())
    else:
        distinct = 0.0
    ys, xs = np.nonzero(region)
    dx, dy = xs.mean() / w - 0.5, ys.mean() / h - 0.5
    centre = 1.0 - min(1.0, math.hypot(dx, dy) / math.hypot(0.5, 0.5))
    size = min(1.0, max(0.0, math.log10(area / (h * w) / MIN_SHARE) / math.log10(0.3 / MIN_SHARE)))
    # How much it looks like the ground at the photo's edges (a tube's bore shows that ground).
    ground_like = _ground_like(ctx, region)
    return {"size": size, "solidity": solidity, "edge": edge, "distinct": distinct, "centre": centre,
            "contact": frame_contact(region), "ground_like": ground_like}


def make_candidate(ctx: WorkingCopy, region: np.ndarray, crit: dict, source: str) -> Candidate:
    """The region as a candidate: its criteria `crit` (:func:`criteria_of`) weighed by
    :data:`SCORE_WEIGHTS`, where it lies and how large its box is in the full photo."""
    ys, xs = np.nonzero(region)
    score = sum(SCORE_WEIGHTS[k] * crit[k] for k in SCORE_WEIGHTS)
    (cx, cy), = ctx.to_full([[xs.mean(), ys.mean()]])
    size = ((xs.max() - xs.min() + 1) * ctx.scale[0], (ys.max() - ys.min() + 1) * ctx.scale[1])
    return Candidate(mask=region, criteria=crit, score=float(score), centre=(float(cx), float(cy)), size=size,
                     source=source)


def on_strong_edges(app, region: np.ndarray, refs: np.ndarray | None, away: np.ndarray | None = None) -> float:
    """The share of the region's boundary pixels (of those outside `away`, if given) that lie on
    a strong edge: well above the edges of the texture round it (the ground's, or, for a region
    cut out of a textured member, that member's), measured 3 to 7 px out, clear of the boundary's
    own; the boundary's edge is the strongest within two pixels (a cut may sit a pixel or two off
    the blurred edge's ridge)."""
    import cv2

    m8 = region.astype(np.uint8)
    k3 = np.ones((3, 3), np.uint8)
    ring = (cv2.dilate(m8, k3, iterations=7) > 0) & ~(cv2.dilate(m8, k3, iterations=2) > 0)
    if refs is not None:
        ring &= ~refs
    boundary = (m8 - cv2.erode(m8, k3)) > 0
    if away is not None:
        boundary &= ~away
    if not boundary.any():
        return 0.0
    e_out = float(np.median(app.edge[ring])) if ring.any() else 0.0
    strong = 2.5 * max(e_out, 0.5)
    ridge = cv2.dilate(app.edge, np.ones((5, 5), np.uint8))
    return float(np.mean(ridge[boundary] > strong))


def frame_contact(region: np.ndarray) -> float:
    """Share of the region's boundary that lies along the image frame (its outer two rings of
    pixels: the outermost is held to the ground in the cuts)."""
    import cv2

    near = int(region[:2].sum() + region[-2:].sum() + region[2:-2, :2].sum() + region[2:-2, -2:].sum())
    if near == 0:
        return 0.0
    cnts, _ = cv2.findContours(region.astype(np.uint8), cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    perimeter = sum(cv2.arcLength(c, True) for c in cnts)
    return 0.5 * near / max(perimeter, 1.0)


def _ground_like(ctx: WorkingCopy, region: np.ndarray) -> float:
    """The share of the region's looks in common with those of the ground at the photo's edges."""
    if ctx.ground_looks is None or not region.any():
        return 0.0
    hr = np.bincount(ctx.app.codes[region], minlength=ctx.app.n_looks) / float(region.sum())
    return float(np.minimum(hr, ctx.ground_looks).sum())
