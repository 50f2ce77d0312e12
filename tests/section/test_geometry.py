"""Section: validation messages, normalisation and immutability."""

from __future__ import annotations

import numpy as np
import pytest

from tracer.errors import GeometryError
from tracer.section.geometry import Section
from tracer.section.properties import area_moments

from tests.common import rectangle_ring


def _signed_area(xy):
    x, y = np.asarray(xy).T
    return 0.5 * np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y)


def test_rings_are_normalised():
    outer_cw = rectangle_ring(0, 0, 10, 10)[::-1]
    hole_ccw = rectangle_ring(2, 2, 4, 4)
    s = Section(outer_cw + [outer_cw[0]], [hole_ccw])   # a repeated closing point is tolerated
    part = s.parts[0]
    assert len(part.exterior) == 4
    assert _signed_area(part.exterior) > 0 and _signed_area(part.holes[0]) < 0
    assert area_moments(s).A == pytest.approx(96.0)


def test_repeated_consecutive_points_are_dropped():
    s = Section([(0, 0), (0, 0), (5, 0), (5, 5), (5, 5), (0, 5)])
    assert s.n_vertices == 4


def test_section_is_immutable():
    s = Section(rectangle_ring(0, 0, 1, 1))
    with pytest.raises(AttributeError, match="immutable"):
        s._parts = ()
    with pytest.raises(ValueError, match="read-only"):
        s.parts[0].exterior[0, 0] = 5.0
    x, _, _ = s.packed()
    with pytest.raises(ValueError, match="read-only"):
        x[0] = 1.0


@pytest.mark.parametrize("points,holes,message", [
    ([(0, 0), (1, 1)], [], r"outline has 2 distinct point\(s\); a ring needs at least 3"),
    ([(0, 0), (1, 0), (1, 0), (0, 0)], [], r"outline has 2 distinct point"),
    ([(0, 0), (1, float("nan")), (2, 3)], [], r"outline point 2 has a NaN or infinite coordinate"),
    ([(0, 0), (float("inf"), 1), (2, 3)], [], r"outline point 2 has a NaN or infinite coordinate"),
    ([(0, 0), (1, 1), (2, 2), (3, 3)], [], r"outline has zero area: its 4 points lie on one line"),
    ([(0, 0), (1, 2, 3), (2, 0)], [], r"outline point 2 is not an \(x, y\) pair"),
    ([(0, 0), ("a", 1), (2, 0)], [], r"outline point 2 is not a pair of numbers"),
    ([(0, 0), (10, 0), (10, 10), (5, -5), (0, 10)], [], r"outline crosses itself near point 2 \(10, 0\)"),
    ([(0, 0), (10, 10), (10, 0), (0, 10)], [], r"outline crosses itself near point"),
    (rectangle_ring(0, 0, 100, 200), [rectangle_ring(200, 0, 210, 10)], r"hole 1 lies outside the outline"),
    (rectangle_ring(0, 0, 100, 200), [rectangle_ring(90, 90, 110, 110)], r"hole 1 crosses the outline near \(100, "),
    (rectangle_ring(0, 0, 100, 200), [rectangle_ring(10, 10, 50, 50), rectangle_ring(40, 40, 60, 60)],
     r"holes 1 and 2 overlap"),
    (rectangle_ring(0, 0, 100, 200), [[(10, 10), (20, 20), (20, 10), (10, 20)]], r"hole 1 crosses itself near point"),
])
def test_bad_geometry_says_what_and_where(points, holes, message):
    with pytest.raises(GeometryError, match=message):
        Section(points, holes)


def test_overlapping_parts_are_refused_and_touching_parts_accepted():
    with pytest.raises(GeometryError, match=r"parts 1 and 2 overlap by 25 mm\^2"):
        Section.from_parts([rectangle_ring(0, 0, 10, 10), (rectangle_ring(5, 5, 15, 15), [])])
    s = Section.from_parts([rectangle_ring(0, 0, 10, 10), rectangle_ring(10, 0, 15, 15)])
    assert s.n_parts == 2
    assert area_moments(s).A == pytest.approx(175.0)


def test_a_part_error_names_the_part():
    with pytest.raises(GeometryError, match=r"part 2 hole 1 lies outside the outline"):
        Section.from_parts([rectangle_ring(0, 0, 10, 10), (rectangle_ring(20, 0, 30, 10), [rectangle_ring(0, 0, 1, 1)])])


def test_transforms_return_new_valid_sections():
    s = Section(rectangle_ring(0, 0, 10, 20))
    assert s.translated(5, 5).bounds == (5.0, 5.0, 15.0, 25.0)
    assert s.rotated(90).bounds == pytest.approx((-20.0, 0.0, 0.0, 10.0))
    m = s.mirrored("y")
    assert m.bounds == (-10.0, 0.0, 0.0, 20.0)
    assert _signed_area(m.parts[0].exterior) > 0   # a mirror is re-oriented counter-clockwise
    assert s.scaled(2).bounds == (0.0, 0.0, 20.0, 40.0)
    with pytest.raises(GeometryError, match="scale factor"):
        s.scaled(0)


def test_shapely_round_trip():
    s = Section(rectangle_ring(0, 0, 10, 20), [rectangle_ring(2, 2, 4, 4)])
    back = Section.from_shapely(s.to_shapely())
    assert area_moments(back).A == pytest.approx(area_moments(s).A)
    with pytest.raises(GeometryError, match="expected a Polygon"):
        Section.from_shapely(__import__("shapely").Point(0, 0))
