"""Stations (widths at heights) to a polygon."""

from __future__ import annotations

import pytest

from tracer.errors import GeometryError
from tracer.section.properties import section_properties
from tracer.section.stations import stations_section


def test_two_stations_make_a_trapezoid():
    # Trapezoid with parallel sides a (bottom) and b (top), height h: A = (a + b) h / 2 and
    # centroid h (a + 2b) / (3 (a + b)) above the base (textbook closed form).
    a, b, h = 40.0, 30.0, 100.0
    p = section_properties(stations_section([[0, 0, a], [h, 5, 5 + b]]))
    assert p.A == pytest.approx((a + b) * h / 2, rel=1e-14)
    assert p.cy == pytest.approx(h * (a + 2 * b) / (3 * (a + b)), rel=1e-14)


def test_order_of_stations_does_not_matter_and_pointed_ends_are_allowed():
    rows = [[50, 0, 20], [0, 10, 10], [100, 10, 10]]   # a diamond: width 0 at both ends
    p = section_properties(stations_section(rows))
    assert p.A == pytest.approx(0.5 * 20 * 100, rel=1e-14)
    assert p.Ix == pytest.approx(2 * 20 * 50**3 / 36 + 2 * 500 * (50 / 3) ** 2, rel=1e-13)  # two triangles


def test_stations_of_a_rectangle_are_the_rectangle():
    p = section_properties(stations_section([[0, 0, 47], [60, 0, 47], [195, 0, 47]]))
    assert p.Ix == pytest.approx(47 * 195**3 / 12, rel=1e-13)


@pytest.mark.parametrize("rows,message", [
    ([[0, 0, 10]], r"1 station\(s\) given; at least two heights"),
    ([[0, 0, 10], [5, 1]], r"station 2 = \[5, 1\] must be three numbers"),
    ([[0, 0, 10], [5, "a", 3]], r"station 2 .* must be three numbers"),
    ([[0, 0, 10], [0, 1, 9]], r"stations 1 and 2 are both at y = 0"),
    ([[0, 0, 10], [5, 6, 4], [9, 0, 10]], r"station 2 at y = 5: x_right = 4 must be greater than x_left = 6"),
    ([[0, 0, 10], [5, 3, 3], [9, 0, 10]], r"station 2 at y = 5: x_right = 3 must be greater"),
    ([[0, 0, 10], [5, float("nan"), 3]], r"station 2 .* NaN or infinite"),
])
def test_bad_stations_are_named(rows, message):
    with pytest.raises(GeometryError, match=message):
        stations_section(rows)
