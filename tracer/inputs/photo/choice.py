"""Which candidate is the member, unattended, and which regions lie by it.

The best whole candidate (:mod:`tracer.inputs.photo.candidates`) not inside another is taken. A
candidate that reaches the image border is cut off and never taken, nor is a scale reference lying
in view (:mod:`tracer.inputs.photo.lookalike`). Where the best is weak (:data:`WEAK_SCORE`), or a
second scores close to it (:data:`CLOSE_SCORE`), nothing is guessed: :class:`MemberUnclear` lists
where the candidates are so that a person can pick one with ``--seed``. The credible regions by
the chosen face (:func:`neighbours`) are weighed by the trace check
(:mod:`tracer.inputs.photo.check`).
"""

from __future__ import annotations

import numpy as np

from ...errors import MeasurementError
from .hints import Hints
from .lookalike import reference_kind
from .masks import fill_holes, iou
from .regions import Appearance
from .scoring import GROUND_LIKE, HOLDER_EDGE, Candidate, on_strong_edges
from .workcopy import WorkingCopy

__all__ = ["MemberUnclear", "choose", "neighbours", "reference_of", "WEAK_SCORE", "CLOSE_SCORE",
           "NEIGHBOUR_EDGE", "NEIGHBOUR_DISTINCT", "NEIGHBOUR_GROUND_LIKE", "NEIGHBOUR_REACH", "NEIGHBOUR_OWN_EDGE"]

#: A best candidate scoring below this is too weak to be taken unattended.
WEAK_SCORE = 2.6
#: A second candidate scoring within this of the best makes the choice too close to take unattended.
CLOSE_SCORE = 0.35
#: A candidate region counts as a credible neighbour of the chosen face with this much edge
#: support, this distinct from what surrounds it, at most this ground-like, within this many
#: working pixels of the face (see :func:`neighbours`).
NEIGHBOUR_EDGE = 0.6
NEIGHBOUR_DISTINCT = 0.6
NEIGHBOUR_GROUND_LIKE = 0.6
NEIGHBOUR_REACH = 5
#: ... and their boundary away from the face on strong edges of its own along this share at least
#: (a ragged region grown from the face's edge into the ground: 0.15 on a two-ruler render; a
#: member's part past a patch of mill scale: 0.51).
NEIGHBOUR_OWN_EDGE = 0.35


class MemberUnclear(MeasurementError):
    """No candidate stands out clearly, or two score close (exit status 1); `candidates` holds
    the best few as (x, y, width, height, score), centre and size in full-size pixels, for a
    person to pick one."""

    def __init__(self, message: str, candidates: tuple) -> None:
        super().__init__(message)
        self.candidates = candidates


def choose(ctx: WorkingCopy, cands: list[Candidate], hints: Hints) -> tuple[Candidate, Candidate | None]:
    """The best whole candidate not inside another, and the best other one; refuse where it is
    weak or the other close.

    Raises
    ------
    MemberUnclear
        The best is weak, or a second scores close to it (the message lists the candidates).
    MeasurementError
        Nothing but scale references stands out; the member is cut off by the image border.
    """
    whole = [c for c in cands if not c.cut_off and c.inside is None and c.criteria["ground_like"] < GROUND_LIKE]
    if not whole:
        if any(c.cut_off for c in cands):
            raise MeasurementError("the member is cut off by the image border; photograph the whole cut face with "
                                   "some ground around it")
        raise MeasurementError("nothing segmented: no region stands out from its surroundings apart from the "
                               "references; give --seed X,Y on the member, or photograph it against a contrasting "
                               "ground")
    whole.sort(key=lambda c: -c.score)
    kinds: dict[int, str | None] = {}

    def is_reference(c: Candidate) -> bool:
        if id(c) not in kinds:
            kinds[id(c)] = reference_of(ctx, c.mask)
        return kinds[id(c)] is not None

    # Scale references lying in view are never the member: looked for from the best down.
    while whole and is_reference(whole[0]):
        whole.pop(0)
    if not whole:
        raise MeasurementError("nothing segmented: only a checkerboard or a ruler stands out from its surroundings; "
                               "give --seed X,Y on the member")
    best = whole[0]
    # A region running off the photo, outlined by strong edges, that scores better, or of which
    # the best is a part: the member is cut off by the border.
    for c in cands:
        if (c.cut_off and c.criteria["edge"] >= HOLDER_EDGE and c.criteria["ground_like"] < GROUND_LIKE
                and (c.score > best.score or _part_of(ctx.app, best.mask, c.mask)) and not is_reference(c)):
            raise MeasurementError(f"the member is cut off by the image border (a region {c.describe()} runs off "
                                   "the photo); photograph the whole cut face with some ground around it, or give "
                                   "--seed X,Y on the member if it is another region")
    # The runner-up is another region, not another version of the same one.
    # Nor a region wrapped round it (the grapple, the pallet, the ground's darker patches).
    solid = fill_holes(best.mask, np.inf)
    others = [c for c in whole[1:] if iou(fill_holes(c.mask, np.inf), solid) < 0.5
              and (_hull(c.mask) & best.mask).sum() < 0.5 * best.mask.sum()]
    runner = next((c for c in others if not is_reference(c)), None)
    weak = best.score < WEAK_SCORE
    close = runner is not None and runner.score > best.score - CLOSE_SCORE
    if weak or close:
        listed = "; ".join(c.describe() for c in whole[:4])
        why = "no candidate stands out clearly" if weak else "two candidates score close"
        raise MemberUnclear(f"the member could not be told from its surroundings unattended ({why}): candidates "
                            f"{listed}; give --seed X,Y on the member (and --outside X,Y on the ground, or "
                            "--box X0,Y0,X1,Y1 round it)",
                            tuple((*c.centre, *c.size, c.score) for c in whole[:4]))
    return best, runner


