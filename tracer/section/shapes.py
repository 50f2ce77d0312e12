"""Parametric sections from measured dimensions.

Every function takes its dimensions as keyword arguments in millimetres and returns a
:class:`~tracer.section.geometry.Section` with the bottom-left corner of its bounding box at the origin
(DESIGN.md). Impossible dimensions raise :class:`~tracer.errors.ShapeError` naming the
dimension.

Arcs (root fillets, rounded corners, circles) become polygons by the chord rule below. Every
builder also takes ``chord_angle`` [rad], the largest chord angle, to make a coarser copy (for
Monte Carlo draws, whose spread does not depend on it to the digits reported).

Chord rule
----------
An arc of angle Φ is split into ``n = ceil(Φ / ALPHA_MAX)`` equal chords with every vertex on
the true arc, ``ALPHA_MAX = 2.74e-3 rad`` (0.157°). A regular polygon inscribed in a circle
has relative errors of α²/6 in area and α²/3 in second moments (α the chord angle); the full
circle is the worst case, since there the whole boundary is arc and the missing slivers lie at
the extreme fibre. ``ALPHA_MAX`` makes α²/3 = 2.5e-6, four times below the 1e-5 goal for every
reported property; an extreme fibre on an arc is short by at most r·α²/8 < 1e-6 r. Fillets
and rounded corners make up a smaller share of their section than a circle does of itself, so
their errors are smaller still. ``tests/test_shapes.py`` checks the goal against closed forms
and against a 16 times finer discretisation.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from ..errors import GeometryError, ShapeError
from .geometry import Section

__all__ = [
    "ALPHA_MAX",
    "SHAPE_KINDS",
    "CORNERS",
    "arc_points",
    "make_shape",
    "rectangle",
    "i_section",
    "channel",
    "angle",
    "tee",
    "round_bar",
    "tube",
    "box",
]

#: Largest chord angle of an arc [rad] (see the chord rule above).
ALPHA_MAX = 2.74e-3

#: Corner names of a rectangle's wane, as written in section sheets.
CORNERS = ("bottom_left", "bottom_right", "top_right", "top_left")


def rectangle(*, b: float, h: float, wane: float | Sequence[float] | Mapping[str, float | Sequence[float]] | None = None,
              wane_form: str = "round", chord_angle: float | None = None) -> Section:
    """A solid rectangle, with waney (rounded or bevelled) corners as on salvaged timber.

    Parameters
    ----------
    b : float
        Width [mm].
    h : float
        Depth [mm].
    wane : float, pair or mapping, optional
        Size of the wane [mm]: one number for all four corners, or a mapping from corner name
        (``bottom_left bottom_right top_right top_left``) to a size. A size is a number (radius
        of a round corner, or both legs of a 45° bevel) or a pair ``[x, y]``: a bevel whose legs
        run `x` along the horizontal face and `y` along the vertical edge.
    wane_form : {"round", "bevel"}
        How a single-number wane is cut.

    Examples
    --------
    >>> from tracer.section.properties import area_moments
    >>> round(area_moments(rectangle(b=47, h=150, wane={"top_left": [10, 20]}, wane_form="bevel")).A, 9)
    6950.0
    """
    kind = "rectangle"
    _positive(kind, b=b, h=h)
    if wane_form not in ("round", "bevel"):
        raise ShapeError(f"rectangle: wane_form = {wane_form!r}; use 'round' or 'bevel'")
    if wane is None:
        sizes: dict[str, float | Sequence[float]] = {}
    elif isinstance(wane, Mapping):
        unknown = sorted(set(wane) - set(CORNERS))
        if unknown:
            raise ShapeError(f"rectangle: wane corner {unknown[0]!r} is not one of {', '.join(CORNERS)}")
        sizes = dict(wane)
    else:
        sizes = {c: wane for c in CORNERS}
    corners = np.array([[0.0, 0.0], [b, 0.0], [b, h], [0.0, h]])
    radii = np.zeros(4)
    bevels: dict[int, tuple[float, float]] = {}
    for i, name in enumerate(CORNERS):
        if name not in sizes:
            continue
        size = sizes[name]
        if np.ndim(size) == 0:
            s = _number(f"rectangle: wane {name}", size)
            if s == 0:
                continue
            if wane_form == "round":
                radii[i] = s
            else:
                bevels[i] = (s, s)
        else:
            pair = np.asarray(size, dtype=float) if len(size) == 2 else None
            if pair is None or not np.all(np.isfinite(pair)) or np.any(pair < 0):
                raise ShapeError(f"rectangle: wane {name} = {list(size)!r} must be a size or a pair [x, y] of sizes")
            if np.any(pair > 0):
                bevels[i] = (float(pair[0]), float(pair[1]))
    # A wane must leave part of each face straight: the two corners of a face share its length.
    for name, (i, j), along, length in (
        ("bottom face", (0, 1), 0, b), ("top face", (3, 2), 0, b),
        ("left edge", (0, 3), 1, h), ("right edge", (1, 2), 1, h),
    ):
        used = sum(radii[k] if k not in bevels else bevels[k][along] for k in (i, j))
        if used > length:
            raise ShapeError(f"rectangle: the wane on the {name} adds up to {used:.6g} mm, more than its length "
                             f"{length:.6g} mm; reduce the wane")
    return Section(_corner_polygon(corners, radii, _bevel_legs(corners, bevels), chord_angle))


def i_section(*, h: float, b: float, tw: float, tf: float, r: float = 0.0, chord_angle: float | None = None) -> Section:
    """A doubly symmetric I-section with parallel flanges and root fillets (IPE, HE, UB, W).

    Parameters
    ----------
    h, b : float
        Depth and flange width [mm].
    tw, tf : float
        Web and flange thickness [mm].
    r : float
        Root radius between web and flanges [mm].
    """
    kind = "i-section"
    _positive(kind, h=h, b=b, tw=tw, tf=tf)
    _nonnegative(kind, r=r)
    _less(kind, "tw", tw, "b", b)
    _less(kind, "2*tf", 2 * tf, "h", h)
    _fits(kind, r, [("(b - tw)/2", (b - tw) / 2), ("h/2 - tf", h / 2 - tf)])
    wl, wr = (b - tw) / 2, (b + tw) / 2
    pts = [(0, 0), (b, 0), (b, tf), (wr, tf), (wr, h - tf), (b, h - tf), (b, h), (0, h),
           (0, h - tf), (wl, h - tf), (wl, tf), (0, tf)]
    rad = [0, 0, 0, r, r, 0, 0, 0, 0, r, r, 0]
    return Section(_corner_polygon(np.array(pts, float), np.array(rad, float), None, chord_angle))


def channel(*, h: float, b: float, tw: float, tf: float, r: float = 0.0, chord_angle: float | None = None) -> Section:
    """A channel with parallel flanges and root fillets (UPE, PFC), web on the left.

    Parameters
    ----------
    h, b : float
        Depth and flange width, web included [mm].
    tw, tf : float
        Web and flange thickness [mm].
    r : float
        Root radius [mm].
    """
    kind = "channel"
    _positive(kind, h=h, b=b, tw=tw, tf=tf)
    _nonnegative(kind, r=r)
    _less(kind, "tw", tw, "b", b)
    _less(kind, "2*tf", 2 * tf, "h", h)
    _fits(kind, r, [("b - tw", b - tw), ("h/2 - tf", h / 2 - tf)])
    pts = [(0, 0), (b, 0), (b, tf), (tw, tf), (tw, h - tf), (b, h - tf), (b, h), (0, h)]
    rad = [0, 0, 0, r, r, 0, 0, 0]
    return Section(_corner_polygon(np.array(pts, float), np.array(rad, float), None, chord_angle))


def angle(*, h: float, b: float, t: float, r: float = 0.0, rt: float = 0.0, chord_angle: float | None = None) -> Section:
    """An equal or unequal angle: vertical leg `h` on the left, horizontal leg `b` at the bottom.

    Parameters
    ----------
    h, b : float
        Leg lengths [mm].
    t : float
        Leg thickness [mm].
    r : float
        Root radius [mm].
    rt : float
        Toe radius, at the inner corner of each leg's end [mm].
    """
    kind = "angle"
    _positive(kind, h=h, b=b, t=t)
    _nonnegative(kind, r=r, rt=rt)
    _less(kind, "t", t, "b", b)
    _less(kind, "t", t, "h", h)
    _fits(kind, r + rt, [("b - t", b - t), ("h - t", h - t)], name="r + rt")
    _fits(kind, rt, [("t", t)], name="rt")
    pts = [(0, 0), (b, 0), (b, t), (t, t), (t, h), (0, h)]
    rad = [0, 0, rt, r, rt, 0]
    return Section(_corner_polygon(np.array(pts, float), np.array(rad, float), None, chord_angle))


def tee(*, h: float, b: float, tw: float, tf: float, r: float = 0.0, chord_angle: float | None = None) -> Section:
    """A tee with the flange on top and root fillets.

    Parameters
    ----------
    h, b : float
        Overall depth and flange width [mm].
    tw, tf : float
        Stem (web) and flange thickness [mm].
    r : float
        Root radius [mm].
    """
    kind = "tee"
    _positive(kind, h=h, b=b, tw=tw, tf=tf)
    _nonnegative(kind, r=r)
    _less(kind, "tw", tw, "b", b)
    _less(kind, "tf", tf, "h", h)
    _fits(kind, r, [("(b - tw)/2", (b - tw) / 2), ("h - tf", h - tf)])
    wl, wr = (b - tw) / 2, (b + tw) / 2
    pts = [(wl, 0), (wr, 0), (wr, h - tf), (b, h - tf), (b, h), (0, h), (0, h - tf), (wl, h - tf)]
    rad = [0, 0, r, 0, 0, 0, 0, r]
    return Section(_corner_polygon(np.array(pts, float), np.array(rad, float), None, chord_angle))


def round_bar(*, d: float, chord_angle: float | None = None) -> Section:
    """A solid round of diameter `d` [mm].

    >>> from tracer.section.properties import area_moments
    >>> abs(area_moments(round_bar(d=100)).A / (math.pi * 50**2) - 1) < 1e-5
    True
    """
    _positive("round", d=d)
    return Section(_circle(d / 2, d / 2, d / 2, chord_angle))


def tube(*, d: float, t: float, chord_angle: float | None = None) -> Section:
    """A circular hollow section: outside diameter `d`, wall thickness `t` [mm]."""
    kind = "tube"
    _positive(kind, d=d, t=t)
    _less(kind, "t", t, "d/2", d / 2)
    return Section(_circle(d / 2, d / 2, d / 2, chord_angle), [_circle(d / 2, d / 2, d / 2 - t, chord_angle)])


def box(*, h: float, b: float, t: float, ro: float = 0.0, ri: float = 0.0, chord_angle: float | None = None) -> Section:
    """A rectangular hollow section with outer and inner corner radii.

    Parameters
    ----------
    h, b : float
        Outside depth and width [mm].
    t : float
        Wall thickness [mm].
    ro, ri : float
        Outer and inner corner radius [mm]. Hot-finished sections are often ro = 1.5 t,
        ri = t; cold-formed ones ri = ro - t (common practice; check the product standard).
    """
    kind = "box"
    _positive(kind, h=h, b=b, t=t)
    _nonnegative(kind, ro=ro, ri=ri)
    _less(kind, "2*t", 2 * t, "b", b)
    _less(kind, "2*t", 2 * t, "h", h)
    _fits(kind, ro, [("b/2", b / 2), ("h/2", h / 2)], name="ro")
    _fits(kind, ri, [("b/2 - t", b / 2 - t), ("h/2 - t", h / 2 - t)], name="ri")
    outer = np.array([(0, 0), (b, 0), (b, h), (0, h)], float)
    inner = np.array([(t, t), (b - t, t), (b - t, h - t), (t, h - t)], float)
    try:
        return Section(_corner_polygon(outer, np.full(4, ro), None, chord_angle),
                       [_corner_polygon(inner, np.full(4, ri), None, chord_angle)])
    except GeometryError:
        raise ShapeError(f"box: ro = {ro:.6g} mm is too large for ri = {ri:.6g} mm and t = {t:.6g} mm: the corners "
                         "would cut through the wall; ro should be about ri + t") from None


#: Parametric kinds, their builders and dimension names (DESIGN.md, section sheet).
SHAPE_KINDS: dict[str, tuple] = {
    "rectangle": (rectangle, ("b", "h"), ("wane", "wane_form")),
    "i-section": (i_section, ("h", "b", "tw", "tf"), ("r",)),
    "channel": (channel, ("h", "b", "tw", "tf"), ("r",)),
    "angle": (angle, ("h", "b", "t"), ("r", "rt")),
    "tee": (tee, ("h", "b", "tw", "tf"), ("r",)),
    "round": (round_bar, ("d",), ()),
    "tube": (tube, ("d", "t"), ()),
    "box": (box, ("h", "b", "t"), ("ro", "ri")),
}


def make_shape(kind: str, *, chord_angle: float | None = None, **dims: object) -> Section:
    """Build a parametric section by its sheet name, e.g. ``make_shape("tube", d=168.3, t=8)``.

    `chord_angle` [rad] overrides :data:`ALPHA_MAX` (a coarser copy for Monte Carlo draws).

    Raises
    ------
    ShapeError
        For an unknown kind, a missing or unknown dimension, or impossible dimensions.
    """
    if kind not in SHAPE_KINDS:
        raise ShapeError(f"kind = {kind!r} is not a shape; use one of {', '.join(SHAPE_KINDS)}")
    builder, required, optional = SHAPE_KINDS[kind]
    missing = [d for d in required if d not in dims]
    if missing:
        raise ShapeError(f"{kind}: dimension {missing[0]!r} is missing; {article(kind)} {kind} needs "
                         f"{', '.join(required)}")
    unknown = [d for d in dims if d not in required + optional]
    if unknown:
        allowed = ", ".join(required + optional)
        raise ShapeError(f"{kind}: {unknown[0]!r} is not a dimension of {article(kind)} {kind}; use {allowed}")
    return builder(**dims, chord_angle=chord_angle)


def arc_points(cx: float, cy: float, r: float, a0: float, a1: float, chord_angle: float | None = None) -> np.ndarray:
    """Points on an arc by the chord rule, both ends included.

    Parameters
    ----------
    cx, cy : float
        Centre [mm].
    r : float
        Radius [mm].
    a0, a1 : float
        Start and end angle [rad]; the arc runs from `a0` to `a1` in that sense.
    chord_angle : float, optional
        Largest chord angle [rad]; :data:`ALPHA_MAX` by default.

    Returns
    -------
    ndarray, shape (n + 1, 2)
        ``n = ceil(|a1 - a0| / ALPHA_MAX)`` chords.
    """
    n = max(1, math.ceil(abs(a1 - a0) / (chord_angle or ALPHA_MAX)))
    a = np.linspace(a0, a1, n + 1)
    return np.column_stack([cx + r * np.cos(a), cy + r * np.sin(a)])


def article(word: str) -> str:
    """'a' or 'an' before a shape's name, for messages."""
    return "an" if word[:1] in "aeiou" else "a"


