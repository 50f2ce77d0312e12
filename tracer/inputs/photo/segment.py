"""Which pixels are the member: candidates found by region models, scored, and the best one cut
finely; hints and scale references obeyed.

The photo is reduced to a working copy of about 60,000 pixels and described by its colour and
texture (:mod:`tracer.inputs.photo.regions`). Candidates for the member come from two kinds of cut:

- the ground as the image border shows it: a cut between a model of the border strip and a
  model of everything else, re-estimated twice (a member in the middle of its ground);
- each large region of one look that does not reach the border (a colour class of the palette),
  grown by a cut between its own model and that of everything round it (a bright tube wall on
  a dark face, a member beside larger things).

Each candidate is scored by stated criteria, each 0 to 1 (:data:`SCORE_WEIGHTS`): its size, its
solidity (area over its convex hull's), the share of its boundary on a strong colour edge, how
distinct its looks are from those of a ring of ground round it, and how near the centre of
view it lies. A candidate inside another's outline (the bore of a tube, the heartwood of a log)
is part of it. A candidate that reaches the image border is cut off and never taken. Where the
best is weak, or a second scores close to it, nothing is guessed: the message lists where the
candidates are so that a person can pick one with ``--seed``.

Hints (:mod:`tracer.inputs.photo.hints`) replace the search: points on the member seed the member's
model and are held to it, points on the ground and everything outside a box are held to the
ground. Scale references (a target and its sheet, rulers) are held to the ground and left out of
every model.

The chosen candidate is then cut again at up to four times the working resolution, in a band
round its boundary, with models of the member and of the ground next to it; holes smaller than
the texture size are filled, larger ones (a tube's bore, bolt holes) stay holes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from ...errors import MeasurementError
from .hints import Hints
from .lookalike import reference_kind
from .regions import CHROMA_WEIGHT as _CHROMA
from .regions import Appearance, appearance, first_guess, grow_region, min_cut, region_costs

__all__ = ["Candidate", "MemberUnclear", "Segmentation", "segment_member", "segment_outline", "local_costs", "fill_holes", "open_up", "nearer_model",
           "SCORE_WEIGHTS", "WEAK_SCORE", "CLOSE_SCORE", "GROUND_LIKE", "neighbours"]

#: Weights of the candidate criteria in the score (each criterion 0 to 1).
SCORE_WEIGHTS = {"size": 1.0, "solidity": 0.5, "edge": 1.5, "distinct": 1.5, "centre": 0.5}
#: A best candidate scoring below this is too weak to be taken unattended.
WEAK_SCORE = 2.6
#: A second candidate scoring within this of the best makes the choice too close to take unattended.
CLOSE_SCORE = 0.35
# Pixels of the working copy.
_WORK_PIXELS = 60_000
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
# Floor on a local model's feature variance.
_MIN_VAR = 1.0
# Window (Gaussian σ) of the texture measure on the working copy [px].
_TEXTURE_SIGMA = 1.0
# Finest step of the band cut [full-size px per pixel], and its step against the working copy's.
_FINE_RATIO = 4.0
# Most pixels of the member's box in the band cut.
_FINE_PIXELS = 250_000
# A look is the member's at first where its share inside is more than this many times its share
# in the border strip: 1, and 2 against a mottled ground whose looks vary by chance between the two.
_EXCESS = (1.0, 2.0)
# Share of the image a candidate must cover at least.
_MIN_SHARE = 0.003
# Width of the border strip the ground model is learned from, as a share of the shorter side.
_BORDER_SHARE = 0.03
# At most this many one-look regions are grown into candidates.
_MAX_GROWN = 6
# The border's uneven light is divided out where a quadratic explains this share of its variation.
_SHADING_EXPLAINS = 0.3
# A hole narrower than this share of the member's equivalent diameter is texture.
_HOLE_WIDTH_SHARE = 0.04
# Colour difference within which palette entries are one look class [ΔE*ab].
_CLASS_DE = 20.0
# A candidate holds those inside its outline (they are parts of it) only if at least this share of
# its boundary lies on strong edges.
_HOLDER_EDGE = 0.4
# A region whose edge support is this much above a larger one's round it is not held by it.
_HELD_EDGE_GAP = 0.3
# ... and round which the larger goes on along at most this share of its outline.
_LEAK_SHARE = 0.3
# A candidate inside a region that reaches the border is taken only if it is at least this share
# of that region (a tube's wall in a dark field is; the pith of a log whose face is cut off is not).
_MIN_SHARE_OF_HOLDER = 0.1
# A region running off the photo along less than this share of the frame may be a member cut off.
_CUT_OFF_FRAME = 0.2
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
#: A candidate that looks this much like the ground at the photo's edges (the share of its looks
#: in common with theirs) is ground seen through or beside something, never the member.
GROUND_LIKE = 0.6
# What a larger version of a region adds is ground if this much of its looks is the ground's round it.
_GROUND_LIKE_EXTRA = 0.5
# A candidate must be at least twice this thick somewhere [px of the working copy].
_MIN_HALF_WIDTH = 1.5
# A candidate scoring this much, whole, distinct and outlined by strong edges ends the search.
_CLEAR_SCORE = 4.2
# A candidate may touch the image frame along this share of its boundary (a face that comes
# within a pixel of the frame in the working copy) and still be whole.
_MAX_CONTACT = 0.02


@dataclass(frozen=True, eq=False)
class Candidate:
    """A region that may be the member (in the working copy).

    Attributes
    ----------
    mask : ndarray (h, w) bool
        The region, holes kept.
    criteria : dict
        Each scoring criterion, 0 to 1 (:data:`SCORE_WEIGHTS`), and ``contact`` (share of the
        boundary on the image frame).
    score : float
        The weighted sum of the criteria.
    centre, size : (x, y), (w, h)
        Where it lies in the full photo and how large its box is [px].
    inside : int or None
        The index of the candidate whose outline holds this one (it is then part of it).
    source : str
        ``"border"`` (a cut against the border's ground), ``"level"`` (a side of one grey level),
        ``"region"`` (a one-look region grown), or ``"hint"``.
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
        return self.criteria["contact"] > _MAX_CONTACT

    def describe(self) -> str:
        return (f"at {self.centre[0]:.0f},{self.centre[1]:.0f} px (about {self.size[0]:.0f} x {self.size[1]:.0f} px, "
                f"score {self.score:.2f})")


class MemberUnclear(MeasurementError):
    """No candidate stands out clearly, or two score close (exit status 1); `candidates` holds
    the best few as (x, y, width, height, score), centre and size in full-size pixels, for a
    person to pick one."""

    def __init__(self, message: str, candidates: tuple) -> None:
        super().__init__(message)
        self.candidates = candidates


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
        Everything that was considered, in the working copy (the chosen one first).
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
        no candidate clearly better than the rest (the message lists them).
    """
    ctx = _context(photo, texture_px, keep_out, hints)
    if hints.seeds:
        chosen, runner = _seeded(ctx, hints)[0], None
        # The regions an unattended search finds as well, for the trace check to weigh beside
        # the one grown from the seeds (another part of the member it stopped short of).
        cands = [chosen] + _candidates(ctx, replace(hints, seeds=()))
    else:
        cands = _candidates(ctx, hints)
        chosen, runner = _choose(ctx, cands, hints)
        chosen = replace(chosen, mask=_shade_trim(ctx, open_up(ctx, chosen.mask)))
    mask, fine_step, origin, filled = _refine(photo, ctx, chosen.mask, hints)
    # Which credible regions by the chosen one are scale references (for the trace check).
    near = set(map(id, neighbours(chosen.mask, [c for c in cands if c is not chosen])))
    cands = [replace(c, reference=_reference(ctx, c.mask)) if id(c) in near and c.reference is None else c
             for c in cands]
    chosen = next((c for c in cands if c.mask is chosen.mask), chosen)
    ordered = (chosen,) + tuple(c for c in cands if c.mask is not chosen.mask)
    sx, sy = ctx.scale
    return Segmentation(mask=mask, step=fine_step, origin=origin, shape=ctx.shape, candidates=ordered, chosen=chosen,
                        runner_up=runner, working_step=float(math.sqrt(sx * sy)), hints=hints, appearance=ctx.app,
                        filled_holes=filled, references=ctx.refs, ground_colour=_ground_colour(ctx, chosen.mask))


def _context(photo, texture_px: float, keep_out, hints: Hints) -> "_Context":
    """The working copy and everything the searches share."""
    import cv2

    from .tone import LIGHT_OF_8BIT

    H, W = photo.shape
    hints.check(W, H)
    step = max(1.0, math.sqrt(H * W / _WORK_PIXELS))
    w, h = max(16, round(W / step)), max(16, round(H / step))
    sx, sy = W / w, H / h
    small = cv2.resize(photo.color, (w, h), interpolation=cv2.INTER_AREA)
    light = LIGHT_OF_8BIT[small]
    shading = _shading(light, _border_strip(h, w))
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
    strip = _border_strip(h, w) & ~refs
    looks = np.bincount(app.codes[strip], minlength=app.n_looks) / max(int(strip.sum()), 1)
    return _Context(app=app, refs=refs, scale=(sx, sy), shape=(H, W), texture_px=texture_px, shading=shading,
                    gray=photo.levels, ground_looks=looks, features=_pattern(light))


# ---------------------------------------------------------------------------------------------
@dataclass
class _Context:
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
        return (np.asarray(xy, float) + 0.5) / self.scale - 0.5

    def to_full(self, xy) -> np.ndarray:
        return (np.asarray(xy, float) + 0.5) * self.scale - 0.5

    def disc(self, points, radius: float) -> np.ndarray:
        import cv2

        h, w = self.app.shape
        m = np.zeros((h, w), np.uint8)
        for x, y in self.to_small(np.reshape(points, (-1, 2))):
            cv2.circle(m, (int(round(x)), int(round(y))), max(0, int(round(radius))), 1, -1)
        return m.astype(bool)

    def outside_box(self, box) -> np.ndarray:
        h, w = self.app.shape
        m = np.ones((h, w), bool)
        if box is None:
            return np.zeros((h, w), bool)
        (x0, y0), (x1, y1) = self.to_small([box[:2], box[2:]])
        m[max(0, int(math.floor(y0))):int(math.ceil(y1)) + 1, max(0, int(math.floor(x0))):int(math.ceil(x1)) + 1] = False
        return m


def _seeded(ctx: _Context, hints: Hints) -> list[Candidate]:
    """The member grown from the points on it."""
    import cv2

    app = ctx.app
    h, w = app.shape
    hard_member = ctx.disc(hints.seeds, 1.0) & ~ctx.refs
    hard_ground = ctx.refs | ctx.disc(hints.outside, 1.0) | ctx.outside_box(hints.box) | _frame(h, w)
    for (x, y), disc in ((p, ctx.disc([p], 1.0)) for p in hints.seeds):
        if (disc & ctx.refs).any():
            raise MeasurementError(f"--seed {x:g},{y:g} is on the scale reference (the target's sheet or a ruler), "
                                   "not on the member; pick a point well inside the cut face")
    # The member's first model: round the seeds, a few per cent of the image; the ground's: the
    # border strip (or the box's rim) and round the outside points.
    r = 0.04 * min(h, w)
    member0 = ctx.disc(hints.seeds, r) & ~hard_ground
    ground0 = _border_strip(h, w) if hints.box is None else _rim(ctx.outside_box(hints.box))
    ground0 = (ground0 | ctx.disc(hints.outside, r)) & ~member0 & ~ctx.refs
    cut = grow_region(app, member0, ground0, hard_member=hard_member, hard_ground=hard_ground, rounds=3)
    n, labels = cv2.connectedComponents(cut.astype(np.uint8), connectivity=4)
    seeds_small = np.round(ctx.to_small(hints.seeds)).astype(int)
    seeds_small = np.clip(seeds_small, 0, [w - 1, h - 1])
    ids = labels[seeds_small[:, 1], seeds_small[:, 0]]
    region = np.isin(labels, ids[ids > 0])
    base = ctx.disc(hints.seeds, 1.0)
    if region.sum() <= 1.5 * base.sum() or region.sum() < 0.5 * _MIN_SHARE * h * w:
        x, y = hints.seeds[0]
        raise MeasurementError(f"--seed {x:g},{y:g} is on the background as the colours and textures round it "
                               "read: nothing grows from it that differs from its surroundings; pick a point well "
                               "inside the cut face, or add --outside X,Y on the ground")
    if len(set(ids.tolist())) > 1:
        pts = " and ".join(f"{x:g},{y:g}" for x, y in hints.seeds)
        raise MeasurementError(f"--seed {pts} fall on separate regions; give points on one member, or a --box "
                               "round it")
    region = open_up(ctx, fill_holes(region, (2 * ctx.texture_px / ctx.scale[0]) ** 2), keep=base)
    region = _shade_trim(ctx, region, keep=base)
    crit = _criteria(ctx, region)
    cand = _candidate(ctx, region, crit, "hint")
    if cand.cut_off:
        x, y = hints.seeds[0]
        raise MeasurementError(f"the member at --seed {x:g},{y:g} is cut off by the image border; photograph the "
                               "whole cut face with some ground around it")
    return [cand]


def _candidates(ctx: _Context, hints: Hints) -> list[Candidate]:
    """Candidates from the border's ground and from one-look regions, scored (unattended, or
    with a box and points on the ground)."""
    import cv2

    app = ctx.app
    h, w = app.shape
    # The image frame is held to the ground (as the outside of a box is): where the looks are
    # alike, the cut then keeps the ground with the frame instead of taking it at random.
    hard_ground = ctx.refs | ctx.disc(hints.outside, 1.0) | ctx.outside_box(hints.box) | _frame(h, w)
    strip = _border_strip(h, w) if hints.box is None else _rim(ctx.outside_box(hints.box))
    r = 0.04 * min(h, w)
    ground0 = (strip | ctx.disc(hints.outside, r)) & ~ctx.refs
    inside = ~ground0 & ~hard_ground
    # The member's first model: what is inside and not explained by the ground's looks, a look
    # counting where its share inside is above its share in the strip (or, against a mottled
    # ground whose looks vary by chance between the two, well above it): one cut for each,
    # the second only where the first found nothing clear.
    min_area = _MIN_SHARE * h * w
    fill = (2 * ctx.texture_px / ctx.scale[0]) ** 2
    cands: list[Candidate] = []

    def add(region: np.ndarray, source: str) -> None:
        # A sliver (nowhere three pixels of the working copy thick) is no member's face.
        if cv2.distanceTransform(np.pad(region, 1).astype(np.uint8), cv2.DIST_L2, 3).max() >= _MIN_HALF_WIDTH:
            cands.append(_candidate(ctx, region, _criteria(ctx, region), source))

    for alpha in _EXCESS:
        member0 = first_guess(app, inside, ground0, excess=alpha)
        cut = grow_region(app, member0, ground0, hard_ground=hard_ground, rounds=3)
        for reg in _components(cut, min_area):
            add(fill_holes(reg, fill), "border")
    # The plainest split too: one grey level (Otsu's) over the light, the member either side of it.
    for reg in _threshold_regions(ctx, hard_ground, min_area):
        add(fill_holes(reg, fill), "level")
    # Regions already well found (whole, on strong edges) need no one-look seed inside them.
    found = [c.mask for c in cands if not c.cut_off and c.criteria["edge"] >= 0.5]
    grow_seeds = not any(_clear(c) for c in cands)
    # One-look regions: palette entries of like colour grouped, each group's connected parts.
    classes = _look_classes(app)
    seeds = []
    for c in np.unique(classes):
        for reg in _components((classes == c) & ~hard_ground, min_area):
            contact = _contact(reg)
            if contact > _MAX_CONTACT:
                # A look that runs off the photo along a short stretch of its frame may be a
                # member cut off; along much of it, it is ground.
                if _frame_share(reg) < _CUT_OFF_FRAME:
                    add(reg, "region")
                continue
            if grow_seeds and contact == 0 and not any((reg & m).sum() > 0.7 * reg.sum() for m in found):
                seeds.append(reg)
    seeds.sort(key=lambda m: -int(m.sum()))
    kernel = cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (5, 5))
    for seed in seeds[:_MAX_GROWN]:
        around = ~cv2.dilate(seed.astype(np.uint8), kernel).astype(bool) & ~ctx.refs
        grown = grow_region(app, seed, around, hard_ground=hard_ground, rounds=2)
        n, labels, stats, _ = cv2.connectedComponentsWithStats(grown.astype(np.uint8), connectivity=4)
        ids = np.unique(labels[seed & grown])
        ids = ids[ids > 0]
        if not len(ids):
            continue
        best = ids[np.argmax(stats[ids, cv2.CC_STAT_AREA])]
        if stats[best, cv2.CC_STAT_AREA] >= min_area:
            add(fill_holes(labels == best, fill), "region")
    return _nest(ctx, _one_version_each(ctx, cands))


def _one_version_each(ctx: _Context, cands: list[Candidate]) -> list[Candidate]:
    """Of the versions of one region (outlines that nearly coincide), keep one: the smaller where
    what the larger adds looks like the ground round it (a tube's bore partly taken in), else the
    larger (a heartwood left out as if it were an opening); alike ones by score."""
    kept: list[Candidate] = []
    solid = {id(c): fill_holes(c.mask, np.inf) for c in cands}
    for c in sorted(cands, key=lambda c: -c.score):
        twin = next((k for k in kept if _iou(solid[id(c)], solid[id(k)]) > 0.7), None)
        if twin is None:
            kept.append(c)
            continue
        big, small = (c, twin) if c.mask.sum() > twin.mask.sum() else (twin, c)
        extra = big.mask & ~small.mask
        if extra.sum() < 0.02 * small.mask.sum():
            continue                                   # alike: the better scored stays
        keep = small if _looks_like_ring(ctx, extra, small.mask, big.mask) >= _GROUND_LIKE_EXTRA else big
        kept[next(i for i, k in enumerate(kept) if k is twin)] = keep
    return kept


def _looks_like_ring(ctx: _Context, part: np.ndarray, region: np.ndarray, outer: np.ndarray) -> float:
    """The share of `part`'s pixels whose looks are commoner in the ground just round `outer`
    (a ring 3 to 10 px out) than in `region`."""
    import cv2

    m8 = outer.astype(np.uint8)
    k3 = np.ones((3, 3), np.uint8)
    ring = (cv2.dilate(m8, k3, iterations=10) > 0) & ~(cv2.dilate(m8, k3, iterations=3) > 0) & ~ctx.refs
    if not ring.any() or not part.any():
        return 0.0
    K = ctx.app.n_looks
    hm = np.bincount(ctx.app.codes[region], minlength=K) / max(float(region.sum()), 1.0)
    hr = np.bincount(ctx.app.codes[ring], minlength=K) / float(ring.sum())
    return float((hr > hm)[ctx.app.codes[part]].mean())


def _ground_like(ctx: _Context, region: np.ndarray) -> float:
    """The share of the region's looks in common with those of the ground at the photo's edges."""
    if ctx.ground_looks is None or not region.any():
        return 0.0
    hr = np.bincount(ctx.app.codes[region], minlength=ctx.app.n_looks) / float(region.sum())
    return float(np.minimum(hr, ctx.ground_looks).sum())


def _threshold_regions(ctx: "_Context", hard_ground: np.ndarray, min_area: float) -> list[np.ndarray]:
    """Regions of either side of Otsu's level [1]_ on the working copy's lightness, cleaned of
    specks (an opening and a closing by a 3 x 3 square), that stay clear of the frame (and of what
    the hints hold to the ground): the whole
    answer where a member differs from its ground by lightness alone.

    References
    ----------
    .. [1] N. Otsu, "A threshold selection method from gray-level histograms," *IEEE Trans.
       Systems, Man, and Cybernetics*, vol. 9, no. 1, pp. 62-66, 1979.
    """
    import cv2

    from .lookalike import otsu

    L = cv2.GaussianBlur(ctx.app.lab[..., 0], (0, 0), 1.0)
    vals = L[~hard_ground]
    if not len(vals):
        return []
    t = otsu(vals, float(vals.min()), float(vals.max()))
    k3 = np.ones((3, 3), np.uint8)
    out = []
    # Clear of the frame, of the outside of a box and of points on the ground.
    held = cv2.dilate((hard_ground & ~ctx.refs).astype(np.uint8), k3).astype(bool)
    for side in (L > t, L <= t):
        m = cv2.morphologyEx((side & ~hard_ground).astype(np.uint8), cv2.MORPH_OPEN, k3)
        m = cv2.morphologyEx(m, cv2.MORPH_CLOSE, k3).astype(bool) & ~hard_ground
        out += [r for r in _components(m, min_area) if not (r & held).any()]
    return out


def _clear(c: Candidate) -> bool:
    """A candidate so plainly the member that no other search is needed (the references are
    still looked for before it is taken)."""
    k = c.criteria
    return (not c.cut_off and c.score >= _CLEAR_SCORE and k["edge"] >= 0.8 and k["distinct"] >= 0.9
            and k["size"] >= 0.3)


def _choose(ctx: _Context, cands: list[Candidate], hints: Hints) -> tuple[Candidate, Candidate | None]:
    """The best whole candidate not inside another, and the best other one; refuse where it is
    weak or the other close."""
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
            kinds[id(c)] = _reference(ctx, c.mask)
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
        if (c.cut_off and c.criteria["edge"] >= _HOLDER_EDGE and c.criteria["ground_like"] < GROUND_LIKE
                and (c.score > best.score or _part_of(ctx.app, best.mask, c.mask)) and not is_reference(c)):
            raise MeasurementError(f"the member is cut off by the image border (a region {c.describe()} runs off "
                                   "the photo); photograph the whole cut face with some ground around it, or give "
                                   "--seed X,Y on the member if it is another region")
    # The runner-up is another region, not another version of the same one.
    # Nor a region wrapped round it (the grapple, the pallet, the ground's darker patches).
    solid = fill_holes(best.mask, np.inf)
    others = [c for c in whole[1:] if _iou(fill_holes(c.mask, np.inf), solid) < 0.5
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
    ctx = _context(photo, texture_px, keep_out, hints)
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
    mask, fine_step, origin, filled = _refine(photo, ctx, region, hints)
    cand = _candidate(ctx, region, _criteria(ctx, region), "outline")
    return Segmentation(mask=mask, step=fine_step, origin=origin, shape=ctx.shape, candidates=(cand,), chosen=cand,
                        runner_up=None, working_step=float(math.sqrt(sx * sy)), hints=hints, appearance=ctx.app,
                        filled_holes=filled, references=ctx.refs, ground_colour=_ground_colour(ctx, region))


def _refine(photo, ctx: _Context, region: np.ndarray, hints: Hints) -> tuple[np.ndarray, tuple, tuple, int]:
    """The chosen region cut again at a finer step in a band round its boundary."""
    import cv2

    from .tone import LIGHT_OF_8BIT

    H, W = ctx.shape
    sx, sy = ctx.scale
    coarse = math.sqrt(sx * sy)
    ys, xs = np.nonzero(region)
    pad = 4
    x0 = max(0.0, (xs.min() - pad) * sx)
    y0 = max(0.0, (ys.min() - pad) * sy)
    x1 = min(float(W), (xs.max() + 1 + pad) * sx)
    y1 = min(float(H), (ys.max() + 1 + pad) * sy)
    c0, r0, c1, r1 = int(x0), int(y0), int(math.ceil(x1)), int(math.ceil(y1))
    fine = max(1.0, coarse / _FINE_RATIO, math.sqrt((c1 - c0) * (r1 - r0) / _FINE_PIXELS))
    n, m = max(8, round((c1 - c0) / fine)), max(8, round((r1 - r0) / fine))
    fx, fy = (c1 - c0) / n, (r1 - r0) / m
    crop = photo.color[r0:r1, c0:c1]
    small = crop if (n, m) == (c1 - c0, r1 - r0) else cv2.resize(crop, (n, m), interpolation=cv2.INTER_AREA)
    # The coarse region on the fine grid (pixel centres mapped), and the band either side of
    # its boundary where the fine cut is free.
    gx = ((np.arange(n) + 0.5) * fx + c0) / sx - 0.5
    gy = ((np.arange(m) + 0.5) * fy + r0) / sy - 0.5
    mx, my = np.meshgrid(gx.astype(np.float32), gy.astype(np.float32))
    shading = cv2.remap(ctx.shading, mx, my, cv2.INTER_LINEAR, borderMode=cv2.BORDER_REPLICATE)
    on = cv2.remap(region.astype(np.float32), mx, my, cv2.INTER_LINEAR, borderMode=cv2.BORDER_CONSTANT) > 0.5
    refs = cv2.remap(ctx.refs.astype(np.uint8), mx, my, cv2.INTER_NEAREST, borderMode=cv2.BORDER_CONSTANT) > 0
    band = max(2, int(round(2.0 * coarse / fine)))
    kern = cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (2 * band + 1, 2 * band + 1))
    inner = cv2.erode(on.astype(np.uint8), kern).astype(bool)
    outer = ~cv2.dilate(on.astype(np.uint8), kern).astype(bool)
    near = cv2.dilate(on.astype(np.uint8), cv2.getStructuringElement(cv2.MORPH_ELLIPSE,
                                                                      (6 * band + 1, 6 * band + 1))).astype(bool)
    ring = near & outer & ~refs
    app = appearance(LIGHT_OF_8BIT[small] / shading[..., None], looks=False)
    cm, cg = local_costs(app.lab, inner, ring if ring.any() else outer & ~refs, 3.0 * band)
    hard_ground = outer | refs
    if hints.outside:
        q = np.round(((np.asarray(hints.outside, float) - (c0, r0)) + 0.5) / (fx, fy) - 0.5).astype(int)
        ok = (q[:, 0] >= 0) & (q[:, 0] < n) & (q[:, 1] >= 0) & (q[:, 1] < m)
        hard_ground[q[ok, 1], q[ok, 0]] = True
    hard_member = inner & ~hard_ground
    if hints.seeds:
        q = np.round(((np.asarray(hints.seeds, float) - (c0, r0)) + 0.5) / (fx, fy) - 0.5).astype(int)
        q = np.clip(q, 0, [n - 1, m - 1])
        hard_member[q[:, 1], q[:, 0]] = True
    cut = min_cut(app, cm, cg, member=hard_member, ground=hard_ground)
    # The component of the cut that holds most of the coarse region.
    k, labels, stats, _ = cv2.connectedComponentsWithStats(cut.astype(np.uint8), connectivity=8)
    if k < 2:
        raise MeasurementError("nothing segmented: the member's edge could not be found")
    votes = np.bincount(labels[inner | on].ravel(), minlength=k)
    votes[0] = 0
    member = labels == int(np.argmax(votes))
    before = int((~member).sum())
    member = _fill_narrow_holes(member, min_width=2 * ctx.texture_px / fine)
    filled = before - int((~member).sum())
    return member, (fx, fy), (float(c0), float(r0)), filled


# ---------------------------------------------------------------------------------------------
def _pattern(light: np.ndarray) -> np.ndarray:
    """What shade leaves alone, per pixel of the working copy (see :func:`open_up`)."""
    from .regions import pattern_features

    return pattern_features(light, _TEXTURE_SIGMA)


def open_up(ctx: "_Context", region: np.ndarray, *, keep: np.ndarray | None = None) -> np.ndarray:
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


def _shade_trim(ctx: "_Context", region: np.ndarray, *, keep: np.ndarray | None = None) -> np.ndarray:
    """The region less the ground, lit or in shade, that it took in (a cast shadow beside the
    member, a tube's or box's bore, a lighter patch of sand): its parts of the ground's own
    chromaticity (see :func:`_ground_colour`).

    Only done where what is taken away does not lie all round what is left, and what is left is
    outlined by strong edges, nearly as much as the region was (a member of the ground's own
    colour stays whole), and never where a point a person put on the member (`keep`) is of the
    ground's colour (timber on timber decking)."""
    import cv2

    h, w = region.shape
    like = _ground_colour(ctx, region)
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
    edge_out = _criteria(ctx, out)["edge"]
    if out.sum() < _MIN_SHARE * h * w or edge_out < max(_SHADE_EDGE, _criteria(ctx, region)["edge"] - _SHADE_EDGE_LOSS):
        return region
    return out


def _ground_colour(ctx: "_Context", region: np.ndarray) -> np.ndarray | None:
    """Pixels of the ground's chromaticity (within a few of its spreads, from the border strip
    outside `region`), or of one a little paler (shade lit by the sky is paler and bluer: moved
    at most ``_SHADE_PALER`` of the way to grey, within 60 degrees of that way); None against a
    grey ground (chromaticity near grey), where shade cannot be told so.

    Chromaticity (each channel's share of the light) does not change with the light's strength,
    so a shaded patch of sand, grass or decking keeps the ground's."""
    h, w = region.shape
    strip = _border_strip(h, w) & ~ctx.refs & ~region
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


def local_costs(lab: np.ndarray, inner: np.ndarray, ring: np.ndarray, reach: float) -> tuple[np.ndarray, np.ndarray]:
    """Each pixel's cost of being member and ground under local colour models: Gaussians in
    CIELAB about the member's and the ground's mean colour near it (normalised convolution of
    `inner` and `ring` over `reach` px, so that shading, heartwood and sapwood, or a ground
    that changes along the member are followed), with one pooled spread."""
    from .regions import local_mean

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


def _on_strong_edges(app, region: np.ndarray, refs: np.ndarray | None, away: np.ndarray | None = None) -> float:
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


def _criteria(ctx: _Context, region: np.ndarray) -> dict:
    """The scoring criteria of a region of the working copy, each 0 to 1, and its frame contact."""
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
    edge = _on_strong_edges(app, region, ctx.refs)
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
    size = min(1.0, max(0.0, math.log10(area / (h * w) / _MIN_SHARE) / math.log10(0.3 / _MIN_SHARE)))
    # How much it looks like the ground at the photo's edges (a tube's bore shows that ground).
    ground_like = _ground_like(ctx, region)
    return {"size": size, "solidity": solidity, "edge": edge, "distinct": distinct, "centre": centre,
            "contact": _contact(region), "ground_like": ground_like}


def _candidate(ctx: _Context, region: np.ndarray, crit: dict, source: str) -> Candidate:
    ys, xs = np.nonzero(region)
    score = sum(SCORE_WEIGHTS[k] * crit[k] for k in SCORE_WEIGHTS)
    (cx, cy), = ctx.to_full([[xs.mean(), ys.mean()]])
    size = ((xs.max() - xs.min() + 1) * ctx.scale[0], (ys.max() - ys.min() + 1) * ctx.scale[1])
    return Candidate(mask=region, criteria=crit, score=float(score), centre=(float(cx), float(cy)), size=size,
                     source=source)


def _reference(ctx: _Context, region: np.ndarray) -> str | None:
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


def _nest(ctx: _Context, cands: list[Candidate]) -> list[Candidate]:
    """Mark each candidate that lies within another whole candidate's outline (it is part of
    it), or that is a small part of a region reaching the border (it is no member alone)."""
    filled = [fill_holes(c.mask, np.inf) for c in cands]
    sizes = [int(f.sum()) for f in filled]
    out = []
    for i, c in enumerate(cands):
        area = int(c.mask.sum())
        holders = [j for j in range(len(cands)) if j != i and sizes[j] > area
                   and (filled[j] & c.mask).sum() >= 0.9 * area and not _leaky_version(ctx, c, cands[j], filled[j])]
        # Only a credible member holds another: whole, and mostly outlined by strong edges (not
        # a loose region of dark ground round a bright tube wall).
        whole = [j for j in holders if not cands[j].cut_off and cands[j].criteria["edge"] >= _HOLDER_EDGE
                 and cands[j].criteria["ground_like"] < GROUND_LIKE and cands[j].reference is None]
        if whole:
            out.append(replace(c, inside=min(whole, key=lambda j: sizes[j])))
        elif any(sizes[i] < _MIN_SHARE_OF_HOLDER * sizes[j] for j in holders):
            out.append(replace(c, inside=min(holders, key=lambda j: sizes[j])))
        else:
            out.append(c)
    return out


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
        if app is not None and _on_strong_edges(app, c.mask, refs, away=reach) < NEIGHBOUR_OWN_EDGE:
            continue
        out.append(c)
    return out


def _leaky_version(ctx: _Context, c: Candidate, holder: Candidate, filled: np.ndarray) -> bool:
    """Whether `holder` is `c` with leaks into the ground rather than a larger object holding it:
    `c` sits on clearly stronger edges and scores better, the holder goes on beyond it (3 px
    out) along little of its outline (a tube's wall round its bore, or a log round its heartwood,
    goes all the way round), and what it adds looks like the ground round it more than like `c`
    (another part of the member does not)."""
    import cv2

    if not (c.criteria["edge"] - holder.criteria["edge"] >= _HELD_EDGE_GAP and c.score > holder.score):
        return False
    m = c.mask.astype(np.uint8)
    near = cv2.dilate(m, np.ones((5, 5), np.uint8)) > 0
    ring = (cv2.dilate(m, np.ones((7, 7), np.uint8)) > 0) & ~near
    if not ring.any() or float((ring & filled).sum()) > _LEAK_SHARE * float(ring.sum()):
        return False
    # What the holder adds looks like the ground round the holder, not like `c`.
    extra = filled & ~near
    h8 = filled.astype(np.uint8)
    k3 = np.ones((3, 3), np.uint8)
    ground = (cv2.dilate(h8, k3, iterations=10) > 0) & ~(cv2.dilate(h8, k3, iterations=3) > 0) & ~ctx.refs
    if extra.sum() < 20 or ground.sum() < 20:
        return True
    return float(nearer_model(ctx.features, extra, ground, c.mask, apart=1.0)[extra].mean()) >= 0.5


def _look_classes(app: Appearance) -> np.ndarray:
    """Palette entries grouped by colour (complete linkage: every two entries of a group within
    ΔE*ab 20 of each other), per pixel, with a 5 x 5 median against specks."""
    import cv2

    lab = app.palette[:, :3] / np.array([1.0, _CHROMA, _CHROMA], np.float32)
    d = np.sqrt(np.square(lab[:, None, :] - lab[None, :, :]).sum(axis=2))
    K = len(lab)
    label = np.arange(K)
    np.fill_diagonal(d, np.inf)
    # Merge the two closest groups while their farthest pair is within the bound; a merged
    # group's distance to another is the larger of its parts' (complete linkage).
    for _ in range(K - 1):
        i, j = np.unravel_index(np.argmin(d), d.shape)
        if d[i, j] > _CLASS_DE:
            break
        d[i, :] = d[:, i] = np.maximum(d[i, :], d[j, :])
        d[i, i] = np.inf
        d[j, :] = d[:, j] = np.inf
        label[label == j] = i
    label = np.unique(label, return_inverse=True)[1].astype(np.uint8)
    return cv2.medianBlur(label[app.codes], 5)


def _components(mask: np.ndarray, min_area: float) -> list[np.ndarray]:
    import cv2

    n, labels, stats, _ = cv2.connectedComponentsWithStats(mask.astype(np.uint8), connectivity=4)
    return [labels == i for i in range(1, n) if stats[i, cv2.CC_STAT_AREA] >= min_area]


def _contact(region: np.ndarray) -> float:
    """Share of the region's boundary that lies along the image frame (its outer two rings of
    pixels: the outermost is held to the ground in the cuts)."""
    import cv2

    near = int(region[:2].sum() + region[-2:].sum() + region[2:-2, :2].sum() + region[2:-2, -2:].sum())
    if near == 0:
        return 0.0
    cnts, _ = cv2.findContours(region.astype(np.uint8), cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    perimeter = sum(cv2.arcLength(c, True) for c in cnts)
    return 0.5 * near / max(perimeter, 1.0)


def _frame_share(region: np.ndarray) -> float:
    """Share of the image frame's length (its second ring of pixels) that the region covers."""
    ring = np.concatenate([region[1, 1:-1], region[-2, 1:-1], region[2:-2, 1], region[2:-2, -2]])
    return float(ring.mean())


def _frame(h: int, w: int) -> np.ndarray:
    m = np.zeros((h, w), bool)
    m[0] = m[-1] = True
    m[:, 0] = m[:, -1] = True
    return m


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


def _iou(a: np.ndarray, b: np.ndarray) -> float:
    return float((a & b).sum()) / max(float((a | b).sum()), 1.0)


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


def _border_strip(h: int, w: int) -> np.ndarray:
    b = max(2, int(round(_BORDER_SHARE * min(h, w))))
    m = np.zeros((h, w), bool)
    m[:b] = m[-b:] = True
    m[:, :b] = m[:, -b:] = True
    return m


def _rim(outside: np.ndarray) -> np.ndarray:
    """The ring just outside a box (the box's own edge pixels included)."""
    import cv2

    k = np.ones((5, 5), np.uint8)
    inside = ~outside
    return (cv2.dilate(inside.astype(np.uint8), k) > 0) & ~(cv2.erode(inside.astype(np.uint8), k) > 0)


def fill_holes(region: np.ndarray, min_area: float) -> np.ndarray:
    """Fill the holes of `region` smaller than `min_area` [px²]; larger ones are real openings."""
    import cv2

    ys, xs = np.nonzero(region.any(axis=1))[0], np.nonzero(region.any(axis=0))[0]
    if not len(ys):
        return region
    r0, r1, c0, c1 = max(0, ys[0] - 1), ys[-1] + 2, max(0, xs[0] - 1), xs[-1] + 2
    crop = region[r0:r1, c0:c1]
    n, labels, stats, _ = cv2.connectedComponentsWithStats((~crop).astype(np.uint8), connectivity=4)
    hh, ww = crop.shape
    x, y, bw, bh, area = stats.T
    outside = (x == 0) | (y == 0) | (x + bw == ww) | (y + bh == hh)
    fill = ~outside & (area < min_area)
    fill[0] = False
    out = region.copy()
    out[r0:r1, c0:c1] |= fill[labels]
    return out


def _fill_narrow_holes(member: np.ndarray, *, min_width: float) -> np.ndarray:
    """Fill the holes that are texture: narrower than `min_width` [px] or than a share
    (:data:`_HOLE_WIDTH_SHARE`) of the member's equivalent diameter (a check, a crack, the pith,
    a knot's dark ring); wider ones (a bore, a bolt hole) stay openings."""
    import cv2

    solid = fill_holes(member, np.inf)
    holes = (solid & ~member).astype(np.uint8)
    if not holes.any():
        return member
    diameter = 2.0 * math.sqrt(float(solid.sum()) / math.pi)
    width = max(min_width, _HOLE_WIDTH_SHARE * diameter)
    n, labels = cv2.connectedComponents(holes, connectivity=4)
    # Each hole's width: twice the largest distance from its pixels to the member.
    dist = cv2.distanceTransform(holes, cv2.DIST_L2, 5)
    widest = np.zeros(n)
    np.maximum.at(widest, labels.ravel(), dist.ravel())
    narrow = 2.0 * widest < width
    narrow[0] = False
    return member | narrow[labels]


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
