"""Irregular members for synthetic photos: logs with bark, waney-edged boards, corroded steel.

Each builder returns :class:`~tracer.section.geometry.Section` objects made from numpy outlines, in mm
with x right and y up, for :func:`tracer.inputs.photo.renders.synth.render` to draw (a log or a board with bark
also returns the wood inside the bark, for ``Scene.under_bark``). Shapes are random but fixed
by their seed. All of them are invented members, not records of real ones.
"""

from __future__ import annotations

import math

import numpy as np

from ....section.geometry import Section

__all__ = ["log_section", "waney_board", "corroded_section"]


def log_section(*, d: float, bark: float = 0.0, wobble: float = 0.03, tears: int = 2,
                centre: tuple[float, float] = (0.0, 0.0), seed: int = 0, n: int = 1440) -> tuple[Section, Section]:
    """A log's cut end: a round-ish wood outline and, round it, bark with a ragged outside.

    Parameters
    ----------
    d : float
        Mean diameter of the wood [mm].
    bark : float
        The bark's median thickness [mm]: the median over the wood's outline of the distance
        to the outside (as shapely measures it); 0 for a debarked log.
    wobble : float
        Size of the outline's low harmonics (2nd to 5th order), as a share of the radius.
    tears : int
        Places where the bark is torn thin (to a fifth to a half of its thickness) along 5 to
        15 % of the round, with ragged ends.
    centre : (x, y)
        The log's centre [mm].
    seed : int
    n : int
        Vertices of each outline.

    Returns
    -------
    section, under_bark : Section
        The whole log as seen, bark included, and the wood inside the bark (the same object as
        the whole without bark). Both outlines are star-shaped about `centre`, so always simple.
    """
    import shapely

    if not d > 0:
        raise ValueError(f"log_section: d = {d!r}; give a diameter above 0 mm")
    if not 0 <= bark < d / 4:
        raise ValueError(f"log_section: bark = {bark!r} mm; give 0 or more, below d/4 = {d / 4:g} mm")
    rng = np.random.default_rng(seed)
    th = np.arange(n) * (2 * math.pi / n)
    k = np.arange(2, 6)
    amp = wobble * rng.normal(0.0, 1.0, 4) / (k - 1)
    r_wood = d / 2 * (1.0 + amp @ np.cos(np.outer(k, th) + rng.uniform(0, 2 * math.pi, 4)[:, None]))
    wood = np.column_stack([centre[0] + r_wood * np.cos(th), centre[1] + r_wood * np.sin(th)])
    if bark == 0:
        s = Section(wood)
        return s, s
    slow = 0.12 * rng.normal(0.0, 1.0, 6) / np.arange(1, 7) @ np.cos(np.outer(np.arange(3, 9), th)
                                                                       + rng.uniform(0, 2 * math.pi, 6)[:, None])
    high = np.arange(12, 80)                                   # plates and flakes of the outer bark
    rough = (0.55 / high) * rng.normal(0.0, 1.0, len(high)) @ np.cos(                 # spread about 0.15
        np.outer(high, th) + rng.uniform(0, 2 * math.pi, len(high))[:, None])
    fine = np.arange(80, 240)                                  # fibres, ragged in places only
    places = np.clip(1.5 * (rng.normal(0.0, 1.0, 4) @ np.cos(np.outer(np.arange(2, 6), th)
                                                             + rng.uniform(0, 2 * math.pi, 4)[:, None])) - 0.5, 0, 1)
    rough = rough + places * ((0.9 / fine) * rng.normal(0.0, 1.0, len(fine)) @ np.cos(
        np.outer(fine, th) + rng.uniform(0, 2 * math.pi, len(fine))[:, None]))
    torn = np.ones(n)
    for _ in range(tears):
        at, half = rng.uniform(0.0, 2 * math.pi), rng.uniform(0.05, 0.15) * math.pi
        off = np.abs(np.angle(np.exp(1j * (th - at)))) + 0.05 * rough             # ragged ends
        torn = np.where(off < half, np.minimum(torn, rng.uniform(0.2, 0.5)), torn)
    t = np.clip((1.0 + slow + rough) * torn, 0.15, 1.8)
    # Scale so that the median distance from the wood to the outside (shapely's, along the
    # normal, which the roughness makes shorter than the radial one) is `bark`.
    probe = shapely.points(wood[::4])
    scale = bark
    for _ in range(3):
        r_out = r_wood + scale * t
        ring = shapely.LinearRing(np.column_stack([centre[0] + r_out * np.cos(th), centre[1] + r_out * np.sin(th)]))
        scale *= bark / float(np.median(shapely.distance(ring, probe)))
    r_out = r_wood + scale * t
    whole = np.column_stack([centre[0] + r_out * np.cos(th), centre[1] + r_out * np.sin(th)])
    return Section(whole), Section(wood)


