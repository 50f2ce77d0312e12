"""How far a trace can be trusted: the trace check behind ``source.trace`` in the result JSON.

A wrong trace with a tight interval is the worst thing the photo path can print, so every trace
is checked against what makes one suspect, each measured as a number with a stated threshold
(:data:`THRESHOLDS`, set on the project's renders and on real photos with reference outlines):

- edge support: the share of the boundary whose normal profile shows a clean step from the
  member to the ground (:mod:`tracer.inputs.photo.contour`); a boundary through texture, or along a
  gentle shading, has little;
- a close second candidate (unattended only): another region scored nearly as well;
- strong edges inside the face: colour edges inside it as strong as its own outline (a side
  face traced with the end, two members taken for one);
- holes that look like texture: a hole whose own boundary has little edge support;
- a face that is a small part of a larger similar region: its looks hardly differ from those of
  the ground round it, or what surrounds it does not look like the ground at the photo's edges
  (the heartwood of a log, a mark on a face);
- an opening filled: a large region deep inside the face looks like the ground round it and not
  like the face's own outer band (a tube's bore);
- the member going on beyond the outline: along a stretch of it what lies just outside does not
  look like the ground (another part of the member, a side face, a shadow);
- the face at the border: its outline runs along the image frame;
- credible neighbours: other candidate regions on strong edges that overlap the face or lie
  beside it and go on beyond it (the member's other leg past a patch of mill scale, the rest of
  a bore's rim): the face may be a part of the member, or the member a part of the face.

The confidence is the product of one factor per criterion, each 1 where the criterion is
comfortably met and falling to 0 at its threshold's far side; a trace needs review where the
confidence is under :data:`REVIEW_BELOW` or any criterion is past its threshold. The reasons are
plain sentences for the table, the JSON and the review page.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .choice import neighbours
from .contour import Trace
from .regions import nearer_model
from .segment import Segmentation

__all__ = ["TraceCheck", "check_trace", "check_hand", "THRESHOLDS", "REVIEW_BELOW"]

#: Each criterion's threshold (past it the trace needs review) and the value at which it is
#: comfortably met (its factor 1), in the criterion's own units.
THRESHOLDS = {
    "edge_support": (0.8, 0.95),           # share of the boundary on a clean step
    "score_gap": (0.35, 1.2),              # best candidate's score minus the runner-up's
    "inner_edges": (1.0, 0.6),             # smoothed inner edges' strength over the outline's
    "hole_support": (0.7, 0.9),             # each hole's share on a clean step
    "distinct": (0.45, 0.75),              # 1 - overlap of the face's and the ground's looks
    "border": (0.005, 0.0),                # share of the outline on the image frame
    "surround": (0.35, 0.6),               # the ring round the face: looks in common with the photo's edges
    "inside_ground": (0.05, 0.01),         # largest ground-like region inside the face, share of its area
    "outside": (0.12, 0.03),               # share of the outline whose outer side does not look like ground
    "neighbours": (0.15, 0.03),            # area of credible regions overlapping or beside the face, share of it
    "adjoining": (0.15, 0.05),             # area unlike the ground adjoining the face, share of it
    "on_the_edge": (0.6, 0.9),             # a hand boundary: share of it on a clean edge of the photo
}
# How far outside the outline its outer side is looked at [px of the working copy].
_OUT_WORKING = 6.0
#: A trace whose confidence is below this needs review.
REVIEW_BELOW = 0.4


@dataclass(frozen=True)
class TraceCheck:
    """The trace check.

    Attributes
    ----------
    confidence : float
        0 to 1.
    needs_review : bool
    reasons : tuple of str
        Why review is needed (plain sentences; empty when it is not).
    measures : dict
        Each criterion's value (``THRESHOLDS`` keys), for the JSON and the review page.
    notes : tuple of str
        What a person should know even when no review is needed (bark included, say).
    """

    confidence: float
    needs_review: bool
    reasons: tuple[str, ...]
    measures: dict = field(default_factory=dict)
    notes: tuple[str, ...] = ()

    def record(self, hints: dict, *, accepted: bool = False) -> dict:
        """The ``source.trace`` record of the result JSON (DESIGN.md)."""
        out = {"confidence": round(self.confidence, 3), "needs_review": self.needs_review,
               "reasons": list(self.reasons), "hints": hints,
               "measures": {k: (round(v, 4) if isinstance(v, float) else v) for k, v in self.measures.items()}}
        if self.needs_review and accepted:
            out["accepted_unchecked"] = True
        if self.notes:
            out["notes"] = list(self.notes)
        return out


def _factor(key: str, value: float) -> float:
    """A criterion's share of the confidence: 1 at its `good` value, 0.5 at its threshold, 0 as
    far past the threshold as `good` is before it (``THRESHOLDS``)."""
    bad, good = THRESHOLDS[key]
    f = 0.5 + 0.5 * (value - bad) / (good - bad) if good != bad else 1.0
    return min(1.0, max(0.0, f))


def check_hand(on_edge: float, within_px: float, note: str) -> TraceCheck:
    """The check of a boundary placed by hand: how much of it lies on a clean edge of the photo
    within `within_px` (:func:`~tracer.inputs.photo.contour.on_the_edge`). A person may place it where
    no edge shows (then they accept it); elsewhere, off the edge means drawn carelessly."""
    bad, _ = THRESHOLDS["on_the_edge"]
    confidence = _factor("on_the_edge", on_edge)
    reasons = []
    if on_edge < bad:
        reasons.append(f"the boundary placed by hand lies on a clean edge of the photo along only {100 * on_edge:.0f} % "
                       f"of its length (within {within_px:.1f} px): check it against the photo, or accept it where "
                       "the edge does not show")
    return TraceCheck(confidence=confidence, needs_review=bool(reasons), reasons=tuple(reasons),
                      measures={"on_the_edge": on_edge}, notes=(note,))


def check_trace(seg: Segmentation, trace: Trace) -> TraceCheck:
    """Check `trace` (from `seg`) against the criteria of the module notes."""
    measures: dict = {}
    factors: list[float] = []
    reasons: list[str] = []

    def judge(key: str, value: float, reason: str) -> None:
        bad, good = THRESHOLDS[key]
        measures[key] = float(value)
        factors.append(_factor(key, value))
        past = value < bad if good > bad else value > bad
        if past:
            reasons.append(reason)

    outer = trace.profiles[0]
    share = float(outer.clean.mean())
    judge("edge_support", share, f"weak edge support: only {100 * share:.0f} % of the outline sits on a clean "
                                 "step between member and ground")
    if seg.runner_up is not None and seg.chosen.source != "hint":
        gap = seg.chosen.score - seg.runner_up.score
        judge("score_gap", gap, f"a close second candidate {seg.runner_up.describe()}")
    ratio = _inner_edges(seg)
    judge("inner_edges", ratio, f"strong edges inside the face ({ratio:.2f} times as strong as its outline): a "
                                "side face, a second member or a shadow may be traced with it")
    for k, prof in enumerate(trace.profiles[1:], start=1):
        hs = float(prof.clean.mean())
        judge("hole_support", hs, f"hole {k} looks like texture ({100 * hs:.0f} % of its edge on a clean step): a "
                                  "stain, check or knot may have been taken for an opening")
    surround, inside = _ground_tests(seg)
    judge("surround", surround, "what surrounds the face looks unlike the ground at the photo's edges: the face may "
                                "be a part of a larger object (heartwood of a log, a mark on a face, one leg)")
    judge("inside_ground", inside, f"a region inside the face ({100 * inside:.0f} % of it) looks like the ground "
                                   "round it: an opening (a tube's bore) may have been filled")
    beyond = _outside_not_ground(seg, trace)
    judge("outside", beyond, f"along {100 * beyond:.0f} % of the outline what lies outside it does not look like the "
                             "ground: the member may go on there (another part of it, a side face), or a shadow lies "
                             "beside it")
    distinct = seg.chosen.criteria["distinct"]
    judge("distinct", distinct, "the face hardly differs from the ground round it: it may be a part of a larger "
                                "similar region")
    adjoining = _adjoining(seg)
    judge("adjoining", adjoining, f"something unlike the ground adjoins the face ({100 * adjoining:.0f} % of its area): "
                                  "the member may go on there (a part of another colour, a side face)")
    near = _neighbours(seg)
    judge("neighbours", near, f"other regions on strong edges overlap or adjoin the face ({100 * near:.0f} % of its "
                              "area beyond it): the face may be one part of the member, or take in a part of another")
    border = _on_frame(trace, seg.shape)
    judge("border", border, f"the face reaches the image border ({100 * border:.1f} % of its outline): it may be "
                            "cut off")
    confidence = float(np.prod(factors)) if factors else 1.0
    needs = bool(reasons) or confidence < REVIEW_BELOW
    if needs and not reasons:
        reasons.append(f"low confidence ({confidence:.2f}) from several criteria near their limits")
    return TraceCheck(confidence=confidence, needs_review=needs, reasons=tuple(reasons), measures=measures)


def _outside_not_ground(seg: Segmentation, trace: Trace) -> float:
    """The share of the outer outline (its normals, evened over about 15 of them) where the
    photo a little outside the edge (6 working pixels out) has a look that is rare in the
    photo's border strip, the ground, and is not of the ground's chromaticity (shade)."""
    prof = trace.profiles[0]
    if prof.normals is None or not len(prof.points):
        return 0.0
    app = seg.appearance
    h, w = app.shape
    refs = seg.references if seg.references is not None else np.zeros((h, w), bool)
    strip = _border_strip((h, w), refs | seg.chosen.mask)
    if not strip.any():
        return 0.0
    share = np.bincount(app.codes[strip], minlength=app.n_looks) / float(strip.sum())
    rare = share < 0.25 / app.n_looks
    H, W = seg.shape
    out = prof.points + prof.normals * (_OUT_WORKING * seg.working_step)
    cx = np.clip(np.round((out[:, 0] + 0.5) * w / W - 0.5).astype(int), 0, w - 1)
    cy = np.clip(np.round((out[:, 1] + 0.5) * h / H - 0.5).astype(int), 0, h - 1)
    flags = rare[app.codes[cy, cx]] & ~refs[cy, cx]
    if seg.ground_colour is not None:
        flags &= ~seg.ground_colour[cy, cx]             # the ground in shade is ground
    flags = flags.astype(np.float32)
    n = len(flags)
    k = np.ones(min(n, 15), np.float32) / min(n, 15)
    even = np.convolve(np.concatenate([flags[-len(k):], flags, flags[:len(k)]]), k, mode="same")[len(k):-len(k)]
    return float((even > 0.5).mean())


def _ground_tests(seg: Segmentation) -> tuple[float, float]:
    """Two comparisons that a right trace passes, on the working copy's colour and texture:

    - surround: the ring round the face (3 to 10 px out) is the ground: of its chromaticity
      (lit or in shade), or sharing the looks of the photo's border strip (palette histograms,
      their common share);
    - inside: no large region deep inside the face looks more like that ring than like the
      face's outer band (2 to 6 px in), by Gaussian models of colour and texture: an opening
      taken for face shows the ground.
    """
    import cv2

    app = seg.appearance
    region = seg.chosen.mask
    refs = seg.references if seg.references is not None else np.zeros(region.shape, bool)
    h, w = region.shape
    K = app.n_looks
    k3 = np.ones((3, 3), np.uint8)
    m8 = region.astype(np.uint8)
    ring = (cv2.dilate(m8, k3, iterations=10) > 0) & ~(cv2.dilate(m8, k3, iterations=3) > 0) & ~refs
    strip = _border_strip((h, w), refs | region)
    if not ring.any():
        return 1.0, 0.0
    # Of the ring, what has the ground's chromaticity is ground (lit or in shade); the rest is
    # compared by its looks.
    shade = seg.ground_colour & ring if seg.ground_colour is not None else np.zeros_like(ring)
    share = float(shade.sum()) / float(ring.sum())
    rest = ring & ~shade
    h_strip = np.bincount(app.codes[strip], minlength=K) / max(float(strip.sum()), 1.0)
    if not strip.any():
        surround = 1.0
    elif rest.any():
        h_ring = np.bincount(app.codes[rest], minlength=K) / float(rest.sum())
        surround = share + (1 - share) * float(np.minimum(h_ring, h_strip).sum())
    else:
        surround = 1.0
    feats = np.dstack([app.lab, app.texture[..., None]]).astype(np.float32)
    solid = _fill(region)
    s8 = solid.astype(np.uint8)
    wall = region & (cv2.erode(m8, k3, iterations=2) > 0) & ~(cv2.erode(m8, k3, iterations=6) > 0)
    deep = (cv2.erode(s8, k3, iterations=8) > 0) & region            # holes are no face: left out
    inside = 0.0
    if wall.sum() >= 20 and deep.sum() >= 20:
        nearer = nearer_model(feats, deep, ring, wall)
        n, labels, stats, _ = cv2.connectedComponentsWithStats(nearer.astype(np.uint8), connectivity=4)
        if n > 1:
            inside = float(stats[1:, cv2.CC_STAT_AREA].max()) / max(float(solid.sum()), 1.0)
    return surround, inside


def _fill(region: np.ndarray) -> np.ndarray:
    """The region with every hole filled."""
    import cv2

    inv = np.pad(~region, 1, constant_values=True).astype(np.uint8)
    n, labels = cv2.connectedComponents(inv, connectivity=4)
    outside = labels == labels[0, 0]
    return ~outside[1:-1, 1:-1]


def _inner_edges(seg: Segmentation) -> float:
    """The 98th percentile of the colour edges inside the face over the median of those on its
    outline, both on the working copy smoothed over 2 % of the face's equivalent diameter (so
    that growth rings, saw marks and speckle average out, and a long edge between two looks
    stays), away from the outline by twice that."""
    import cv2

    m = seg.chosen.mask.astype(np.uint8)
    if not m.any():
        return 0.0
    d = 2.0 * math.sqrt(float(m.sum()) / math.pi)
    thick = 2.0 * float(cv2.distanceTransform(m, cv2.DIST_L2, 5).max())
    s = min(max(1.0, 0.02 * d), max(1.0, thick / 6.0))
    lab = cv2.GaussianBlur(seg.appearance.lab, (0, 0), s)
    gx = cv2.Sobel(lab, cv2.CV_32F, 1, 0)
    gy = cv2.Sobel(lab, cv2.CV_32F, 0, 1)
    edge = np.sqrt(np.square(gx).sum(axis=2) + np.square(gy).sum(axis=2))
    k = np.ones((3, 3), np.uint8)
    boundary = (cv2.dilate(m, k) - cv2.erode(m, k)) > 0
    inner = cv2.erode(m, k, iterations=int(math.ceil(3 * s + 4))) > 0
    if inner.sum() < max(20, 0.1 * m.sum()):
        return 0.0                                  # a thin wall: no inside far from its edges
    on = float(np.median(edge[boundary]))
    return float(np.percentile(edge[inner], 98)) / max(on, 1e-6)


def _border_strip(shape: tuple[int, int], leave_out: np.ndarray) -> np.ndarray:
    """The photo's border strip (3 % of its shorter side, at least 2 px), where the ground is
    seen, without `leave_out` (the references and the face)."""
    h, w = shape
    b = max(2, int(round(0.03 * min(h, w))))
    strip = np.zeros((h, w), bool)
    strip[:b] = strip[-b:] = True
    strip[:, :b] = strip[:, -b:] = True
    return strip & ~leave_out


def _adjoining(seg: Segmentation) -> float:
    """The area, as a share of the face's, of what adjoins the face and does not look like the
    ground: pixels of the working copy outside the face whose look is rare in the photo's border
    strip and whose chromaticity is not the ground's (shade), cleaned of specks (an opening by a
    3 x 3 square), in pieces that reach to within 2 px of the face's outline."""
    import cv2

    app = seg.appearance
    face = seg.chosen.mask
    h, w = face.shape
    n = float(face.sum())
    if n == 0:
        return 0.0
    refs = seg.references if seg.references is not None else np.zeros((h, w), bool)
    solid = _fill(face)
    strip = _border_strip((h, w), refs | solid)
    if not strip.any():
        return 0.0
    share = np.bincount(app.codes[strip], minlength=app.n_looks) / float(strip.sum())
    other = (share < 0.25 / app.n_looks)[app.codes] & ~refs & ~solid
    if seg.ground_colour is not None:
        other &= ~seg.ground_colour
    k3 = np.ones((3, 3), np.uint8)
    other = cv2.morphologyEx(other.astype(np.uint8), cv2.MORPH_OPEN, k3)
    ring = cv2.dilate(solid.astype(np.uint8), k3, iterations=3).astype(bool) & ~solid
    count, labels = cv2.connectedComponents(other, connectivity=8)
    touching = np.unique(labels[ring & (labels > 0)])
    return float(np.isin(labels, touching).sum()) / n if len(touching) else 0.0


