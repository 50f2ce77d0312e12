"""Parametric shapes against published steel and lumber tables and closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest

import tracer.section.shapes as shapes
from tracer.errors import ShapeError
from tracer.section.properties import PROPERTY_KEYS, section_properties
from tracer.section.shapes import angle, box, channel, i_section, make_shape, rectangle, round_bar, tee, tube

from tests.common import EN_ANGLES, EN_CHS, EN_I_SECTIONS, EN_RHS, NDS_LUMBER, printed_tolerance

CM2, CM3, CM4 = 1e2, 1e3, 1e4


# -- published tables --------------------------------------------------------------------------
@pytest.mark.parametrize("name", sorted(EN_I_SECTIONS))
def test_rolled_i_sections_match_en_10365_table(name):
    dims, table = EN_I_SECTIONS[name]
    p = section_properties(i_section(**dims))
    ours = {"A": p.A / CM2, "Iy": p.Ix / CM4, "Wel_y": p.Sx_top / CM3, "Wpl_y": p.Zx / CM3,
            "Iz": p.Iy / CM4, "Wel_z": p.Sy_left / CM3, "Wpl_z": p.Zy / CM3}
    for key, printed in table.items():
        assert abs(ours[key] - printed) <= printed_tolerance(printed), f"{name} {key}: {ours[key]} vs {printed}"


@pytest.mark.parametrize("name", sorted(EN_CHS))
def test_circular_hollow_section_matches_en_10210_table(name):
    dims, table = EN_CHS[name]
    p = section_properties(tube(**dims))
    ours = {"A": p.A / CM2, "I": p.Ix / CM4, "Wel": p.Sx_top / CM3, "Wpl": p.Zx / CM3}
    for key, printed in table.items():
        assert abs(ours[key] - printed) <= printed_tolerance(printed), f"{name} {key}: {ours[key]} vs {printed}"


@pytest.mark.parametrize("name", sorted(EN_RHS))
def test_rectangular_hollow_section_matches_en_10210_table(name):
    dims, table = EN_RHS[name]
    p = section_properties(box(**dims))
    ours = {"A": p.A / CM2, "Iy": p.Ix / CM4, "Iz": p.Iy / CM4, "Wel_y": p.Sx_top / CM3,
            "Wel_z": p.Sy_left / CM3, "Wpl_y": p.Zx / CM3, "Wpl_z": p.Zy / CM3}
    for key, printed in table.items():
        assert abs(ours[key] - printed) <= printed_tolerance(printed), f"{name} {key}: {ours[key]} vs {printed}"


@pytest.mark.parametrize("name", sorted(EN_ANGLES))
def test_equal_angle_matches_en_10056_table_including_principal_axes(name):
    dims, table = EN_ANGLES[name]
    p = section_properties(angle(**dims))
    ours = {"A": p.A / CM2, "Iy": p.Ix / CM4, "Wel": p.Sx_top / CM3, "Iu": p.I1 / CM4, "Iv": p.I2 / CM4,
            "e": p.cy / 10}
    for key, printed in table.items():
        assert abs(ours[key] - printed) <= printed_tolerance(printed), f"{name} {key}: {ours[key]} vs {printed}"
    assert p.theta == pytest.approx(45.0, abs=1e-9)  # the major axis is the axis of symmetry, at 45 deg


@pytest.mark.parametrize("name", sorted(NDS_LUMBER))
def test_dressed_lumber_matches_nds_table_1b(name):
    (b, d), table = NDS_LUMBER[name]
    p = section_properties(rectangle(b=b * 25.4, h=d * 25.4))
    ours = {"A": p.A / 25.4**2, "Sxx": p.Sx_top / 25.4**3, "Ixx": p.Ix / 25.4**4,
            "Syy": p.Sy_left / 25.4**3, "Iyy": p.Iy / 25.4**4}
    for key, printed in table.items():
        assert abs(ours[key] - printed) <= printed_tolerance(printed), f"{name} {key}: {ours[key]} vs {printed}"


# -- closed forms of the arc shapes (textbook formulas, e.g. Roark's Formulas for Stress and Strain,
#    8th ed., Table A.1) ----------------------------------------------------------------------------
def test_round_bar_closed_forms():
    d = 80.0
    p = section_properties(round_bar(d=d))
    assert p.A == pytest.approx(math.pi * d**2 / 4, rel=1e-5)
    assert p.Ix == pytest.approx(math.pi * d**4 / 64, rel=1e-5)
    assert p.Iy == pytest.approx(math.pi * d**4 / 64, rel=1e-5)
    assert p.Sx_top == pytest.approx(math.pi * d**3 / 32, rel=1e-5)
    assert p.Zx == pytest.approx(d**3 / 6, rel=1e-5)
    assert p.perimeter == pytest.approx(math.pi * d, rel=1e-5)
    assert (p.cx, p.cy) == pytest.approx((d / 2, d / 2), abs=1e-9)
    assert not p.principal_unique


@pytest.mark.parametrize("d,t", [(168.3, 8.0), (508.0, 5.0), (20.0, 9.0)])
def test_tube_closed_forms(d, t):
    di = d - 2 * t
    p = section_properties(tube(d=d, t=t))
    assert p.A == pytest.approx(math.pi * (d**2 - di**2) / 4, rel=1e-5)
    assert p.Ix == pytest.approx(math.pi * (d**4 - di**4) / 64, rel=1e-5)
    assert p.Zx == pytest.approx((d**3 - di**3) / 6, rel=1e-5)
    assert p.Ip == pytest.approx(math.pi * (d**4 - di**4) / 32, rel=1e-5)


def test_box_area_closed_form_with_corner_radii():
    # A = 2 t (b + h - 2 t) - (4 - pi)(ro^2 - ri^2): a rectangle ring less the corner spandrels
    # (common practice; the formula behind the hollow-section tables).
    h, b, t, ro, ri = 250.0, 150.0, 10.0, 20.0, 10.0
    p = section_properties(box(h=h, b=b, t=t, ro=ro, ri=ri))
    assert p.A == pytest.approx(2 * t * (b + h - 2 * t) - (4 - math.pi) * (ro**2 - ri**2), rel=1e-5)


def test_i_section_area_closed_form_with_root_fillets():
    # A = 2 b tf + (h - 2 tf) tw + (4 - pi) r^2 (common practice: the area formula of EN 10365 tables).
    h, b, tw, tf, r = 300.0, 150.0, 7.1, 10.7, 15.0
    p = section_properties(i_section(h=h, b=b, tw=tw, tf=tf, r=r))
    assert p.A == pytest.approx(2 * b * tf + (h - 2 * tf) * tw + (4 - math.pi) * r**2, rel=1e-5)


def test_waney_rectangle_areas():
    b, h = 47.0, 150.0
    # A round wane of radius r removes (1 - pi/4) r^2 (closed form); a bevel x by y removes x y / 2.
    p = section_properties(rectangle(b=b, h=h, wane={"top_left": 12.0}))
    assert p.A == pytest.approx(b * h - (1 - math.pi / 4) * 144.0, rel=1e-7)
    p = section_properties(rectangle(b=b, h=h, wane={"top_right": [10.0, 25.0]}))
    assert p.A == pytest.approx(b * h - 125.0, rel=1e-12)
    x0, y0, x1, y1 = rectangle(b=b, h=h, wane={"top_right": [10.0, 25.0]}).bounds
    assert (x1, y1) == (b, h)
    p = section_properties(rectangle(b=b, h=h, wane=5.0, wane_form="bevel"))
    assert p.A == pytest.approx(b * h - 4 * 12.5, rel=1e-12)
    assert p.Ixy == 0.0 and p.cx == pytest.approx(b / 2)


def test_bevel_legs_run_along_the_named_faces():
    # The bevel [x, y] at the top-right corner cuts x along the top face and y down the edge.
    s = rectangle(b=40.0, h=100.0, wane={"top_right": [10.0, 30.0]}, wane_form="bevel")
    pts = {tuple(np.round(p, 9)) for p in s.parts[0].exterior}
    assert (30.0, 100.0) in pts and (40.0, 70.0) in pts


# -- the chord rule: every property within 1e-5 of a 16x finer discretisation -----------------------
CHORD_CASES = [
    ("round", dict(d=100.0)),
    ("tube", dict(d=500.0, t=5.0)),               # thin wall: D/t = 100
    ("i-section", dict(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0)),
    ("i-section", dict(h=100.0, b=60.0, tw=10.0, tf=10.0, r=25.0)),  # fillets as large as fit
    ("channel", dict(h=200.0, b=80.0, tw=6.0, tf=11.0, r=13.0)),
    ("angle", dict(h=150.0, b=90.0, t=10.0, r=12.0, rt=6.0)),       # unequal: theta nonzero
    ("tee", dict(h=120.0, b=100.0, tw=8.0, tf=12.0, r=10.0)),
    ("box", dict(h=100.0, b=100.0, t=6.0, ro=12.0, ri=6.0)),
    ("rectangle", dict(b=47.0, h=150.0, wane={"top_left": 20.0, "bottom_right": 8.0})),
]


@pytest.mark.parametrize("kind,dims", CHORD_CASES, ids=[f"{k}-{i}" for i, (k, _) in enumerate(CHORD_CASES)])
def test_chord_rule_keeps_every_property_within_1e_5(kind, dims, monkeypatch):
    coarse = section_properties(make_shape(kind, **dims)).values()
    monkeypatch.setattr(shapes, "ALPHA_MAX", shapes.ALPHA_MAX / 16)
    fine = section_properties(make_shape(kind, **dims)).values()
    scale = {"length": math.sqrt(fine["A"]), "I": fine["Ip"]}
    for key in PROPERTY_KEYS:
        if key in ("cx", "cy"):        # positions: relative to the section's size
            err = abs(coarse[key] - fine[key]) / scale["length"]
        elif key == "Ixy":
            err = abs(coarse[key] - fine[key]) / scale["I"]
        elif key == "theta":           # degrees: compared as an angle in radians
            err = math.radians(abs(coarse[key] - fine[key]))
        else:
            err = abs(coarse[key] - fine[key]) / abs(fine[key])
        assert err < 1e-5, f"{kind} {key}: relative error {err:.2e}"


def test_arc_points_follow_the_chord_rule():
    pts = shapes.arc_points(0.0, 0.0, 10.0, 0.0, math.pi / 2)
    assert np.allclose(np.hypot(pts[:, 0], pts[:, 1]), 10.0)
    assert len(pts) - 1 == math.ceil((math.pi / 2) / shapes.ALPHA_MAX)
    assert np.allclose(pts[0], (10.0, 0.0)) and np.allclose(pts[-1], (0.0, 10.0), atol=1e-12)


# -- impossible dimensions --------------------------------------------------------------------------
@pytest.mark.parametrize("kind,dims,message", [
    ("i-section", dict(h=200, b=100, tw=100, tf=8), r"tw = 100 mm must be less than b = 100 mm"),
    ("i-section", dict(h=200, b=100, tw=5, tf=100), r"2\*tf = 200 mm must be less than h = 200 mm"),
    ("i-section", dict(h=200, b=100, tw=5.6, tf=8.5, r=50), r"r = 50 mm does not fit.*\(b - tw\)/2 = 47.2 mm"),
    ("i-section", dict(h=200, b=100, tw=-5, tf=8), r"tw = -5 mm must not be negative"),
    ("i-section", dict(h=200, b=100, tw=0, tf=8), r"tw = 0 mm must be greater than zero"),
    ("i-section", dict(h=200, b=100, tw=5), r"dimension 'tf' is missing"),
    ("i-section", dict(h=200, b=100, tw=5, tf=8, t=3), r"'t' is not a dimension of an i-section"),
    ("tube", dict(d=100, t=50), r"t = 50 mm must be less than d/2 = 50 mm"),
    ("channel", dict(h=200, b=80, tw=6, tf=11, r=80), r"r = 80 mm does not fit"),
    ("angle", dict(h=100, b=100, t=10, r=95), r"r \+ rt = 95 mm does not fit"),
    ("box", dict(h=100, b=100, t=60), r"2\*t = 120 mm must be less than b = 100 mm"),
    ("box", dict(h=100, b=100, t=5, ro=40, ri=2), r"ro = 40 mm is too large for ri = 2 mm"),
    ("tee", dict(h=100, b=100, tw=10, tf=100), r"tf = 100 mm must be less than h = 100 mm"),
    ("round", dict(d=float("nan")), r"d = nan must be a finite number"),
    ("rectangle", dict(b=40, h=100, wane=25), r"wane on the bottom face adds up to 50 mm"),
    ("rectangle", dict(b=40, h=100, wane={"top_middle": 3}), r"wane corner 'top_middle'"),
    ("hexagon", dict(d=3), r"kind = 'hexagon' is not a shape"),
])
def test_impossible_dimensions_name_the_dimension(kind, dims, message):
    with pytest.raises(ShapeError, match=message):
        make_shape(kind, **dims)


def test_every_shape_sits_with_its_bounding_box_at_the_origin():
    for kind, dims in CHORD_CASES:
        x0, y0, _, _ = make_shape(kind, **dims).bounds
        assert (x0, y0) == pytest.approx((0.0, 0.0), abs=1e-9), kind


def test_channel_and_tee_against_composite_rectangles():
    # Without fillets both are unions of rectangles: the composite-area method (textbook) gives the
    # centroid and Ix exactly.
    h, b, tw, tf = 200.0, 80.0, 6.0, 11.0
    p = section_properties(channel(h=h, b=b, tw=tw, tf=tf))
    rects = [(b, tf, tf / 2), (b, tf, h - tf / 2), (tw, h - 2 * tf, h / 2)]   # (width, height, y centre)
    a = sum(w * t for w, t, _ in rects)
    ix = sum(w * t**3 / 12 + w * t * (yc - h / 2) ** 2 for w, t, yc in rects)
    xc = (2 * b * tf * b / 2 + tw * (h - 2 * tf) * tw / 2) / a
    assert p.A == pytest.approx(a) and p.Ix == pytest.approx(ix) and p.cx == pytest.approx(xc)
    h, b, tw, tf = 120.0, 100.0, 8.0, 12.0
    p = section_properties(tee(h=h, b=b, tw=tw, tf=tf))
    rects = [(b, tf, h - tf / 2), (tw, h - tf, (h - tf) / 2)]
    a = sum(w * t for w, t, _ in rects)
    yc = sum(w * t * y for w, t, y in rects) / a
    ix = sum(w * t**3 / 12 + w * t * (y - yc) ** 2 for w, t, y in rects)
    assert p.A == pytest.approx(a) and p.cy == pytest.approx(yc) and p.Ix == pytest.approx(ix)