# ---------------------------------------------------------------------------------------------
def _circle(cx: float, cy: float, r: float, chord_angle: float | None = None) -> np.ndarray:
    # A multiple of 4 chords puts vertices on the four extreme fibres.
    n = 4 * math.ceil(2 * math.pi / (chord_angle or ALPHA_MAX) / 4)
    a = np.arange(n) * (2 * math.pi / n)
    return np.column_stack([cx + r * np.cos(a), cy + r * np.sin(a)])


def _corner_polygon(corners: np.ndarray, radii: np.ndarray, bevels: dict[int, tuple[float, float]] | None = None,
                    chord_angle: float | None = None) -> np.ndarray:
    """A polygon whose corner i is rounded with radius ``radii[i]`` or cut by a bevel.

    ``bevels[i] = (d_prev, d_next)`` cuts corner i from the point `d_prev` along the edge to
    the previous corner to the point `d_next` along the edge to the next one. Works for convex
    and re-entrant corners alike; the arc is tangent to both edges.
    """
    bevels = bevels or {}
    n = len(corners)
    out: list[np.ndarray] = []
    for i in range(n):
        p, prev, nxt = corners[i], corners[i - 1], corners[(i + 1) % n]
        u1 = (prev - p) / np.hypot(*(prev - p))
        u2 = (nxt - p) / np.hypot(*(nxt - p))
        if i in bevels:
            d1, d2 = bevels[i]
            out.append(np.array([p + d1 * u1, p + d2 * u2]))
            continue
        r = radii[i]
        if r <= 0:
            out.append(p[None, :])
            continue
        half = 0.5 * math.acos(float(np.clip(np.dot(u1, u2), -1.0, 1.0)))   # half the corner angle
        d = r / math.tan(half)                                             # corner to tangent point
        bis = (u1 + u2) / np.hypot(*(u1 + u2))
        centre = p + bis * (r / math.sin(half))
        t1, t2 = p + d * u1, p + d * u2
        a0 = math.atan2(t1[1] - centre[1], t1[0] - centre[0])
        sweep = math.pi - 2 * half
        turn = np.sign((t1[0] - centre[0]) * (t2[1] - centre[1]) - (t1[1] - centre[1]) * (t2[0] - centre[0]))
        out.append(arc_points(centre[0], centre[1], r, a0, a0 + turn * sweep, chord_angle))
    return np.concatenate(out)


