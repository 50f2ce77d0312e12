"""The cross-section as validated, immutable geometry in millimetres.

A :class:`Section` is one or more separate *parts*; each part is an exterior ring with zero or
more holes. Rings are normalised on construction (exterior counter-clockwise, holes clockwise,
a repeated closing point and repeated consecutive points dropped), so that every signed
Green's-theorem integral over the rings is the integral over the material.

Coordinates follow DESIGN.md: x to the right, y up, millimetres.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any

import numpy as np

from ..errors import GeometryError

__all__ = ["Section", "Part", "trusted_geometry"]

# Inside trusted_geometry(), sections are normalised but not checked for crossings.
_TRUSTED: ContextVar[bool] = ContextVar("tracer_trusted_geometry", default=False)


@contextmanager
def trusted_geometry():
    """Build sections without the (costly) crossing and containment checks.

    For geometry that is a small perturbation of a section already validated (Jacobians by
    differences, Monte Carlo copies): rings are still cleaned and oriented, and the result still
    is a Section, but a crossing would not be reported.
    """
    token = _TRUSTED.set(True)
    try:
        yield
    finally:
        _TRUSTED.reset(token)

# Relative size below which an area counts as zero, against the square of the ring's extent.
_ZERO_AREA = 1e-12
# Overlap between parts is reported only above this share of the smaller part (rounding noise).
_OVERLAP_SHARE = 1e-9
_LOCATION = re.compile(r"\[\s*([-+0-9.eE]+)\s+([-+0-9.eE]+)")


class Part:
    """One connected piece of material: an exterior ring and its holes.

    Built by :class:`Section`; the arrays are read-only, shape ``(n, 2)``, without a repeated
    closing point, the exterior counter-clockwise and the holes clockwise.
    """

    __slots__ = ("exterior", "holes")

    def __init__(self, exterior: np.ndarray, holes: tuple[np.ndarray, ...]) -> None:
        object.__setattr__(self, "exterior", exterior)
        object.__setattr__(self, "holes", holes)

    def __setattr__(self, name: str, value: Any) -> None:
        raise AttributeError("a Part is immutable")

    def __repr__(self) -> str:
        return f"Part({len(self.exterior)} points, {len(self.holes)} holes)"


class Section:
    """A validated cross-section in millimetres.

    Parameters
    ----------
    outline : sequence of (x, y)
        Exterior boundary [mm]. Either orientation; a repeated closing point is tolerated.
    holes : sequence of sequences of (x, y), optional
        Holes inside the outline [mm].

    Raises
    ------
    GeometryError
        With a message that names what is wrong and where: fewer than 3 points, a NaN or
        infinite coordinate, zero area, a ring that crosses itself (near which point), a hole
        outside the outline or crossing it, holes or parts that overlap.

    See Also
    --------
    Section.from_parts : a section of several separate parts (built-up members).

    Examples
    --------
    >>> s = Section([(0, 0), (100, 0), (100, 200), (0, 200)])
    >>> s.n_parts, s.n_holes, s.n_vertices
    (1, 0, 4)
    """

    __slots__ = ("_parts", "_packed", "_vertices")

    def __init__(self, outline: Sequence[Sequence[float]], holes: Iterable[Sequence[Sequence[float]]] = ()) -> None:
        part = _make_part(outline, list(holes), prefix="")
        self._init([part])

    @classmethod
    def from_parts(cls, parts: Iterable[tuple[Sequence[Sequence[float]], Iterable[Sequence[Sequence[float]]]] | Sequence[Sequence[float]]]) -> Section:
        """Build a section of several separate parts.

        Parameters
        ----------
        parts : iterable
            Each item is an outline, or a pair ``(outline, holes)`` [mm].

        Raises
        ------
        GeometryError
            As for the constructor, and when two parts overlap (touching is allowed).
        """
        built = []
        for i, item in enumerate(parts, start=1):
            outline, holes = _split_part(item)
            built.append(_make_part(outline, list(holes), prefix=f"part {i} "))
        if not built:
            raise GeometryError("a section needs at least one part; none was given")
        section = object.__new__(cls)
        section._init(built)
        return section

    @classmethod
    def from_shapely(cls, geometry: Any) -> Section:
        """Build a section from a shapely ``Polygon`` or ``MultiPolygon`` [mm]."""
        geoms = getattr(geometry, "geoms", [geometry])
        parts = []
        for g in geoms:
            if g.geom_type != "Polygon":
                raise GeometryError(f"expected a Polygon or MultiPolygon, got a {g.geom_type}")
            parts.append((np.asarray(g.exterior.coords), [np.asarray(r.coords) for r in g.interiors]))
        return cls.from_parts(parts)

    def _init(self, parts: list[Part]) -> None:
        if len(parts) > 1 and not _TRUSTED.get():
            _check_parts_apart(parts)
        object.__setattr__(self, "_parts", tuple(parts))
        object.__setattr__(self, "_packed", None)
        object.__setattr__(self, "_vertices", None)

    def __setattr__(self, name: str, value: Any) -> None:
        raise AttributeError("a Section is immutable; its methods return new sections")

    # -- reading ---------------------------------------------------------------------------
    @property
    def parts(self) -> tuple[Part, ...]:
        """The separate parts of the section."""
        return self._parts

    @property
    def n_parts(self) -> int:
        """Number of separate parts."""
        return len(self._parts)

    @property
    def n_holes(self) -> int:
        """Number of holes over all parts."""
        return sum(len(p.holes) for p in self._parts)

    @property
    def n_vertices(self) -> int:
        """Number of vertices over all rings."""
        return sum(len(r) for r, _ in self.rings())

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """``(x_min, y_min, x_max, y_max)`` of the material [mm]."""
        ext = np.concatenate([p.exterior for p in self._parts])
        lo, hi = ext.min(axis=0), ext.max(axis=0)
        return float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1])

    def rings(self) -> Iterator[tuple[np.ndarray, bool]]:
        """Yield ``(ring, is_hole)`` for every ring, exteriors before their holes."""
        for part in self._parts:
            yield part.exterior, False
            for hole in part.holes:
                yield hole, True

    def vertices(self) -> tuple[np.ndarray, np.ndarray]:
        """Every ring's vertices laid end to end, without closing points.

        Returns
        -------
        xy : ndarray, shape (N, 2)
            Vertices [mm], ring by ring in the order of :meth:`rings`.
        starts : ndarray of int
            Start index of each ring, with N appended.

        This is the vertex order that sensitivities and error models refer to.
        """
        if self._vertices is None:
            rings = [r for r, _ in self.rings()]
            starts = np.concatenate([[0], np.cumsum([len(r) for r in rings])])
            xy = np.concatenate(rings)
            xy.flags.writeable = False
            starts.flags.writeable = False
            object.__setattr__(self, "_vertices", (xy, starts))
        return self._vertices

    def with_vertices(self, xy: np.ndarray) -> Section:
        """A new section with the same rings but moved vertices (as from :meth:`vertices`) [mm]."""
        own, starts = self.vertices()
        xy = np.asarray(xy, dtype=float)
        if xy.shape != own.shape:
            raise GeometryError(f"expected {own.shape[0]} vertices, got an array of shape {xy.shape}")
        rings = iter(np.split(xy, starts[1:-1]))
        parts = []
        for p in self._parts:
            ext = next(rings)
            parts.append((ext, [next(rings) for _ in p.holes]))
        return Section.from_parts(parts)

    def packed(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """All rings, closed and laid end to end, for vectorised integrals.

        Returns
        -------
        x, y : ndarray
            Contiguous coordinates [mm]; ring k occupies ``starts[k]:starts[k+1]`` and repeats
            its first point at its end.
        starts : ndarray of int
            Start index of each ring, with the total length appended.

        The edge from the last point of one ring to the first of the next is not part of the
        boundary; integrators skip the edges ending at ``starts[1:-1]``.
        """
        if self._packed is None:
            closed = [np.vstack([r, r[:1]]) for r, _ in self.rings()]
            starts = np.concatenate([[0], np.cumsum([len(c) for c in closed])])
            xy = np.concatenate(closed)
            x, y = np.ascontiguousarray(xy[:, 0]), np.ascontiguousarray(xy[:, 1])
            for a in (x, y, starts):
                a.flags.writeable = False
            object.__setattr__(self, "_packed", (x, y, starts))
        return self._packed

    def to_shapely(self) -> Any:
        """The section as a shapely ``Polygon`` (one part) or ``MultiPolygon``."""
        import shapely

        polys = [shapely.Polygon(p.exterior, p.holes) for p in self._parts]
        return polys[0] if len(polys) == 1 else shapely.MultiPolygon(polys)

    # -- transforms (each returns a new, re-validated section) --------------------------------
    def transformed(self, matrix: Sequence[Sequence[float]], offset: Sequence[float] = (0.0, 0.0)) -> Section:
        """Apply ``p -> matrix @ p + offset`` to every point.

        Parameters
        ----------
        matrix : 2 x 2 array_like
            Linear part (rotation, mirror, scale).
        offset : (dx, dy)
            Translation [mm].
        """
        m = np.asarray(matrix, dtype=float)
        t = np.asarray(offset, dtype=float)
        if m.shape != (2, 2) or t.shape != (2,):
            raise GeometryError("a transform needs a 2 x 2 matrix and an (dx, dy) offset")

        def move(ring: np.ndarray) -> np.ndarray:
            return ring @ m.T + t

        return Section.from_parts([(move(p.exterior), [move(h) for h in p.holes]) for p in self._parts])

    def translated(self, dx: float, dy: float) -> Section:
        """The section moved by (dx, dy) [mm]."""
        return self.transformed(np.eye(2), (dx, dy))

    def rotated(self, angle: float, origin: Sequence[float] = (0.0, 0.0)) -> Section:
        """The section turned counter-clockwise by `angle` [deg] about `origin` [mm]."""
        a = np.radians(angle)
        m = np.array([[np.cos(a), -np.sin(a)], [np.sin(a), np.cos(a)]])
        o = np.asarray(origin, dtype=float)
        return self.transformed(m, o - m @ o)

    def mirrored(self, axis: str = "y") -> Section:
        """The mirror image: ``axis="y"`` flips x (mirror in the y axis), ``"x"`` flips y."""
        if axis not in ("x", "y"):
            raise GeometryError(f"mirror axis = {axis!r}; use 'x' or 'y'")
        return self.transformed(np.diag([-1.0, 1.0]) if axis == "y" else np.diag([1.0, -1.0]))

    def scaled(self, factor: float) -> Section:
        """The section scaled by `factor` about the origin."""
        if not np.isfinite(factor) or factor <= 0:
            raise GeometryError(f"scale factor = {factor!r} must be a positive number")
        return self.transformed(np.eye(2) * factor)

    def __repr__(self) -> str:
        x0, y0, x1, y1 = self.bounds
        return (f"Section({self.n_parts} part(s), {self.n_holes} hole(s), {self.n_vertices} vertices, "
                f"{x1 - x0:.6g} x {y1 - y0:.6g} mm)")


# ---------------------------------------------------------------------------------------------
# validation
# ---------------------------------------------------------------------------------------------
def _split_part(item: Any) -> tuple[Any, Any]:
    """An item of ``from_parts`` is an outline or an ``(outline, holes)`` pair."""
    if len(item) == 2:
        try:
            if np.ndim(item[0]) == 2:  # item[0] is a list of points, not a point
                return item[0], item[1]
        except ValueError:  # ragged points: let the ring check name the bad one
            return item[0], item[1]
    return item, ()


def _make_part(outline: Any, holes: list[Any], *, prefix: str) -> Part:
    import shapely

    ext = _clean_ring(outline, f"{prefix}outline")
    holes_clean = [_clean_ring(h, f"{prefix}hole {i}") for i, h in enumerate(holes, start=1)]
    ext = _oriented(ext, ccw=True)
    holes_clean = [_oriented(h, ccw=False) for h in holes_clean]
    if holes_clean and not _TRUSTED.get():
        shell = shapely.Polygon(ext)
        hole_polys = [shapely.Polygon(h) for h in holes_clean]
        for i, hp in enumerate(hole_polys, start=1):
            if not shell.covers(hp):
                if not shell.intersection(hp).area > 0:
                    raise GeometryError(f"{prefix}hole {i} lies outside the outline; holes must be inside it")
                crossing = shell.boundary.intersection(hp.boundary).representative_point()
                raise GeometryError(f"{prefix}hole {i} crosses the outline near ({crossing.x:.6g}, {crossing.y:.6g})")
        for i in range(len(hole_polys)):
            for j in range(i + 1, len(hole_polys)):
                if hole_polys[i].intersection(hole_polys[j]).area > 0:
                    raise GeometryError(f"{prefix}holes {i + 1} and {j + 1} overlap; merge them into one hole")
        whole = shapely.Polygon(ext, holes_clean)
        if not whole.is_valid:
            reason = shapely.is_valid_reason(whole)
            raise GeometryError(f"{prefix}outline and holes do not form a valid section: {reason}")
    for a in (ext, *holes_clean):
        a.flags.writeable = False
    return Part(ext, tuple(holes_clean))


def _clean_ring(points: Any, label: str) -> np.ndarray:
    """Check one ring's points and return them as a float (n, 2) array without repeats."""
    try:
        xy = np.asarray(points, dtype=float)
    except (TypeError, ValueError):
        xy = None
    if xy is None or xy.ndim != 2 or xy.shape[1] != 2:
        _explain_points(points, label)                # names the first bad point
        xy = np.asarray(points, dtype=float).reshape(-1, 2)
    bad = np.flatnonzero(~np.isfinite(xy).all(axis=1))
    if bad.size:
        i = int(bad[0])
        raise GeometryError(f"{label} point {i + 1} has a NaN or infinite coordinate: {xy[i].tolist()}")
    # Drop repeated consecutive points and a repeated closing point.
    if len(xy):
        keep = np.ones(len(xy), dtype=bool)
        keep[1:] = np.any(xy[1:] != xy[:-1], axis=1)
        xy = xy[keep]
        if len(xy) > 1 and np.all(xy[0] == xy[-1]):
            xy = xy[:-1]
    if len(xy) < 3:
        raise GeometryError(f"{label} has {len(xy)} distinct point(s); a ring needs at least 3")
    extent = float(np.ptp(xy, axis=0).max())
    spread = np.linalg.svd(xy - xy.mean(axis=0), compute_uv=False)[-1]
    if spread <= np.sqrt(_ZERO_AREA) * extent * np.sqrt(len(xy)):
        raise GeometryError(f"{label} has zero area: its {len(xy)} points lie on one line")
    if not _TRUSTED.get():
        _check_simple(xy, label)
    if abs(_signed_area(xy)) <= _ZERO_AREA * extent * extent:
        raise GeometryError(f"{label} has zero area")
    return np.ascontiguousarray(xy)