def waney_board(*, b: float, h: float, log_d: float, wane: float, bark: float = 0.0, offset: float = 0.0,
                seed: int = 0) -> tuple[Section, Section]:
    """A board sawn near the outside of a log, so that the log's round (and its bark) shows at
    its top corners: a waney edge.

    Parameters
    ----------
    b, h : float
        Width and thickness of the sawn board [mm] (bottom-left corner at the origin).
    log_d : float
        Diameter of the log's wood [mm].
    wane : float
        How far down the more waney side the round runs [mm] (about: the log's outline wobbles a
        little).
    bark : float
        The bark's median thickness on the round [mm]; 0 for none.
    offset : float
        The log's axis this far right of the board's middle [mm]: the left side is the more
        waney for offset > 0.

    Returns
    -------
    section, under_bark : Section
        The board as seen, bark included, and its wood (the same object without bark).
    """
    import shapely

    if not (b > 0 and h > 0):
        raise ValueError(f"waney_board: b = {b!r}, h = {h!r}; give sizes above 0 mm")
    if not 0 < wane < h:
        raise ValueError(f"waney_board: wane = {wane!r} mm; give more than 0 and less than h = {h:g} mm")
    xc = b / 2 + offset
    far = max(xc, b - xc)
    if not log_d / 2 > far:
        raise ValueError(f"waney_board: a log of d = {log_d:g} mm cannot reach both sides of the board "
                         f"({far:g} mm from its axis); give log_d above {2 * far:g} mm")
    yc = h - wane - math.sqrt((log_d / 2) ** 2 - far ** 2)
    if yc + log_d / 2 <= h:
        raise ValueError(f"waney_board: wane = {wane:g} mm leaves no sawn top face on a log of d = {log_d:g} mm; "
                         "give a smaller wane or a larger log")
    whole, wood = log_section(d=log_d, bark=bark, wobble=0.008, tears=1, centre=(xc, yc), seed=seed)
    board = shapely.box(0.0, 0.0, b, h)
    section = Section.from_shapely(board.intersection(whole.to_shapely()))
    return section, (section if bark == 0 else Section.from_shapely(board.intersection(wood.to_shapely())))


