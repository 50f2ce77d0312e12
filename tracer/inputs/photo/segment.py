"""Which pixels are the member: candidates found by region models, scored, and the best one cut
finely; hints and scale references obeyed. The public entry of the member's search.

The photo is reduced to a working copy of about 60,000 pixels and described by its colour and
texture (:mod:`tracer.inputs.photo.workcopy`, :mod:`tracer.inputs.photo.regions`). There:

- candidates for the member are found by cuts against the border's ground, by one grey level and
  from one-look regions, or grown from points a person put on it, and nested
  (:mod:`tracer.inputs.photo.candidates`), each scored by stated criteria
  (:mod:`tracer.inputs.photo.scoring`);
- unattended, the best whole one is taken, unless it is weak or a second scores close to it: then
  nothing is guessed and the candidates are listed for a person to pick one
  (:mod:`tracer.inputs.photo.choice`);
- the chosen region's openings are made holes and the ground it took in trimmed
  (:mod:`tracer.inputs.photo.trim`).

The chosen region, or a rough outline a person drew (:func:`segment_outline`), is then cut again
at up to four times the working resolution in a band round its boundary
(:mod:`tracer.inputs.photo.refine`), which gives the mask of the :class:`Segmentation`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from ...errors import MeasurementError
from .candidates import find_candidates, grow_from_seeds
from .choice import choose, neighbours, reference_of
from .hints import Hints
from .refine import refine
from .regions import Appearance
from .scoring import Candidate, criteria_of, make_candidate
from .trim import ground_colour, open_up, shade_trim
from .workcopy import working_copy

__all__ = ["Segmentation", "segment_member", "segment_outline"]


@dataclass(frozen=True)
class Segmentation:
    """The member's mask and how it was chosen.

    Attributes
    ----------
    mask : ndarray (m, n) bool
        The member (holes False) on a grid of `step` full-size pixels per pixel whose pixel
        (0, 0) starts at the full photo's pixel `origin` (x, y): the centre of mask pixel (i, j)
        is the full-size point ((i + 0.5) sx - 0.5 + x0, (j + 0.5) sy - 0.5 + y0).
    step : (sx, sy)
        Full-size pixels per pixel of `mask`, across and down.
    origin : (x0, y0)
        The full-size pixel where `mask` starts.
    shape : (H, W)
        The full photo's size.
    candidates : tuple of Candidate
        Everything that was considered, in the working copy (the chosen one first)
        (:class:`~tracer.inputs.photo.scoring.Candidate`).
    chosen : Candidate
    runner_up : Candidate or None
        The best other candidate not part of the chosen one.
    working_step : float
        Full-size pixels per pixel of the working copy.
    hints : Hints
    appearance : Appearance
        Of the working copy.
    filled_holes : int
        Holes of the cut smaller than the texture size, filled.
    references : ndarray (h, w) bool
        The scale references (and transparent pixels) on the working copy.
    ground_colour : ndarray (h, w) bool or None
        Pixels of the working copy of the ground's chromaticity, lit or in shade (None against
        a grey ground, where shade cannot be told by colour).
    """

    mask: np.ndarray = field(repr=False)
    step: tuple[float, float]
    origin: tuple[float, float]
    shape: tuple[int, int]
    candidates: tuple
    chosen: Candidate
    runner_up: Candidate | None
    working_step: float
    hints: Hints
    appearance: Appearance = field(repr=False)
    filled_holes: int = 0
    references: np.ndarray | None = field(default=None, repr=False)
    ground_colour: np.ndarray | None = field(default=None, repr=False)

    def rings_px(self) -> list[np.ndarray]:
        """The mask's boundary rings in full-size pixels (x, y), outer first then holes, each
        a closed polyline along the pixel edges' midpoints, smoothed over about a pixel of the
        mask so that its steps do not show."""
        return _rings(self.mask, self.step, self.origin)

    def to_full(self, xy: np.ndarray) -> np.ndarray:
        """Points on `mask`'s grid (column, row) to full-size pixels (x, y)."""
        return (np.asarray(xy, float) + 0.5) * np.asarray(self.step) - 0.5 + np.asarray(self.origin, float)

    def member_in_full(self) -> np.ndarray:
        """The mask at full size over the whole photo (nearest pixel), for pixel checks."""
        import cv2

        H, W = self.shape
        xs = (np.arange(W, dtype=np.float32) + 0.5 - self.origin[0]) / self.step[0] - 0.5
        ys = (np.arange(H, dtype=np.float32) + 0.5 - self.origin[1]) / self.step[1] - 0.5
        mx = np.broadcast_to(xs[None, :], (H, W))
        my = np.broadcast_to(ys[:, None], (H, W))
        return cv2.remap(self.mask.astype(np.uint8), np.ascontiguousarray(mx), np.ascontiguousarray(my),
                         cv2.INTER_NEAREST, borderMode=cv2.BORDER_CONSTANT, borderValue=0) > 0