def neighbours(face: np.ndarray, cands, app=None, refs: np.ndarray | None = None) -> list[Candidate]:
    """The credible other regions by the face (working copy): whole candidates on strong edges,
    distinct from what surrounds them and not ground-like (``NEIGHBOUR_*``), overlapping the face or within ``NEIGHBOUR_REACH``
    pixels of it, neither mostly in its openings (a bore's inner wall) nor holding the whole
    face (versions of it, weighed when it was chosen). Given the photo's `app` (an
    :class:`~tracer.inputs.photo.regions.Appearance`), their boundary away from the face must be on
    strong edges of its own too, not only where it runs along the face's (a ragged region grown
    from the face's edge into the ground)."""
    import cv2

    n = float(face.sum())
    if n == 0:
        return []
    k = 2 * NEIGHBOUR_REACH + 1
    reach = cv2.dilate(face.astype(np.uint8), np.ones((k, k), np.uint8)).astype(bool)
    solid = fill_holes(face, np.inf)
    out = []
    for c in cands:
        if (c.criteria["edge"] < NEIGHBOUR_EDGE or c.criteria["distinct"] < NEIGHBOUR_DISTINCT
                or c.criteria["ground_like"] >= NEIGHBOUR_GROUND_LIKE or c.cut_off or not (c.mask & reach).any()):
            continue
        if (c.mask & solid).sum() >= 0.5 * c.mask.sum() or (fill_holes(c.mask, np.inf) & face).sum() >= 0.9 * n:
            continue
        if app is not None and on_strong_edges(app, c.mask, refs, away=reach) < NEIGHBOUR_OWN_EDGE:
            continue
        out.append(c)
    return out


def reference_of(ctx: WorkingCopy, region: np.ndarray) -> str | None:
    """What scale reference the region is, if any, tested on the full photo's grey levels."""
    import cv2

    ys, xs = np.nonzero(region)
    r0, r1, c0, c1 = ys.min(), ys.max() + 1, xs.min(), xs.max() + 1
    (x0, y0), (x1, y1) = ctx.to_full([[c0 - 0.5, r0 - 0.5], [c1 - 0.5, r1 - 0.5]])
    H, W = ctx.shape
    X0, Y0, X1, Y1 = max(0, int(x0)), max(0, int(y0)), min(W, int(np.ceil(x1))), min(H, int(np.ceil(y1)))
    if X1 - X0 < 8 or Y1 - Y0 < 8:
        return None
    gray = ctx.gray[Y0:Y1, X0:X1]
    mask = cv2.resize(fill_holes(region[r0:r1, c0:c1], np.inf).astype(np.uint8), (X1 - X0, Y1 - Y0),
                      interpolation=cv2.INTER_NEAREST).astype(bool)
    return reference_kind(gray, mask)


def _part_of(app: Appearance, a: np.ndarray, b: np.ndarray) -> bool:
    """Region `a` is a piece of `b`: it lies mostly within `b` grown by two pixels and looks
    alike (half or more of their palettes' shares in common); a sliver along a member's edge."""
    import cv2

    grown = cv2.dilate(b.astype(np.uint8), np.ones((5, 5), np.uint8)).astype(bool)
    if float((a & grown).sum()) < 0.5 * float(a.sum()):
        return False
    K = app.n_looks
    ha = np.bincount(app.codes[a], minlength=K) / max(int(a.sum()), 1)
    hb = np.bincount(app.codes[b], minlength=K) / max(int(b.sum()), 1)
    return float(np.minimum(ha, hb).sum()) >= 0.5


def _hull(region: np.ndarray) -> np.ndarray:
    """The region's convex hull, filled."""
    import cv2

    pts = cv2.findNonZero(region.astype(np.uint8))
    out = np.zeros(region.shape, np.uint8)
    cv2.fillConvexPoly(out, cv2.convexHull(pts), 1)
    return out.astype(bool)
