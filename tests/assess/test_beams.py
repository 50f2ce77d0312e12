"""Beam formulas against textbook closed forms and a published worked example."""

from __future__ import annotations

import numpy as np
import pytest

from tracer.assess.beams import longest_span, max_deflection, max_moment
from tracer.units import parse_force, parse_length, parse_line_load, parse_stress

W, P, L, EI = 2.5, 4000.0, 3000.0, 3.2e12       # N/mm, N, mm, N mm^2: an arbitrary case

# Closed forms of Roark's Formulas for Stress and Strain, 8th ed. (2012), Table 8.1, and Gere &
# Goodno, Mechanics of Materials, 8th ed., appendix tables of beam deflections (from memory):
# (support, load, M_max, delta_max).
TEXTBOOK = [
    ("simple", "udl", W * L**2 / 8, 5 * W * L**4 / (384 * EI)),
    ("simple", "point", P * L / 4, P * L**3 / (48 * EI)),
    ("cantilever", "udl", W * L**2 / 2, W * L**4 / (8 * EI)),
    ("cantilever", "point", P * L, P * L**3 / (3 * EI)),
    ("fixed", "udl", W * L**2 / 12, W * L**4 / (384 * EI)),      # moment at the supports
    ("fixed", "point", P * L / 8, P * L**3 / (192 * EI)),
]


@pytest.mark.parametrize("support,load,M,delta", TEXTBOOK)
def test_moment_and_deflection_against_the_textbook(support, load, M, delta):
    kw = {"udl": W} if load == "udl" else {"point": P}
    assert max_moment(support, span=L, **kw) == pytest.approx(M, rel=1e-14)
    assert max_deflection(support, span=L, EI=EI, **kw) == pytest.approx(delta, rel=1e-14)


@pytest.mark.parametrize("support", ["simple", "cantilever", "fixed"])
def test_superposition_of_uniform_and_point_load(support):
    both_M = max_moment(support, span=L, udl=W, point=P)
    both_d = max_deflection(support, span=L, EI=EI, udl=W, point=P)
    rows = {(s, ld): (m, d) for s, ld, m, d in TEXTBOOK}
    # The two maxima fall at the same place in each case (midspan, tip, supports), so they add.
    assert both_M == pytest.approx(rows[support, "udl"][0] + rows[support, "point"][0], rel=1e-14)
    assert both_d == pytest.approx(rows[support, "udl"][1] + rows[support, "point"][1], rel=1e-14)


def test_worked_example_w18x50_simple_span():
    # AISC Design Examples, v15.0 (2017), Example F.1-1A (from memory): a W18x50 on a simple span
    # of 35 ft, dead load 0.45 kip/ft and live load 0.75 kip/ft. LRFD w_u = 1.2 D + 1.6 L =
    # 1.74 kip/ft gives M_u = 266 kip-ft; ASD w_a = 1.20 kip/ft gives M_a = 184 kip-ft; the live
    # load deflection with I_x = 800 in^4, E = 29000 ksi is 1.09 in, within L/360 = 1.17 in.
    span = parse_length("35ft")
    kipft = parse_force("1kip") * parse_length("1ft")
    Mu = max_moment("simple", span=span, udl=parse_line_load("1.74kip/ft")) / kipft
    Ma = max_moment("simple", span=span, udl=parse_line_load("1.20kip/ft")) / kipft
    assert round(Mu) == 266 and round(Ma) == 184
    EI_ = parse_stress("29000ksi") * 800 * 25.4**4
    d = max_deflection("simple", span=span, EI=EI_, udl=parse_line_load("0.75kip/ft")) / 25.4
    assert round(d, 2) == 1.09
    assert round(span / 360 / 25.4, 2) == 1.17


def test_longest_span_closed_forms():
    # Strength alone (stiffness unbounded): w L^2 / 8 = Mc -> L = sqrt(8 Mc / w);
    # P L / 4 = Mc -> L = 4 Mc / P (textbook, as above).
    Mc = 5e7
    assert longest_span("simple", udl=W, point=0.0, moment_capacity=Mc, EI=1e40, limit=250) == pytest.approx(
        np.sqrt(8 * Mc / W), rel=1e-12)
    assert longest_span("simple", udl=0.0, point=P, moment_capacity=Mc, EI=1e40, limit=250) == pytest.approx(
        4 * Mc / P, rel=1e-12)
    # Deflection alone: 5 w L^4 / (384 EI) = L / N -> L = (384 EI / (5 w N))^(1/3).
    assert longest_span("simple", udl=W, point=0.0, moment_capacity=1e40, EI=EI, limit=300) == pytest.approx(
        (384 * EI / (5 * W * 300)) ** (1 / 3), rel=1e-12)
    # Self-weight counts as uniform load; no load at all has no limit.
    assert longest_span("cantilever", udl=0.0, point=0.0, moment_capacity=Mc, EI=1e40, limit=250,
                        self_weight=W) == pytest.approx(np.sqrt(2 * Mc / W), rel=1e-12)
    assert np.isinf(longest_span("fixed", udl=0.0, point=0.0, moment_capacity=Mc, EI=EI, limit=250))


def test_unknown_support_is_named():
    with pytest.raises(ValueError, match="support = 'pinned'; use one of simple, cantilever, fixed"):
        max_moment("pinned", span=L, udl=W)