def corroded_section(section: Section, *, loss: float = 0.3, pits: int = 10, depth: float = 1.5, size: float = 4.0,
                     where: tuple[float, float, float, float] | None = None, seed: int = 0) -> Section:
    """`section` after corrosion: its faces eaten unevenly and pitted.

    Parameters
    ----------
    loss : float
        Largest general loss of each face [mm]: every boundary point moves into the material by
        between 0 and `loss`, varying smoothly along the boundary (every 8 mm or so).
    pits : int
        Number of pits, spread at random along the outside boundary.
    depth, size : float
        Each pit's depth and width [mm] (each varies by +-30 %).
    where : (x0, y0, x1, y1) or None
        Keep the pits inside this box [mm] (one flange, say); None: anywhere on the outside.
    seed : int

    Returns
    -------
    Section
        The corroded section (a polygon dense along its boundary, about 0.5 mm between points).
    """
    import shapely

    if not (loss >= 0 and depth >= 0 and size > 0 and pits >= 0):
        raise ValueError(f"corroded_section: loss = {loss!r}, depth = {depth!r}, size = {size!r}, pits = {pits!r}; "
                         "give loss, depth and pits of 0 or more and size above 0")
    rng = np.random.default_rng(seed)
    parts = []
    for part in section.parts:
        rings = [_eaten(r, loss, rng) for r in (part.exterior, *part.holes)]
        parts.append(shapely.Polygon(rings[0], rings[1:]))
    shape = shapely.make_valid(shapely.union_all(parts))
    if pits:
        rim = np.vstack([_dense(p.exterior, 0.5) for p in section.parts])
        if where is not None:
            x0, y0, x1, y1 = where
            rim = rim[(rim[:, 0] >= x0) & (rim[:, 0] <= x1) & (rim[:, 1] >= y0) & (rim[:, 1] <= y1)]
        if len(rim) == 0:
            raise ValueError(f"corroded_section: no boundary inside where = {where!r} to put pits on")
        centres = rim[rng.integers(len(rim), size=pits)]
        blobs = []
        for c in centres:                                       # a few dozen pits at most
            r = 0.5 * size * rng.uniform(0.7, 1.3)
            d = depth * rng.uniform(0.7, 1.3)
            inward = shapely.Point(c).buffer(r).intersection(shape)
            if inward.is_empty:
                continue
            out_dir = np.asarray(c) - np.array([inward.centroid.x, inward.centroid.y])
            out_dir = out_dir / max(np.hypot(*out_dir), 1e-9)
            a = np.arange(24) * (2 * math.pi / 24)
            rr = r * (1.0 + 0.15 * np.cos(2 * a + rng.uniform(0, 6.3)) + 0.1 * np.cos(3 * a + rng.uniform(0, 6.3)))
            centre = np.asarray(c) + out_dir * (r - d)
            blobs.append(shapely.Polygon(np.column_stack([centre[0] + rr * np.cos(a), centre[1] + rr * np.sin(a)])))
        shape = shapely.make_valid(shape.difference(shapely.union_all(blobs)))
    polys = [g for g in getattr(shape, "geoms", [shape]) if g.geom_type == "Polygon"]
    biggest = max(g.area for g in polys)
    polys = [g for g in polys if g.area > 0.01 * biggest]     # crumbs a pit cut off fall away
    return Section.from_shapely(shapely.MultiPolygon(polys) if len(polys) > 1 else polys[0])


# ---------------------------------------------------------------------------------------------
def _dense(ring: np.ndarray, step: float) -> np.ndarray:
    """The closed ring with points added so that none is more than `step` [mm] from the next."""
    nxt = np.roll(ring, -1, axis=0)
    count = np.maximum(1, np.ceil(np.hypot(*(nxt - ring).T) / step).astype(int))
    seg = np.repeat(np.arange(len(ring)), count)
    t = (np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)) / np.repeat(count, count)
    return ring[seg] + (nxt[seg] - ring[seg]) * t[:, None]


def _eaten(ring: np.ndarray, loss: float, rng: np.random.Generator) -> np.ndarray:
    """The ring moved into the material (on its left) by a smooth random 0..`loss` [mm]."""
    pts = _dense(ring, 0.5)
    if loss == 0:
        return pts
    e = np.roll(pts, -1, axis=0) - pts
    left = np.column_stack([-e[:, 1], e[:, 0]]) / np.maximum(np.hypot(e[:, 0], e[:, 1]), 1e-12)[:, None]
    normal = left + np.roll(left, 1, axis=0)                    # at each point, between its two edges
    normal /= np.maximum(np.hypot(normal[:, 0], normal[:, 1]), 1e-12)[:, None]
    along = np.concatenate([[0.0], np.cumsum(np.hypot(e[:, 0], e[:, 1]))])
    knots = max(3, int(along[-1] / 8.0))
    level = rng.uniform(0.0, 1.0, knots + 1)
    level[-1] = level[0]                                        # closes smoothly
    amount = loss * np.interp(along[:-1], np.linspace(0.0, along[-1], knots + 1), level)
    return pts + amount[:, None] * normal