def segment_member(photo, *, texture_px: float, hints: Hints = Hints(), keep_out: list[np.ndarray] = (),
                   ) -> Segmentation:
    """Find the member in `photo` (:class:`~tracer.inputs.photo.load.Photo`).

    Parameters
    ----------
    photo : Photo
    texture_px : float
        Cracks, checks and specks narrower than this [px] are texture, not edges or holes.
    hints : Hints
        Points on the member, points on the ground, a box round it (checked against the image).
    keep_out : list of (N, 2) arrays
        Polygons [px] of the scale references: never the member.

    Raises
    ------
    InputError
        A hint outside the image or contradicting another.
    MeasurementError
        Nothing found; the member cut off by the border; a seed on the ground; or, unattended,
        no candidate clearly better than the rest
        (:class:`~tracer.inputs.photo.choice.MemberUnclear`, whose message lists them).
    """
    ctx = working_copy(photo, texture_px, keep_out, hints)
    if hints.seeds:
        chosen, runner = grow_from_seeds(ctx, hints)[0], None
        # The regions an unattended search finds as well, for the trace check to weigh beside
        # the one grown from the seeds (another part of the member it stopped short of).
        cands = [chosen] + find_candidates(ctx, replace(hints, seeds=()))
    else:
        cands = find_candidates(ctx, hints)
        chosen, runner = choose(ctx, cands, hints)
        chosen = replace(chosen, mask=shade_trim(ctx, open_up(ctx, chosen.mask)))
    mask, fine_step, origin, filled = refine(photo, ctx, chosen.mask, hints)
    # Which credible regions by the chosen one are scale references (for the trace check).
    near = set(map(id, neighbours(chosen.mask, [c for c in cands if c is not chosen])))
    cands = [replace(c, reference=reference_of(ctx, c.mask)) if id(c) in near and c.reference is None else c
             for c in cands]
    chosen = next((c for c in cands if c.mask is chosen.mask), chosen)
    ordered = (chosen,) + tuple(c for c in cands if c.mask is not chosen.mask)
    sx, sy = ctx.scale
    return Segmentation(mask=mask, step=fine_step, origin=origin, shape=ctx.shape, candidates=ordered, chosen=chosen,
                        runner_up=runner, working_step=float(math.sqrt(sx * sy)), hints=hints, appearance=ctx.app,
                        filled_holes=filled, references=ctx.refs, ground_colour=ground_colour(ctx, chosen.mask))


def segment_outline(photo, points, holes=(), *, texture_px: float, keep_out=None) -> Segmentation:
    """The member from a rough outline a person drew round it (image pixels; `holes` its
    openings): the outline on the working copy, cut again at a finer step in a band round it, as
    a found region is, so that the boundary lies on the member's own edge in the photo, within
    about two working pixels of the drawn one.

    Raises
    ------
    MeasurementError
        The outline encloses nothing on the working copy, or no edge is found near it.
    """
    import cv2

    hints = Hints()
    ctx = working_copy(photo, texture_px, keep_out, hints)
    h, w = ctx.app.shape
    sx, sy = ctx.scale

    def on_grid(ring) -> np.ndarray:
        q = (np.asarray(ring, float) + 0.5) / (sx, sy) - 0.5
        return np.round(q * 16).astype(np.int32)          # 4 fractional bits

    canvas = np.zeros((h, w), np.uint8)
    cv2.fillPoly(canvas, [on_grid(points)], 1, lineType=cv2.LINE_8, shift=4)
    for hole in holes:
        cv2.fillPoly(canvas, [on_grid(hole)], 0, lineType=cv2.LINE_8, shift=4)
    region = canvas.astype(bool) & ~ctx.refs
    if region.sum() < 4:
        raise MeasurementError("the drawn outline encloses too little of the photo to find the member's edge in")
    mask, fine_step, origin, filled = refine(photo, ctx, region, hints)
    cand = make_candidate(ctx, region, criteria_of(ctx, region), "outline")
    return Segmentation(mask=mask, step=fine_step, origin=origin, shape=ctx.shape, candidates=(cand,), chosen=cand,
                        runner_up=None, working_step=float(math.sqrt(sx * sy)), hints=hints, appearance=ctx.app,
                        filled_holes=filled, references=ctx.refs, ground_colour=ground_colour(ctx, region))


def _rings(mask: np.ndarray, step: tuple[float, float], origin: tuple[float, float]) -> list[np.ndarray]:
    """Boundary rings of a mask in full-size pixels, outer first, smoothed (see Segmentation)."""
    import cv2

    # Contours of the mask enlarged 2x trace the pixel edges' midpoints; a light circular
    # smoothing along each takes out the stair steps.
    big = cv2.resize(mask.astype(np.uint8), None, fx=2, fy=2, interpolation=cv2.INTER_NEAREST)
    cnts, hier = cv2.findContours(big, cv2.RETR_CCOMP, cv2.CHAIN_APPROX_NONE)
    if not cnts:
        return []
    outer = [i for i in range(len(cnts)) if hier[0][i][3] < 0]
    main = max(outer, key=lambda i: cv2.contourArea(cnts[i]))
    holes = [i for i in range(len(cnts)) if hier[0][i][3] == main]
    out = []
    for i in [main] + holes:
        c = cnts[i].reshape(-1, 2).astype(np.float64)
        if len(c) < 8:
            continue
        c = _smooth_closed(c, 2.0)
        xy = (c + 0.5) / 2.0 - 0.5                      # back to the mask's pixel grid
        out.append((xy + 0.5) * np.asarray(step) - 0.5 + np.asarray(origin, float))
    return out


def _smooth_closed(pts: np.ndarray, sigma: float) -> np.ndarray:
    """Gaussian smoothing of a closed polyline's points along it (circular convolution)."""
    n = len(pts)
    r = int(math.ceil(3 * sigma))
    if n < 2 * r + 1:
        return pts
    k = np.exp(-0.5 * (np.arange(-r, r + 1) / sigma) ** 2)
    k /= k.sum()
    padded = np.concatenate([pts[-r:], pts, pts[:r]])
    return np.column_stack([np.convolve(padded[:, j], k, mode="valid") for j in range(2)])