def _explain_points(points: Any, label: str) -> None:
    """Raise naming the first point that is not an (x, y) pair of numbers."""
    try:
        raw = [tuple(p) for p in points]
    except TypeError:
        raise GeometryError(f"{label}: expected a list of (x, y) points, got {type(points).__name__}") from None
    for i, p in enumerate(raw, start=1):
        if len(p) != 2:
            raise GeometryError(f"{label} point {i} is not an (x, y) pair: {list(p)!r}")
        try:
            float(p[0]), float(p[1])
        except (TypeError, ValueError):
            raise GeometryError(f"{label} point {i} is not a pair of numbers: {list(p)!r}") from None


def _check_simple(xy: np.ndarray, label: str) -> None:
    """Raise if the ring crosses or touches itself, naming the nearest point."""
    import shapely

    ring = shapely.LinearRing(xy)
    if ring.is_simple:
        return
    reason = shapely.is_valid_reason(shapely.Polygon(xy))
    match = _LOCATION.search(reason)
    if match:
        where = np.array([float(match.group(1)), float(match.group(2))])
    else:  # fall back on the first self-intersection point of the ring
        where = np.asarray(shapely.get_coordinates(shapely.unary_union(ring).intersection(ring))[0])
    near = int(np.argmin(np.hypot(*(xy - where).T)))
    raise GeometryError(
        f"{label} crosses itself near point {near + 1} ({xy[near, 0]:.6g}, {xy[near, 1]:.6g}); "
        "check the order of the points")


def _check_parts_apart(parts: list[Part]) -> None:
    import shapely

    polys = [shapely.Polygon(p.exterior, p.holes) for p in parts]
    tree = shapely.STRtree(polys)
    pairs = tree.query(polys, predicate="intersects")
    for i, j in zip(*pairs):
        if i >= j:
            continue
        overlap = polys[i].intersection(polys[j]).area
        if overlap > _OVERLAP_SHARE * min(polys[i].area, polys[j].area):
            raise GeometryError(
                f"parts {i + 1} and {j + 1} overlap by {overlap:.6g} mm^2; parts may touch but not overlap")


def _signed_area(xy: np.ndarray) -> float:
    x, y = xy[:, 0] - xy[0, 0], xy[:, 1] - xy[0, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(np.roll(x, -1), y))


def _oriented(xy: np.ndarray, *, ccw: bool) -> np.ndarray:
    if (_signed_area(xy) > 0) != ccw:
        xy = np.ascontiguousarray(xy[::-1])
    return xy
