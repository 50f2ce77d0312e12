"""Assessment: the capacity screen, section loss against a nominal, fits of a parametric kind."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from tests.common import EN_ANGLES, EN_I_SECTIONS
from tracer.assess import ASSESS_CAUTIONS, CHECK_KEYS, bending_stress_factor, screen_capacity, screen_json
from tracer.assess.materials import Material, load_material
from tracer.measurement import Measurement
from tracer.section.properties import section_properties
from tracer.result import measure
from tracer.section.shapes import angle, i_section
from tracer.inputs.sheet import parse_sheet

IPE200_SHEET = ('units = "mm"\nname = "IPE 200 as rolled"\n[uncertainty]\nreading = 0.05\n'
                '[shape]\nkind = "i-section"\nh = 200\nb = 100\ntw = 5.6\ntf = 8.5\nr = 12\n')


def ipe200() -> Measurement:
    return parse_sheet(IPE200_SHEET)


# -- the capacity screen ------------------------------------------------------------------------
def test_symmetric_section_stress_is_moment_over_elastic_modulus():
    p = section_properties(i_section(**EN_I_SECTIONS["IPE 200"][0]))
    xy, _ = i_section(**EN_I_SECTIONS["IPE 200"][0]).vertices()
    row = lambda v: np.array([v])  # noqa: E731
    c, I_eff = bending_stress_factor(xy[None, :, 0], xy[None, :, 1], cx=row(p.cx), cy=row(p.cy), I1=row(p.I1),
                                     I2=row(p.I2), theta=row(p.theta), axis="x")
    # sigma = M / S for bending about an axis of symmetry (textbook); S and I of IPE 200 are
    # 194.3 cm^3 and 1943 cm^4 (EN 10365:2017 tables, from memory).
    assert 1 / c[0] == pytest.approx(p.Sx_top, rel=1e-12)
    assert 1 / c[0] == pytest.approx(194.3e3, abs=0.05e3)
    assert I_eff[0] == pytest.approx(1943e4, abs=0.5e4)
    c_y, I_y = bending_stress_factor(xy[None, :, 0], xy[None, :, 1], cx=row(p.cx), cy=row(p.cy), I1=row(p.I1),
                                     I2=row(p.I2), theta=row(p.theta), axis="y")
    assert 1 / c_y[0] == pytest.approx(p.Sy_left, rel=1e-12) and I_y[0] == pytest.approx(p.Iy, rel=1e-12)


@pytest.mark.parametrize("axis", ["x", "y"])
def test_unsymmetric_bending_matches_the_xy_formula(axis):
    # The unsymmetric bending formula in the x, y axes (Gere & Goodno, Mechanics of Materials,
    # 8th ed., sec. 6.5, and Boresi & Schmidt, Advanced Mechanics of Materials, 6th ed., ch. 7;
    # from memory): sigma = [(My Ix + Mx Ixy) x' - (Mx Iy + My Ixy) y'] / (Ix Iy - Ixy^2) up to the
    # sign convention, and the curvature's size |I^-1 M| / E; checked on an L 100x100x10 angle.
    sec = angle(**EN_ANGLES["L 100x100x10"][0])
    p = section_properties(sec)
    xy, _ = sec.vertices()
    Mx, My = (1.0, 0.0) if axis == "x" else (0.0, 1.0)
    xs, ys = xy[:, 0] - p.cx, xy[:, 1] - p.cy
    det = p.Ix * p.Iy - p.Ixy**2
    sigma = ((My * p.Ix + Mx * p.Ixy) * xs - (Mx * p.Iy + My * p.Ixy) * ys) / det
    row = lambda v: np.array([v])  # noqa: E731
    c, I_eff = bending_stress_factor(xy[None, :, 0], xy[None, :, 1], cx=row(p.cx), cy=row(p.cy), I1=row(p.I1),
                                     I2=row(p.I2), theta=row(p.theta), axis=axis)
    assert c[0] == pytest.approx(np.max(np.abs(sigma)), rel=1e-9)
    K = np.array([[p.Ix, -p.Ixy], [-p.Ixy, p.Iy]])
    assert I_eff[0] == pytest.approx(1 / np.linalg.norm(np.linalg.solve(K, [Mx, My])), rel=1e-9)
    # The angle is weaker in biaxial bending than the symmetric formula M/Sx would say.
    assert c[0] > 1 / min(p.Sx_top, p.Sx_bot)


def test_screen_of_a_steel_beam_by_hand():
    m = ipe200()
    s355 = load_material("S355")
    s = screen_capacity(m, s355, span=5000.0, support="simple", udl=10.0, point=20e3, limit=250, draws=300)
    p = section_properties(m.section)
    w = 10.0 + 7850 * 9.80665 * p.A * 1e-9                    # self-weight from density x g x A
    # IPE 200 weighs 22.4 kg/m (EN 10365:2017, from memory): 0.2197 kN/m.
    assert s.values["self_weight"] == pytest.approx(22.4 * 9.80665e-3, rel=0.002)
    M = w * 5000**2 / 8 + 20e3 * 5000 / 4                       # textbook, as in test_beams
    assert s.values["max_moment"] == pytest.approx(M, rel=1e-12)
    assert s.values["stress"] == pytest.approx(M / p.Sx_top, rel=1e-9)
    assert s.values["utilisation"] == pytest.approx(M / p.Sx_top / 355, rel=1e-9)
    d = 5 * w * 5000**4 / (384 * 210e3 * p.Ix) + 20e3 * 5000**3 / (48 * 210e3 * p.Ix)
    assert s.values["deflection"] == pytest.approx(d, rel=1e-9)
    assert s.values["deflection_limit"] == 20.0
    # At the longest span the binding condition is exactly met.
    at = screen_capacity(m, s355, span=s.values["max_span"], support="simple", udl=10.0, point=20e3, limit=250,
                         draws=2)
    ratio = max(at.values["utilisation"], at.values["deflection"] / at.values["deflection_limit"])
    assert ratio == pytest.approx(1.0, rel=1e-9)


def test_screen_uncertainty_follows_the_modulus():
    # Utilisation ~ 1 / Sx_top (the self-weight is 2 % of the load): its relative u must match the
    # relative u of Sx_top from the result's own (linear) propagation.
    m = ipe200()
    s = screen_capacity(m, load_material("S235"), span=4000.0, support="fixed", udl=10.0, draws=2000)
    r = measure(m)
    rel_S = r.u["Sx_top"] / r.values()["Sx_top"]
    assert s.u["utilisation"] / s.values["utilisation"] == pytest.approx(rel_S, rel=0.15)
    assert s.values["utilisation_p95"] > s.values["utilisation"]
    assert 0 < s.u["utilisation_p95"] < s.u["utilisation"]
    doc = screen_json(s)
    for key in CHECK_KEYS:
        assert set(doc[key]) == {"value", "u", "unit"}, key
    assert doc["cautions"] == list(ASSESS_CAUTIONS) and doc["schema"] == "tracer/check/1"


def test_orientation_advice_for_a_joist_on_its_side():
    m = parse_sheet('units = "mm"\n[shape]\nkind = "rectangle"\nb = 195\nh = 47\n')
    s = screen_capacity(m, load_material("C24"), span=3000.0, support="simple", udl=1.0)
    # A b x h rectangle: Ix / Iy = (h / b)^2 and Sx / Sy = h / b (textbook).
    assert s.orientation["Ix_over_Iy"] == pytest.approx((47 / 195) ** 2, rel=1e-9)
    assert s.orientation["Sx_over_Sy"] == pytest.approx(47 / 195, rel=1e-9)
    assert s.orientation["strong_axis"] == "y" and "quarter turn" in s.orientation["advice"]
    assert any("weaker axis" in w for w in s.warnings)
    assert any("no u is given" in w for w in s.warnings)


def test_screen_refuses_bad_input():
    m = ipe200()
    no_density = Material(name="oak", E=10000.0, strength=30.0)
    with pytest.raises(ValueError, match="no load: give --udl or --point"):
        screen_capacity(m, no_density, span=3000.0, support="simple")
    with pytest.raises(ValueError, match="--support 'pinned'"):
        screen_capacity(m, no_density, span=3000.0, support="pinned", udl=1.0)
    with pytest.raises(ValueError, match="partial-factor"):
        screen_capacity(m, no_density, span=3000.0, support="simple", udl=1.0, partial_factor=0.5)


def test_materials_file(tmp_path):
    f = tmp_path / "oak.toml"
    f.write_text('name = "old oak"\nE = "10000MPa"\nstrength = "3ksi"\ndensity = "45lb/ft3"\n')
    mat = load_material(str(f))
    assert mat.name == "old oak" and mat.E == 10000.0
    assert mat.strength == pytest.approx(3000 * 4.4482216152605 / 25.4**2, rel=1e-12)   # 1 psi = 1 lbf/in^2
    assert mat.density == pytest.approx(45 * 0.45359237 / 0.3048**3, rel=1e-12)
    f.write_text('E = 10000\nstrength = "30MPa"\n')
    with pytest.raises(ValueError, match="E = 10000 needs its unit"):
        load_material(str(f))
    with pytest.raises(ValueError, match="'C99' is not a shipped material"):
        load_material("C99")


# -- section loss against a nominal -----------------------------------------------------------------
def corroded_ipe200(loss_top: float, *, turn: float = 33.0, mirror: bool = False, reading: float = 0.05):
    """IPE 200 whose top flange lost `loss_top` mm off its outer face, moved and turned."""
    import shapely

    from tracer.section.geometry import Section
    from tracer.inputs.sheet import sheet_text

    g = i_section(**EN_I_SECTIONS["IPE 200"][0]).to_shapely().difference(
        shapely.box(-1, 200 - loss_top, 101, 201))
    sec = Section.from_shapely(g)
    if mirror:
        sec = sec.mirrored("y")
    sec = sec.rotated(turn).translated(250.0, -40.0)
    return parse_sheet(sheet_text(sec, name="corroded IPE 200 (invented example)", units="mm",
                                  uncertainty={"reading": reading}))


NOMINAL_IPE200 = "i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm"


@pytest.mark.parametrize("mirror", [False, True])
def test_loss_of_a_thinned_flange(mirror):
    from tracer.assess import compare_json, compare_sections, nominal_input

    c = compare_sections(corroded_ipe200(1.5, mirror=mirror), nominal_input(NOMINAL_IPE200), draws=200,
                         torsion_draws=20)
    nom = section_properties(i_section(**EN_I_SECTIONS["IPE 200"][0]))
    # Closed form: a 1.5 mm layer off a 100 mm wide flange face is 150 mm^2 of A; about the
    # nominal centroid its second moment is b t^3/12 + b t (h/2 - t/2)^2 (parallel axes), and the
    # remaining section's centroid drops by 150 (h/2 - t/2) / (A - 150).
    b, t, h = 100.0, 1.5, 200.0
    d = h / 2 - t / 2
    A = nom.A - b * t
    Ix = nom.Ix - (b * t**3 / 12 + b * t * d**2) - A * (b * t * d / A) ** 2
    assert c.loss["A"] == pytest.approx(100 * b * t / nom.A, abs=1e-6)
    assert c.loss["Ix"] == pytest.approx(100 * (nom.Ix - Ix) / nom.Ix, abs=1e-5)
    # (an I-section's mirror image is itself turned, so either registration is right)
    assert c.registration.overlap == pytest.approx(A / nom.A, abs=1e-7)
    assert c.missing_area == pytest.approx(b * t, rel=1e-6) and c.extra_area < 1e-3
    plates = {p["name"]: p for p in c.plates}
    # The thinned flange may land on top or below: both fits are equally good.
    thin, full = sorted((plates["top flange"], plates["bottom flange"]), key=lambda p: p["thinnest"])
    assert thin["thinnest"] == pytest.approx(8.5 - 1.5, abs=1e-6) and full["thinnest"] == pytest.approx(8.5, abs=1e-6)
    assert thin["status"] == "loss beyond rolling tolerance"   # 7.0 < 8.5 - 1.0 (EN 10034:1993, from memory)
    assert plates["web"]["status"] == "within rolling tolerance"
    assert 0 < c.loss_u["A"] < 1.0
    doc = compare_json(c)
    assert list(doc["loss"]) == ["A", "Ix", "Iy", "Sx_top", "Zx", "J"]
    assert all(set(v) == {"value", "u", "unit"} and v["unit"] == "%" for v in doc["loss"].values())
    assert doc["cautions"] == list(ASSESS_CAUTIONS)


def test_thinning_within_rolling_tolerance_is_not_loss():
    from tracer.assess import compare_sections, nominal_input

    # A flange 0.4 mm thin is inside the -1.0 mm band of EN 10034:1993 for tf = 8.5 mm (from memory).
    c = compare_sections(corroded_ipe200(0.4, reading=0.01), nominal_input(NOMINAL_IPE200), draws=100,
                         torsion_draws=10)
    top = min((p for p in c.plates if "flange" in p["name"]), key=lambda p: p["thinnest"])
    assert top["thinnest"] == pytest.approx(8.1, abs=1e-6) and top["status"] == "within rolling tolerance"


def test_plate_thickness_against_shapely():
    from shapely import intersection, length, linestrings

    from tracer.assess.plates import plate_elements, plate_thickness
    from tracer.section.shapes import make_shape

    for kind, dims in [("channel", dict(h=200, b=75, tw=8.5, tf=11.5, r=12)), ("tube", dict(d=168.3, t=8.0)),
                       ("box", dict(h=200, b=100, t=8, ro=12, ri=8))]:
        sec = make_shape(kind, **dims)
        xy, starts = sec.vertices()
        for p in plate_elements(kind, dims):
            ref = length(intersection(linestrings(p.cuts), sec.to_shapely()))     # shapely as reference
            np.testing.assert_allclose(plate_thickness(xy, starts, p), ref, atol=1e-9)
            np.testing.assert_allclose(ref, p.thickness, atol=1e-3)


# -- fit to a parametric kind -------------------------------------------------------------------
def perturbed_outline(kind: str, dims: dict, *, noise: float, seed: int, turn: float = 27.0) -> Measurement:
    """A known shape, turned and moved, every vertex moved by normal noise of `noise` mm, as an
    outline sheet that states that reading uncertainty."""
    from tracer.section.geometry import Section
    from tracer.section.shapes import make_shape
    from tracer.inputs.sheet import sheet_text

    rng = np.random.default_rng(seed)
    xy, _ = make_shape(kind, chord_angle=0.05, **dims).rotated(turn).translated(30.0, -12.0).vertices()
    noisy = Section(xy + rng.normal(0.0, noise, xy.shape))
    return parse_sheet(sheet_text(noisy, name=f"traced {kind} (invented example)", units="mm",
                                  uncertainty={"reading": noise}))


FIT_CASES = [
    ("i-section", EN_I_SECTIONS["IPE 200"][0]),                 # EN 10365 dimensions (from memory)
    ("channel", dict(h=200, b=75, tw=8.5, tf=11.5, r=12)),        # a UPN 200 (EN 10279 dimensions, from memory)
    ("angle", dict(h=150, b=90, t=10, r=12, rt=6)),               # L 150x90x10 (EN 10056-1, from memory)
    ("box", dict(h=200, b=100, t=8, ro=12, ri=8)),                # RHS 200x100x8 (EN 10210-2, from memory)
    ("tube", dict(d=168.3, t=8.0)),                               # CHS 168.3x8 (EN 10210-2, from memory)
]


@pytest.mark.parametrize("kind,dims", FIT_CASES, ids=[c[0] for c in FIT_CASES])
def test_fit_recovers_known_dimensions_within_U(kind, dims):
    from tracer.assess.fit import fit_shape

    f = fit_shape(perturbed_outline(kind, dims, noise=0.03, seed=7), kind, draws=60)
    for key, true in dims.items():
        assert abs(f.dims[key] - true) <= 2 * f.u[key], (key, f.dims[key], true, f.u[key])   # k = 2
        assert f.u[key] < 0.2, key                    # and u is not so wide that any answer passes
    if kind != "tube":                                # a tube fits at any turn
        assert f.angle == pytest.approx(-27.0, abs=0.1) and f.mirrored is False


def test_fit_is_robust_to_a_pit_and_judges_tolerance():
    import shapely

    from tracer.assess.fit import fit_shape
    from tracer.section.geometry import Section
    from tracer.inputs.sheet import sheet_text

    # A channel with a 3 mm deep corrosion pit, 20 mm long, in its web's outer face.
    dims = dict(h=200, b=75, tw=8.5, tf=11.5, r=12)
    from tracer.section.shapes import channel

    pitted = channel(**dims, chord_angle=0.05).to_shapely().difference(shapely.box(-1, 90, 3, 110))
    m = parse_sheet(sheet_text(Section.from_shapely(pitted), name="pitted channel (invented example)", units="mm",
                               uncertainty={"reading": 0.02}))
    f = fit_shape(m, "channel", nominal=dims, draws=30)
    # the pit is an outlier, not a thinner web: the web stays within 0.1 mm of 8.5
    assert f.dims["tw"] == pytest.approx(8.5, abs=0.1) and f.outliers > 0.01
    assert f.tolerance["tw"]["status"] == "within"           # EN 10279 band +-0.5 mm (from memory)
    from tracer.assess import fit_json

    doc = fit_json(f, m)
    assert doc["kind"] == "channel" and set(doc["dims"]) == set(dims)
    assert all(set(v) == {"value", "u", "unit"} and v["unit"] == "mm" for v in doc["dims"].values())
    assert doc["cautions"] == list(ASSESS_CAUTIONS)