def _neighbours(seg: Segmentation) -> float:
    """The largest area, as a share of the face's, that a credible other region by the face
    (:func:`~tracer.inputs.photo.choice.neighbours`, scale references left out) has beyond 2 px round
    the face, cleaned of specks and threads (an opening by a 3 x 3 square)."""
    import cv2

    face = seg.chosen.mask
    n = float(face.sum())
    if n == 0:
        return 0.0
    near = cv2.dilate(face.astype(np.uint8), np.ones((5, 5), np.uint8)).astype(bool)
    others = [c for c in neighbours(face, seg.candidates[1:], seg.appearance, seg.references) if c.reference is None]
    k3 = np.ones((3, 3), np.uint8)
    # What lies beyond, opened by a 3 x 3 square: ground specks and threads along the face's edge
    # (a ragged region grown from the edge into a mottled ground) are no part of a member.
    beyond = [cv2.morphologyEx((c.mask & ~near).astype(np.uint8), cv2.MORPH_OPEN, k3) for c in others]
    return max((float(b.sum()) / n for b in beyond), default=0.0)

def _on_frame(trace: Trace, shape: tuple[int, int]) -> float:
    """Share of the outer ring's points within half a pixel of the image frame."""
    H, W = shape
    p = trace.rings_px[0]
    near = (p[:, 0] <= 0.5) | (p[:, 1] <= 0.5) | (p[:, 0] >= W - 1.5) | (p[:, 1] >= H - 1.5)
    # Points are not evenly spaced after simplification: weigh each by its edges' half lengths.
    seg_len = np.hypot(*(np.roll(p, -1, axis=0) - p).T)
    w = 0.5 * (seg_len + np.roll(seg_len, 1))
    return float((w * near).sum() / max(w.sum(), 1e-9))
