"""How far a trace can be trusted: the trace check behind ``source.trace`` in the result JSON.

A wrong trace with a tight interval is the worst thing the photo path can print, so every trace
is checked against what makes one suspect, each measured as a number with a stated threshold
(:data:`THRESHOLDS`, set on the project's renders and on real photos with reference outlines):

- edge support: the share of the boundary whose normal profile shows a clean step from the
  member to the ground (:mod:`tracer.photo.contour`); a boundary through texture, or along a
  gentle shading, has little;
- a close second candidate (unattended only): another region scored nearly as well;
- strong edges inside the face: colour edges inside it as strong as its own outline (a side
  face traced with the end, two members taken for one);
- holes that look like texture: a hole whose own boundary has little edge support;
- a face that is a small part of a larger similar region: its looks hardly differ from those of
  the ground round it;
- the face at the border: its outline runs along the image frame.

The confidence is the product of one factor per criterion, each 1 where the criterion is
comfortably met and falling to 0 at its threshold's far side; a trace needs review where the
confidence is under :data:`REVIEW_BELOW` or any criterion is past its threshold. The reasons are
plain sentences for the table, the JSON and the review page.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .contour import Trace
from .segment import Segmentation

__all__ = ["TraceCheck", "check_trace", "THRESHOLDS", "REVIEW_BELOW"]

#: Each criterion's threshold (past it the trace needs review) and the value at which it is
#: comfortably met (its factor 1), in the criterion's own units.
THRESHOLDS = {
    "edge_support": (0.55, 0.85),          # share of the boundary on a clean step
    "score_gap": (0.35, 1.2),              # best candidate's score minus the runner-up's
    "inner_edges": (1.0, 0.6),             # smoothed inner edges' strength over the outline's
    "hole_support": (0.5, 0.8),            # each hole's share on a clean step
    "distinct": (0.45, 0.75),              # 1 - overlap of the face's and the ground's looks
    "border": (0.005, 0.0),                # share of the outline on the image frame
}
#: A trace whose confidence is below this needs review.
REVIEW_BELOW = 0.5


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


def check_trace(seg: Segmentation, trace: Trace) -> TraceCheck:
    """Check `trace` (from `seg`) against the criteria of the module notes."""
    measures: dict = {}
    factors: list[float] = []
    reasons: list[str] = []

    def judge(key: str, value: float, reason: str) -> None:
        bad, good = THRESHOLDS[key]
        measures[key] = float(value)
        # 1 at `good`, 0.5 at the threshold, 0 as far past it as `good` is before it.
        f = 0.5 + 0.5 * (value - bad) / (good - bad) if good != bad else 1.0
        factors.append(min(1.0, max(0.0, f)))
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
    distinct = seg.chosen.criteria["distinct"]
    judge("distinct", distinct, "the face hardly differs from the ground round it: it may be a part of a larger "
                                "similar region")
    border = _on_frame(trace, seg.shape)
    judge("border", border, f"the face reaches the image border ({100 * border:.1f} % of its outline): it may be "
                            "cut off")
    confidence = float(np.prod(factors)) if factors else 1.0
    needs = bool(reasons) or confidence < REVIEW_BELOW
    if needs and not reasons:
        reasons.append(f"low confidence ({confidence:.2f}) from several criteria near their limits")
    return TraceCheck(confidence=confidence, needs_review=needs, reasons=tuple(reasons), measures=measures)


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


def _on_frame(trace: Trace, shape: tuple[int, int]) -> float:
    """Share of the outer ring's points within half a pixel of the image frame."""
    H, W = shape
    p = trace.rings_px[0]
    near = (p[:, 0] <= 0.5) | (p[:, 1] <= 0.5) | (p[:, 0] >= W - 1.5) | (p[:, 1] >= H - 1.5)
    # Points are not evenly spaced after simplification: weigh each by its edges' half lengths.
    seg_len = np.hypot(*(np.roll(p, -1, axis=0) - p).T)
    w = 0.5 * (seg_len + np.roll(seg_len, 1))
    return float((w * near).sum() / max(w.sum(), 1e-9))
