"""Torsion constant, shear centre and warping constant against closed forms and published tables."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import numpy as np
import pytest

from tracer.section.geometry import Section
from tracer.torsion.mesh import triangulate
from tracer.section.properties import section_properties
from tracer.section.shapes import angle, box, channel, i_section, rectangle, round_bar, tube
from tracer.torsion import TorsionModel, evaluate_torsion, torsion_properties
from tracer.uncertainty import ErrorModel, ScaleError

from tests.common import printed_tolerance, rectangle_ring

# J = beta b t^3 of a b x t rectangle: Timoshenko & Goodier, Theory of Elasticity, 3rd ed., 1970,
# sec. 109, table of torsion of rectangular bars (k1 column); values from memory.
TIMOSHENKO_BETA = {1.0: 0.141, 1.5: 0.196, 2.0: 0.229, 3.0: 0.263, 4.0: 0.281, 10.0: 0.312}


@pytest.mark.parametrize("ratio", sorted(TIMOSHENKO_BETA))
def test_rectangles_match_the_timoshenko_table(ratio):
    t = 10.0
    r = torsion_properties(rectangle(b=ratio * t, h=t))
    beta = r.J / (ratio * t * t**3)
    assert abs(beta - TIMOSHENKO_BETA[ratio]) <= printed_tolerance(TIMOSHENKO_BETA[ratio])
    assert r.converged and r.error["J"] <= 1e-3 * r.J


def test_circle_and_tube_twist_without_warping():
    # J = pi (D^4 - d^4) / 32 (closed form); a 0.02 rad chord polygon is within 1.3e-4 of the circle.
    for section, D, d in ((round_bar(d=40, chord_angle=0.02), 40.0, 0.0), (tube(d=100, t=6, chord_angle=0.02), 100.0, 88.0)):
        r = torsion_properties(section)
        assert r.J == pytest.approx(math.pi * (D**4 - d**4) / 32, rel=5e-4)
        assert abs(r.Cw) <= 1e-6 * r.J * D**2
        assert (r.xs, r.ys) == pytest.approx((D / 2, D / 2), abs=1e-6 * D)


def test_equilateral_triangle():
    # J = sqrt(3) a^4 / 80 (Timoshenko & Goodier, sec. 105, closed form).
    a = 50.0
    r = torsion_properties(Section([(0, 0), (a, 0), (a / 2, a * math.sqrt(3) / 2)]))
    assert r.J == pytest.approx(math.sqrt(3) * a**4 / 80, rel=1e-3)


def test_ellipse_torsion_and_warping_constant():
    # Ellipse with semi-axes a, b: J = pi a^3 b^3 / (a^2 + b^2), warping function
    # omega = -(a^2 - b^2)/(a^2 + b^2) x y (Timoshenko & Goodier, sec. 106), so
    # Cw = ((a^2 - b^2)/(a^2 + b^2))^2 * pi a^3 b^3 / 24 (closed form of ∫ x^2 y^2 dA).
    a, b = 60.0, 30.0
    ang = np.linspace(0, 2 * np.pi, 800, endpoint=False)
    r = torsion_properties(Section(np.column_stack([a * np.cos(ang), b * np.sin(ang)])))
    assert r.J == pytest.approx(math.pi * a**3 * b**3 / (a * a + b * b), rel=1e-3)
    k = (a * a - b * b) / (a * a + b * b)
    assert r.Cw == pytest.approx(k * k * math.pi * a**3 * b**3 / 24, rel=2e-3)


def test_thin_walled_closed_section_follows_bredt():
    # Bredt: J = 4 A_m^2 / ∮ ds/t for a thin closed wall (common practice); t/B = 0.02.
    B, t = 100.0, 2.0
    r = torsion_properties(box(h=B, b=B, t=t))
    Am, s = (B - t) ** 2, 4 * (B - t)
    assert r.J == pytest.approx(4 * Am**2 / (s / t), rel=0.02)


def test_thin_walled_open_i_section():
    # Thin open sections: J = Σ b t^3 / 3 (within 3 % for b/t >= 20); doubly symmetric I:
    # Cw = Iy h0^2 / 4 with h0 between flange centroids (thin-walled theory, within 3 %).
    b, h, t = 100.0, 200.0, 2.0
    s = i_section(h=h, b=b, tw=t, tf=t)
    r = torsion_properties(s)
    assert r.J == pytest.approx((2 * b * t**3 + (h - 2 * t) * t**3) / 3, rel=0.03)
    assert r.Cw == pytest.approx(section_properties(s).Iy * (h - t) ** 2 / 4, rel=0.03)
    assert (r.xs, r.ys) == pytest.approx((b / 2, h / 2), abs=1e-6 * h)


def test_thin_walled_channel_shear_centre():
    # e = 3 b^2 tf / (6 b tf + h tw), from the web's mid-line, b and h between mid-lines
    # (thin-walled theory, e.g. Gere & Goodno, Mechanics of Materials, sec. 6.9).
    h, b, tw, tf = 200.0, 75.0, 2.0, 2.0
    r = torsion_properties(channel(h=h, b=b, tw=tw, tf=tf))
    bm, hm = b - tw / 2, h - tf
    e = 3 * bm**2 * tf / (6 * bm * tf + hm * tw)
    assert tw / 2 - r.xs == pytest.approx(e, rel=0.01)   # on the far side of the web from the flanges
    assert r.ys == pytest.approx(h / 2, abs=1e-6 * h)


def test_thin_angle_shear_centre_at_the_heel():
    # The shear centre of a thin angle lies where the legs' mid-lines meet (common practice).
    r = torsion_properties(angle(h=100, b=100, t=2))
    assert (r.xs, r.ys) == pytest.approx((1.0, 1.0), abs=0.5)


# Rolled sections, fillets included: It [cm^4] and Iw [10^3 cm^6]. Source: EN 10365:2017 section
# tables as printed in the European producers' catalogues; values from memory.
ROLLED_TORSION = {
    "IPE 200": (dict(h=200, b=100, tw=5.6, tf=8.5, r=12), 6.98, 12.99),
    "IPE 300": (dict(h=300, b=150, tw=7.1, tf=10.7, r=15), 20.12, 125.9),
    "HE 200 B": (dict(h=200, b=200, tw=9, tf=15, r=18), 59.28, None),
}


@pytest.mark.parametrize("name", sorted(ROLLED_TORSION))
def test_rolled_sections_match_the_published_torsion_table(name):
    dims, It, Iw = ROLLED_TORSION[name]
    r = torsion_properties(i_section(**dims, chord_angle=0.05))
    assert r.J / 1e4 == pytest.approx(It, rel=0.02)
    if Iw is not None:
        assert r.Cw / 1e9 == pytest.approx(Iw, rel=0.02)


def test_holes_lower_the_torsion_constant_and_are_handled():
    plate = Section(rectangle_ring(0, 0, 200, 20))
    holed = Section(rectangle_ring(0, 0, 200, 20), [rectangle_ring(40, 6, 60, 14), rectangle_ring(140, 6, 160, 14)])
    j_plate, j_holed = torsion_properties(plate).J, torsion_properties(holed).J
    assert 0.8 * j_plate < j_holed < j_plate


def test_mesh_covers_the_section_and_keeps_its_boundary():
    s = box(h=100, b=60, t=4, ro=8, ri=4, chord_angle=0.05)
    m = triangulate(s, 2.0)
    assert (m.areas > 0).all()
    assert m.areas.sum() == pytest.approx(section_properties(s).A, rel=1e-12)
    xy, _ = s.vertices()
    nodes = {tuple(p) for p in np.round(m.nodes, 9)}
    assert all(tuple(p) in nodes for p in np.round(xy, 9))


def test_unmoved_draws_give_the_base_values_and_scale_gives_the_powers():
    s = rectangle(b=100, h=10)
    tm = TorsionModel(s)
    base = tm.converge()
    xy, _ = s.vertices()
    same = tm.draws(np.repeat(xy[None, :, 0], 3, axis=0), np.repeat(xy[None, :, 1], 3, axis=0))
    assert same[0] == pytest.approx(base.J, rel=1e-9) and same[1] == pytest.approx(base.Cw, rel=1e-9)
    # J goes as length^4 and Cw as length^6: under a relative scale error u, u(J) = 4u J, u(Cw) = 6u Cw.
    tor, unc = evaluate_torsion(s, ErrorModel((ScaleError(1e-3, origin=(50.0, 5.0)),)), draws=400)
    assert unc.u["J"] == pytest.approx(4e-3 * tor.J, rel=0.15)
    assert unc.u["Cw"] == pytest.approx(6e-3 * tor.Cw, rel=0.15)


def test_cli_reports_torsion_keys(tmp_path):
    sheet = tmp_path / "ipe.toml"
    sheet.write_text('units = "mm"\n[uncertainty]\nreading = 0.05\n[shape]\nkind = "i-section"\n'
                     'h = 200\nb = 100\ntw = 5.6\ntf = 8.5\nr = 12\n')
    r = subprocess.run([sys.executable, "-m", "tracer", "measure", str(sheet), "--torsion", "--json", "-",
                        "--units", "cm", "--draws", "60"], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    p = doc["properties"]
    assert p["J"]["unit"] == "cm^4" and p["Cw"]["unit"] == "cm^6" and p["xs"]["unit"] == "cm"
    assert p["J"]["value"] == pytest.approx(6.98, rel=0.02)     # IPE 200, EN 10365 (from memory)
    assert all(p[k]["u"] > 0 for k in ("J", "Cw"))
    assert doc["torsion"]["converged"] is True and doc["torsion"]["monte_carlo"]["draws"] == 60
