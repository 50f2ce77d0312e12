"""Candidates for the member on the working copy: grown from points a person put on it, or found
unattended, then nested.

Unattended, candidates come from three kinds of split (:mod:`tracer.inputs.photo.regions`):

- the ground as the image border shows it: a cut between a model of the border strip and a
  model of everything else, re-estimated twice (a member in the middle of its ground);
- the plainest split: either side of one grey level (Otsu's) over the light (a member that
  differs from its ground by lightness alone);
- each large region of one look that does not reach the border (a colour class of the palette),
  grown by a cut between its own model and that of everything round it (a bright tube wall on
  a dark face, a member beside larger things).

Each is scored (:mod:`tracer.inputs.photo.scoring`). Of the versions of one region (outlines that
nearly coincide) one is kept. A candidate inside another's outline (the bore of a tube, the
heartwood of a log) is part of it, unless it sits on clearly stronger edges and the larger one is
only it with leaks into the ground.

Hints (:mod:`tracer.inputs.photo.hints`) replace the search: points on the member seed the member's
model and are held to it, points on the ground and everything outside a box are held to the
ground. Scale references (a target and its sheet, rulers) are held to the ground and left out of
every model.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ...errors import MeasurementError
from .hints import Hints
from .masks import border_strip, fill_holes, iou
from .regions import CHROMA_WEIGHT as _CHROMA
from .regions import Appearance, first_guess, grow_region, nearer_model
from .scoring import (GROUND_LIKE, HOLDER_EDGE, MAX_CONTACT, MIN_SHARE, Candidate, criteria_of, frame_contact,
                      make_candidate)
from .trim import open_up, shade_trim
from .workcopy import WorkingCopy

__all__ = ["grow_from_seeds", "find_candidates"]

# A look is the member's at first where its share inside is more than this many times its share
# in the border strip: 1, and 2 against a mottled ground whose looks vary by chance between the two.
_EXCESS = (1.0, 2.0)
# At most this many one-look regions are grown into candidates.
_MAX_GROWN = 6
# Colour difference within which palette entries are one look class [ΔE*ab].
_CLASS_DE = 20.0
# A region whose edge support is this much above a larger one's round it is not held by it.
_HELD_EDGE_GAP = 0.3
# ... and round which the larger goes on along at most this share of its outline.
_LEAK_SHARE = 0.3
# A candidate inside a region that reaches the border is taken only if it is at least this share
# of that region (a tube's wall in a dark field is; the pith of a log whose face is cut off is not).
_MIN_SHARE_OF_HOLDER = 0.1
# A region running off the photo along less than this share of the frame may be a member cut off.
_CUT_OFF_FRAME = 0.2
# What a larger version of a region adds is ground if this much of its looks is the ground's round it.
_GROUND_LIKE_EXTRA = 0.5
# A candidate must be at least twice this thick somewhere [px of the working copy].
_MIN_HALF_WIDTH = 1.5
# A candidate scoring this much, whole, distinct and outlined by strong edges ends the search.
_CLEAR_SCORE = 4.2


def grow_from_seeds(ctx: WorkingCopy, hints: Hints) -> list[Candidate]:
    """The member grown from the points on it (`hints`' seeds), its openings made holes and the
    ground it took in trimmed (:mod:`tracer.inputs.photo.trim`): a list of that one candidate.

    Raises
    ------
    MeasurementError
        A seed on a scale reference or on the ground; seeds on separate regions; the member cut
        off by the image border.
    """
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
    ground0 = border_strip(h, w) if hints.box is None else _rim(ctx.outside_box(hints.box))
    ground0 = (ground0 | ctx.disc(hints.outside, r)) & ~member0 & ~ctx.refs
    cut = grow_region(app, member0, ground0, hard_member=hard_member, hard_ground=hard_ground, rounds=3)
    n, labels = cv2.connectedComponents(cut.astype(np.uint8), connectivity=4)
    seeds_small = np.round(ctx.to_small(hints.seeds)).astype(int)
    seeds_small = np.clip(seeds_small, 0, [w - 1, h - 1])
    ids = labels[seeds_small[:, 1], seeds_small[:, 0]]
    region = np.isin(labels, ids[ids > 0])
    base = ctx.disc(hints.seeds, 1.0)
    if region.sum() <= 1.5 * base.sum() or region.sum() < 0.5 * MIN_SHARE * h * w:
        x, y = hints.seeds[0]
        raise MeasurementError(f"--seed {x:g},{y:g} is on the background as the colours and textures round it "
                               "read: nothing grows from it that differs from its surroundings; pick a point well "
                               "inside the cut face, or add --outside X,Y on the ground")
    if len(set(ids.tolist())) > 1:
        pts = " and ".join(f"{x:g},{y:g}" for x, y in hints.seeds)
        raise MeasurementError(f"--seed {pts} fall on separate regions; give points on one member, or a --box "
                               "round it")
    region = open_up(ctx, fill_holes(region, (2 * ctx.texture_px / ctx.scale[0]) ** 2), keep=base)
    region = shade_trim(ctx, region, keep=base)
    crit = criteria_of(ctx, region)
    cand = make_candidate(ctx, region, crit, "hint")
    if cand.cut_off:
        x, y = hints.seeds[0]
        raise MeasurementError(f"the member at --seed {x:g},{y:g} is cut off by the image border; photograph the "
                               "whole cut face with some ground around it")
    return [cand]


def find_candidates(ctx: WorkingCopy, hints: Hints) -> list[Candidate]:
    """Candidates from the border's ground, from one grey level and from one-look regions, scored,
    one version of each kept, and nested (unattended, or with a box and points on the ground)."""
    import cv2

    app = ctx.app
    h, w = app.shape
    # The image frame is held to the ground (as the outside of a box is): where the looks are
    # alike, the cut then keeps the ground with the frame instead of taking it at random.
    hard_ground = ctx.refs | ctx.disc(hints.outside, 1.0) | ctx.outside_box(hints.box) | _frame(h, w)
    strip = border_strip(h, w) if hints.box is None else _rim(ctx.outside_box(hints.box))
    r = 0.04 * min(h, w)
    ground0 = (strip | ctx.disc(hints.outside, r)) & ~ctx.refs
    inside = ~ground0 & ~hard_ground
    # The member's first model: what is inside and not explained by the ground's looks, a look
    # counting where its share inside is above its share in the strip (or, against a mottled
    # ground whose looks vary by chance between the two, well above it): one cut for each,
    # the second only where the first found nothing clear.
    min_area = MIN_SHARE * h * w
    fill = (2 * ctx.texture_px / ctx.scale[0]) ** 2
    cands: list[Candidate] = []

    def add(region: np.ndarray, source: str) -> None:
        # A sliver (nowhere three pixels of the working copy thick) is no member's face.
        if cv2.distanceTransform(np.pad(region, 1).astype(np.uint8), cv2.DIST_L2, 3).max() >= _MIN_HALF_WIDTH:
            cands.append(make_candidate(ctx, region, criteria_of(ctx, region), source))

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
            contact = frame_contact(reg)
            if contact > MAX_CONTACT:
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


def _one_version_each(ctx: WorkingCopy, cands: list[Candidate]) -> list[Candidate]:
    """Of the versions of one region (outlines that nearly coincide), keep one: the smaller where
    what the larger adds looks like the ground round it (a tube's bore partly taken in), else the
    larger (a heartwood left out as if it were an opening); alike ones by score."""
    kept: list[Candidate] = []
    solid = {id(c): fill_holes(c.mask, np.inf) for c in cands}
    for c in sorted(cands, key=lambda c: -c.score):
        twin = next((k for k in kept if iou(solid[id(c)], solid[id(k)]) > 0.7), None)
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


def _looks_like_ring(ctx: WorkingCopy, part: np.ndarray, region: np.ndarray, outer: np.ndarray) -> float:
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


def _threshold_regions(ctx: WorkingCopy, hard_ground: np.ndarray, min_area: float) -> list[np.ndarray]:
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


def _nest(ctx: WorkingCopy, cands: list[Candidate]) -> list[Candidate]:
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
        whole = [j for j in holders if not cands[j].cut_off and cands[j].criteria["edge"] >= HOLDER_EDGE
                 and cands[j].criteria["ground_like"] < GROUND_LIKE and cands[j].reference is None]
        if whole:
            out.append(replace(c, inside=min(whole, key=lambda j: sizes[j])))
        elif any(sizes[i] < _MIN_SHARE_OF_HOLDER * sizes[j] for j in holders):
            out.append(replace(c, inside=min(holders, key=lambda j: sizes[j])))
        else:
            out.append(c)
    return out


def _leaky_version(ctx: WorkingCopy, c: Candidate, holder: Candidate, filled: np.ndarray) -> bool:
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


def _frame_share(region: np.ndarray) -> float:
    """Share of the image frame's length (its second ring of pixels) that the region covers."""
    ring = np.concatenate([region[1, 1:-1], region[-2, 1:-1], region[2:-2, 1], region[2:-2, -2]])
    return float(ring.mean())


def _frame(h: int, w: int) -> np.ndarray:
    m = np.zeros((h, w), bool)
    m[0] = m[-1] = True
    m[:, 0] = m[:, -1] = True
    return m


def _rim(outside: np.ndarray) -> np.ndarray:
    """The ring just outside a box (the box's own edge pixels included)."""
    import cv2

    k = np.ones((5, 5), np.uint8)
    inside = ~outside
    return (cv2.dilate(inside.astype(np.uint8), k) > 0) & ~(cv2.erode(inside.astype(np.uint8), k) > 0)