def _bevel_legs(corners: np.ndarray, bevels: dict[int, tuple[float, float]]) -> dict[int, tuple[float, float]]:
    """Turn (x, y) bevel legs into (towards previous, towards next) corner legs."""
    legs = {}
    for i, (lx, ly) in bevels.items():
        prev = corners[i - 1] - corners[i]
        legs[i] = (lx, ly) if abs(prev[0]) > abs(prev[1]) else (ly, lx)
    return legs


def _number(label: str, value: object) -> float:
    try:
        v = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ShapeError(f"{label} = {value!r} is not a number") from None
    if not math.isfinite(v):
        raise ShapeError(f"{label} = {value!r} must be a finite number")
    if v < 0:
        raise ShapeError(f"{label} = {v:.6g} mm must not be negative")
    return v


def _positive(kind: str, **dims: object) -> None:
    for name, value in dims.items():
        if _number(f"{kind}: {name}", value) == 0:
            raise ShapeError(f"{kind}: {name} = 0 mm must be greater than zero")


def _nonnegative(kind: str, **dims: object) -> None:
    for name, value in dims.items():
        _number(f"{kind}: {name}", value)


def _less(kind: str, name: str, value: float, other: str, limit: float) -> None:
    if not value < limit:
        raise ShapeError(f"{kind}: {name} = {value:.6g} mm must be less than {other} = {limit:.6g} mm")


def _fits(kind: str, r: float, limits: list[tuple[str, float]], name: str = "r") -> None:
    for label, limit in limits:
        if r > limit:
            raise ShapeError(f"{kind}: {name} = {r:.6g} mm does not fit: it must be at most {label} = {limit:.6g} mm")
