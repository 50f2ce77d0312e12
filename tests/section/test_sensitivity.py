"""Exact vertex sensitivities against central finite differences of the properties themselves,
and the vectorised Monte Carlo evaluator against the one-section integrator."""

from __future__ import annotations

import numpy as np
import pytest

from tracer.uncertainty.ensemble import ensemble_properties
from tracer.section.geometry import Section
from tracer.section.properties import PROPERTY_KEYS, section_properties
from tracer.section.sensitivity import property_gradients
from tracer.section.shapes import angle, i_section, tube

from tests.common import rectangle_ring, star_ring


def _finite_differences(section: Section, h: float = 1e-6) -> np.ndarray:
    xy, _ = section.vertices()
    out = np.zeros((len(PROPERTY_KEYS), 2, len(xy)))
    for i in range(len(xy)):
        for a in range(2):
            plus, minus = xy.copy(), xy.copy()
            plus[i, a] += h
            minus[i, a] -= h
            pp = section_properties(section.with_vertices(plus)).values()
            pm = section_properties(section.with_vertices(minus)).values()
            out[:, a, i] = [(pp[k] - pm[k]) / (2 * h) for k in PROPERTY_KEYS]
    return out


CASES = {
    "star": lambda rng: Section(star_ring(rng, 9, centre=(30.0, 40.0))),
    "L with flat faces": lambda rng: Section([(0, 0), (40, 0), (40, 10), (10, 10), (10, 60), (0, 60)]),
    "star with a hole": lambda rng: Section(star_ring(rng, 8, r_min=0.9), [rectangle_ring(-2, -2, 2, 3)]),
    "two parts": lambda rng: Section.from_parts([star_ring(rng, 6, centre=(0, 0)), star_ring(rng, 7, centre=(500, 80))]),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_gradients_match_finite_differences(case):
    s = CASES[case](np.random.default_rng(3))
    exact, numeric = property_gradients(s), _finite_differences(s)
    for k, key in enumerate(PROPERTY_KEYS):
        scale = np.abs(numeric[k]).max() + 1e-12 * np.abs(numeric).max()
        assert np.abs(exact[k] - numeric[k]).max() <= 2e-6 * scale, key


def test_gradient_of_the_area_is_half_the_neighbour_span():
    # dA/dx_i = (y_{i+1} - y_{i-1}) / 2 (shoelace formula, textbook).
    s = Section([(0, 0), (4, 0), (5, 3), (1, 4)])
    g = property_gradients(s)[PROPERTY_KEYS.index("A")]
    xy, _ = s.vertices()
    expected_x = 0.5 * (np.roll(xy[:, 1], -1) - np.roll(xy[:, 1], 1))
    expected_y = 0.5 * (np.roll(xy[:, 0], 1) - np.roll(xy[:, 0], -1))
    assert g[0] == pytest.approx(expected_x) and g[1] == pytest.approx(expected_y)


@pytest.mark.parametrize("make", [
    lambda: i_section(h=200, b=100, tw=5.6, tf=8.5, r=12, chord_angle=0.05),
    lambda: angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05),
    lambda: Section(star_ring(np.random.default_rng(8), 40, centre=(1e3, -2e3))),
    lambda: Section.from_parts([rectangle_ring(0, 0, 47, 80), rectangle_ring(0, 140, 47, 220)]),
    lambda: tube(d=100, t=5, chord_angle=0.05),
], ids=["ipe", "angle", "star", "parts", "tube"])
def test_ensemble_equals_one_by_one(make):
    s = make()
    base = section_properties(s)
    xy, _ = s.vertices()
    rng = np.random.default_rng(1)
    d = 25
    x = xy[None, :, 0] + rng.normal(0, 1e-3, (d, len(xy)))
    y = xy[None, :, 1] + rng.normal(0, 1e-3, (d, len(xy)))
    many = ensemble_properties(s, x, y, base=base)
    for j in range(d):
        one = section_properties(s.with_vertices(np.column_stack([x[j], y[j]]))).values()
        for k, key in enumerate(PROPERTY_KEYS):
            if key == "theta" and not base.principal_unique:
                continue
            size = {"Ixy": one["Ip"], "cx": np.sqrt(one["A"]), "cy": np.sqrt(one["A"]), "theta": 180.0}.get(key, abs(one[key]))
            assert abs(many[k, j] - one[key]) <= 1e-9 * size, (key, many[k, j], one[key])
