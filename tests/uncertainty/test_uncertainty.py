"""Uncertainty: closed forms, linear against Monte Carlo, and coverage of the k = 2 intervals."""

from __future__ import annotations

import math

import numpy as np
import pytest

from tracer.errors import InputError
from tracer.section.geometry import Section
from tracer.section.properties import PROPERTY_KEYS, section_properties
from tracer.section.shapes import angle, make_shape, rectangle
from tracer.uncertainty import (BoundaryOffset, ErrorModel, HomographyError, PointNoise, Readings, ScaleError,
                                TiltAllowance, affine_jacobian, evaluate_uncertainty, propagate_linear,
                                propagate_monte_carlo, resolution_u, rotate_model)

from tests.common import rectangle_ring, star_ring

K = {k: i for i, k in enumerate(PROPERTY_KEYS)}


def readings_model(kind: str, dims: dict, u: float, distribution: str = "normal", **extra) -> tuple[Section, ErrorModel]:
    names = tuple(dims)
    build = lambda p: make_shape(kind, **dict(zip(names, p)), **extra)  # noqa: E731
    section = build(list(dims.values()))
    J = affine_jacobian(build, list(dims.values()))
    return section, ErrorModel((Readings(names, [u] * len(names), J, distribution),))


# -- closed forms ---------------------------------------------------------------------------------
def test_rectangle_readings_closed_form():
    # Law of propagation for Ix = b h^3 / 12: u(Ix)^2 = (h^3/12 u_b)^2 + (b h^2/4 u_h)^2; A = b h:
    # u(A)^2 = (h u_b)^2 + (b u_h)^2 (JCGM 100:2008, eq. 10).
    b, h, ub, uh = 47.0, 195.0, 0.3, 0.5
    build = lambda p: rectangle(b=p[0], h=p[1])  # noqa: E731
    model = ErrorModel((Readings(("b", "h"), [ub, uh], affine_jacobian(build, [b, h])),))
    lin = propagate_linear(rectangle(b=b, h=h), model)
    # (rel 1e-9: the Jacobian of the builder comes from differences, exact but for rounding)
    assert lin.u[K["Ix"]] == pytest.approx(math.hypot(h**3 / 12 * ub, b * h**2 / 4 * uh), rel=1e-9)
    assert lin.u[K["A"]] == pytest.approx(math.hypot(h * ub, b * uh), rel=1e-9)
    assert lin.u[K["Zx"]] == pytest.approx(math.hypot(h**2 / 4 * ub, b * h / 2 * uh), rel=1e-9)
    assert lin.u[K["Sx_top"]] == pytest.approx(math.hypot(h**2 / 6 * ub, b * h / 3 * uh), rel=1e-9)
    assert lin.u[K["cy"]] == pytest.approx(uh / 2, rel=1e-9)
    assert lin.u[K["Ixy"]] == 0.0 and lin.u[K["theta"]] == 0.0


def test_tube_readings_closed_form():
    # A = pi t (d - t): dA/dd = pi t, dA/dt = pi (d - 2t) (closed form); the polygon is within 1e-5.
    d, t, u = 168.3, 8.0, 0.05
    section, model = readings_model("tube", {"d": d, "t": t}, u)
    lin = propagate_linear(section, model)
    assert lin.u[K["A"]] == pytest.approx(math.hypot(math.pi * t * u, math.pi * (d - 2 * t) * u), rel=2e-5)


def test_resolution_is_a_rectangular_distribution():
    # u = r / sqrt(12) for a rectangular distribution of width r (JCGM 100:2008, 4.3.7).
    assert resolution_u(0.01) == pytest.approx(0.01 / math.sqrt(12))
    section, model = readings_model("rectangle", {"b": 47.0, "h": 195.0}, resolution_u(0.5), "rectangular")
    mc = propagate_monte_carlo(section, model, draws=40000)
    assert mc.u[K["A"]] == pytest.approx(propagate_linear(section, model).u[K["A"]], rel=0.02)


def test_boundary_offset_moves_the_area_by_the_perimeter():
    # Steiner: an outward offset d of a polygon adds P d to the area at first order (common practice
    # in morphology; exact for the parallel edges of a polygon).
    s = Section([(0, 0), (40, 0), (40, 10), (10, 10), (10, 60), (0, 60)], [rectangle_ring(2, 20, 6, 50)])
    p = section_properties(s)
    lin = propagate_linear(s, ErrorModel((BoundaryOffset(0.1),)))
    assert lin.u[K["A"]] == pytest.approx(0.1 * p.perimeter, rel=1e-12)


def test_scale_error_follows_the_powers_of_length():
    # Under a scale s, A goes as s^2 and second moments as s^4 (dimensional analysis).
    s = angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05)
    p = section_properties(s)
    lin = propagate_linear(s, ErrorModel((ScaleError(0.002, origin=(p.cx, p.cy)),)))
    assert lin.u[K["A"]] == pytest.approx(2 * 0.002 * p.A, rel=1e-9)
    assert lin.u[K["Ix"]] == pytest.approx(4 * 0.002 * p.Ix, rel=1e-9)
    assert lin.u[K["Zx"]] == pytest.approx(3 * 0.002 * p.Zx, rel=1e-9)
    assert lin.u[K["theta"]] == pytest.approx(0.0, abs=1e-9)


def test_independent_point_noise_on_a_square():
    # Shoelace: dA/dx_i = (y_{i+1} - y_{i-1})/2, so each corner of an a x a square has |grad A|^2 = a^2/2
    # and u(A) = sqrt(4 a^2 / 2) u = sqrt(2) a u (closed form).
    a, u = 50.0, 0.1
    lin = propagate_linear(Section(rectangle_ring(0, 0, a, a)), ErrorModel((PointNoise(u),)))
    assert lin.u[K["A"]] == pytest.approx(math.sqrt(2) * a * u, rel=1e-12)


def test_correlated_point_noise_matches_the_dense_covariance():
    # A regular 64-gon (even spacing); the quadratic form s^T C s with C_ij = exp(-d_ij^2 / (2 l^2)),
    # d_ij the shorter distance along the ring, computed densely as the reference.
    n, r, ell, u = 64, 100.0, 30.0, 0.2
    ang = np.arange(n) * 2 * np.pi / n
    s = Section(np.column_stack([r * np.cos(ang), r * np.sin(ang)]))
    model = ErrorModel((PointNoise(u, correlation_length=ell, direction="normal"),))
    lin = propagate_linear(s, model)
    from tracer.section.sensitivity import property_gradients

    g = property_gradients(s)[K["A"]]
    xy, _ = s.vertices()
    normals = xy / r
    sn = (g * normals.T).sum(axis=0) * u
    spacing = 2 * r * math.sin(math.pi / n)
    k = np.arange(n)
    lag = np.minimum(np.abs(k[:, None] - k[None, :]), n - np.abs(k[:, None] - k[None, :])) * spacing
    C = np.exp(-0.5 * (lag / ell) ** 2)
    eig = np.linalg.eigvalsh(C)
    assert eig.min() > -1e-9 * eig.max()     # the kernel is a valid covariance on this ring
    assert lin.u[K["A"]] == pytest.approx(math.sqrt(sn @ C @ sn), rel=1e-9)
    # And the draws have that covariance: Monte Carlo agrees with it.
    mc = propagate_monte_carlo(s, model, draws=20000)
    assert mc.u[K["A"]] == pytest.approx(lin.u[K["A"]], rel=0.03)


def test_correlation_makes_noise_matter_more_than_independent_noise():
    # Errors alike over long stretches do not average away: u(A) grows with the correlation length.
    ang = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    s = Section(np.column_stack([80 * np.cos(ang), 50 * np.sin(ang)]))
    us = [propagate_linear(s, ErrorModel((PointNoise(0.1, correlation_length=ell, direction="normal"),))).u[K["A"]]
          for ell in (0.0, 2.0, 20.0)]
    assert us[0] < us[1] < us[2]


def test_tilt_allowance_moments_and_area():
    # E[sec(t) - 1] and E[(sec(t) - 1)^2] for t uniform on [0, t_max], against scipy's quadrature.
    from scipy.integrate import quad

    comp = TiltAllowance(5.0)
    tm = math.radians(5.0)
    m1 = quad(lambda t: 1 / math.cos(t) - 1, 0, tm)[0] / tm
    m2 = quad(lambda t: (1 / math.cos(t) - 1) ** 2, 0, tm)[0] / tm
    assert comp.stretch_moments() == pytest.approx((m1, m2), rel=1e-9)
    # A stretch by (1 + e) along any direction multiplies the area by (1 + e): u(A) = A sqrt(E[e^2]).
    s = rectangle(b=100, h=60)
    A = section_properties(s).A
    lin = propagate_linear(s, ErrorModel((comp,)))
    assert lin.u[K["A"]] == pytest.approx(A * math.sqrt(m2), rel=1e-9)
    mc = propagate_monte_carlo(s, ErrorModel((comp,)), draws=40000)
    assert mc.u[K["A"]] == pytest.approx(A * math.sqrt(m2), rel=0.02)
    assert mc.p05[K["A"]] >= A     # one-sided: the true section is never smaller than measured


def test_homography_jacobian_and_monte_carlo():
    H = np.array([[0.21, 0.01, -30.0], [-0.004, 0.2, -12.0], [1e-5, -2e-5, 1.0]])
    cov = np.diag([1e-7, 1e-8, 1e-3, 1e-8, 1e-7, 1e-3, 1e-12, 1e-12])
    comp = HomographyError(H, cov)
    s = rectangle(b=120, h=80).translated(10, 5)
    xy, _ = s.vertices()
    J = comp._jacobian(xy)
    # Finite differences of the projective map as the reference.
    Hinv = np.linalg.inv(H)
    src = np.column_stack([xy, np.ones(len(xy))]) @ Hinv.T
    src = src[:, :2] / src[:, 2:]
    for j in range(8):
        def mapped(delta):
            h = H.ravel().copy()
            h[j] += delta
            M = h.reshape(3, 3)
            q = np.column_stack([src, np.ones(len(src))]) @ M.T
            return q[:, :2] / q[:, 2:]
        fd = (mapped(1e-7) - mapped(-1e-7)) / 2e-7
        assert J[j].T == pytest.approx(fd, rel=1e-5, abs=1e-7 * np.abs(fd).max())
    lin = propagate_linear(s, ErrorModel((comp,)))
    mc = propagate_monte_carlo(s, ErrorModel((comp,)), draws=20000)
    for key in ("A", "Ix", "Iy", "cx"):
        assert mc.u[K[key]] == pytest.approx(lin.u[K[key]], rel=0.03), key


# -- linear against Monte Carlo --------------------------------------------------------------------
@pytest.mark.parametrize("make", [
    lambda: readings_model("i-section", dict(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0), 0.05, chord_angle=0.05),
    lambda: readings_model("angle", dict(h=150.0, b=90.0, t=10.0, r=12.0, rt=6.0), 0.05, chord_angle=0.05),
    lambda: (Section(star_ring(np.random.default_rng(4), 300, r_min=0.8)),
             ErrorModel((PointNoise(0.01), BoundaryOffset(0.02), ScaleError(5e-4), TiltAllowance(1.0)))),
], ids=["i-section", "angle", "outline"])
def test_linear_and_monte_carlo_agree_on_small_uncertainties(make):
    section, model = make()
    lin = propagate_linear(section, model)
    mc = propagate_monte_carlo(section, model, draws=20000)
    independent_vertices = any(isinstance(c, PointNoise) for c in model.components)
    for k, key in enumerate(PROPERTY_KEYS):
        if independent_vertices and key.startswith("S"):
            # An extreme fibre is a maximum over vertices; with independent vertex noise it is
            # not smooth, and that is where the tool reports Monte Carlo instead (next test).
            continue
        if lin.u[k] == 0:
            assert mc.u[k] <= 1e-6 * max(1e-300, np.nanmax(mc.u)), key
            continue
        assert mc.u[k] == pytest.approx(lin.u[k], rel=0.05), key


def test_disagreement_reports_monte_carlo_and_warns():
    # A flat triangle 5 mm deep with 2 mm of noise on each corner: its minor second moment is a
    # strongly nonlinear function of the corners, so linear propagation fails and Monte Carlo is
    # reported for it; the area is linear in each coordinate and stays linear.
    s = Section([(0, 0), (100, 0), (50, 5)])
    unc = evaluate_uncertainty(s, ErrorModel((PointNoise(2.0),)))
    mc = propagate_monte_carlo(s, ErrorModel((PointNoise(2.0),)))
    assert unc.method["A"] == "linear"
    assert unc.method["I2"] == "monte carlo" and unc.u["I2"] == pytest.approx(mc.u[K["I2"]], rel=1e-12)
    assert any("linear propagation is not adequate for" in w and "I2" in w for w in unc.warnings)


def test_monte_carlo_is_reproducible_and_adaptive():
    section, model = readings_model("rectangle", {"b": 47.0, "h": 195.0}, 0.5)
    a = propagate_monte_carlo(section, model)
    b = propagate_monte_carlo(section, model)
    c = propagate_monte_carlo(section, model, seed=1)
    assert np.array_equal(a.u, b.u) and not np.array_equal(a.u, c.u)
    assert a.converged and a.draws >= 2000 and a.draws % 1000 == 0
    assert propagate_monte_carlo(section, model, draws=777).draws == 777
    capped = propagate_monte_carlo(section, model, max_draws=1000, batch=1000)
    assert not capped.converged


def test_rotating_the_model_keeps_the_principal_uncertainties():
    section, model = readings_model("angle", dict(h=150.0, b=90.0, t=10.0, r=12.0, rt=6.0), 0.1, chord_angle=0.05)
    p = section_properties(section)
    before = propagate_linear(section, model)
    turned = section.rotated(-p.theta, origin=(p.cx, p.cy))
    after = propagate_linear(turned, rotate_model(model, -p.theta, (p.cx, p.cy)))
    for key in ("A", "I1", "I2", "S1", "S2", "Ip"):
        assert after.u[K[key]] == pytest.approx(before.u[K[key]], rel=1e-6), key
    assert after.u[K["Ix"]] == pytest.approx(before.u[K["I1"]], rel=1e-6)


@pytest.mark.parametrize("make,message", [
    (lambda: PointNoise(-1.0), "PointNoise.u must be positive"),
    (lambda: PointNoise(0.0), "PointNoise.u must be positive"),
    (lambda: BoundaryOffset(float("nan")), "BoundaryOffset.u must be positive"),
    (lambda: PointNoise(0.1, direction="up"), "direction = 'up'"),
    (lambda: PointNoise(0.1, correlation_length=3, distribution="rectangular"), "normal distribution only"),
    (lambda: TiltAllowance(0.0), r"max_tilt_deg = 0.0 must be in \(0, 60\)"),
    (lambda: HomographyError(np.eye(2), np.eye(8)), "H must be 3 x 3"),
])
def test_bad_error_models_are_refused(make, message):
    with pytest.raises(InputError, match=message):
        make()


# -- coverage: the k = 2 intervals cover the truth about 95 % of the time ---------------------------
def _coverage(errors: np.ndarray, u: np.ndarray) -> tuple[float, float]:
    """Share of |error| <= 2u, and the ratio of the errors' spread to the stated u."""
    covered = float(np.mean(np.abs(errors) <= 2 * u))
    spread = float(np.sqrt(np.mean(errors**2)) / np.sqrt(np.mean(u**2)))
    return covered, spread


def _assert_covers(trials: int, measure_once, truth: dict, *, conservative: bool = False) -> None:
    """Run `measure_once()` -> (values, u) `trials` times; check the k = 2 coverage of COVERED.

    95 % +- 3 % of the intervals must hold the truth (or at least 95 % where the error is known
    to have short tails), and the errors' spread must agree with u within 20 %.
    """
    errors = {k: [] for k in COVERED}
    us = {k: [] for k in COVERED}
    for _ in range(trials):
        values, u = measure_once()
        for k in COVERED:
            errors[k].append(values[k] - truth[k])
            us[k].append(u[k])
    for k in COVERED:
        covered, spread = _coverage(np.array(errors[k]), np.array(us[k]))
        if conservative:
            assert covered >= 0.95, f"{k}: coverage {covered:.3f}"
        else:
            assert 0.92 <= covered <= 0.98, f"{k}: coverage {covered:.3f}"
        assert 0.8 <= spread <= 1.2, f"{k}: errors spread {spread:.3f} x u"


COVERED = ("A", "Ix", "Iy", "I1", "I2")


@pytest.mark.parametrize("kind,dims,u,distribution", [
    ("i-section", dict(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0), 0.08, "normal"),
    ("angle", dict(h=150.0, b=90.0, t=10.0, r=12.0, rt=6.0), 0.1, "normal"),
    ("i-section", dict(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0), resolution_u(1.0), "rectangular"),
], ids=["i-section", "angle", "i-section-resolution"])
def test_coverage_of_readings(kind, dims, u, distribution):
    # Simulated measurements of a known section: each reading off by a draw from its stated
    # distribution (normal with sd u, or read to the nearest tick of a 1 mm scale); the linear u at
    # the measured values must cover the true properties 95 % +- 3 % of the time, and not be
    # inflated. A sum of few rectangular errors has short tails, so there k = 2 covers more than
    # 95 % (JCGM 100:2008, G.2.3): for resolution readings the check is coverage >= 95 %.
    rng = np.random.default_rng(2024)
    names, true = tuple(dims), np.array(list(dims.values()))
    truth = section_properties(make_shape(kind, chord_angle=0.05, **dims)).values()

    def measure_once():
        if distribution == "normal":
            measured = true + rng.normal(0, u, len(true))
        else:
            offset = rng.uniform(0, 1.0, len(true))               # where the scale's ticks fall
            measured = np.round(true + offset) - offset          # read to the nearest 1 mm tick
        build = lambda p: make_shape(kind, chord_angle=0.05, **dict(zip(names, p)))  # noqa: E731
        section = build(measured)
        model = ErrorModel((Readings(names, [u] * len(names), affine_jacobian(build, measured), distribution),))
        lin = propagate_linear(section, model)
        return section_properties(section).values(), dict(zip(PROPERTY_KEYS, lin.u))

    _assert_covers(1000, measure_once, truth, conservative=distribution != "normal")


def test_coverage_of_a_traced_outline_with_systematic_offset():
    # A traced outline: every vertex off by a shared boundary offset (threshold bias) plus small
    # independent noise, and the scale off by its u. Intervals from the full model must cover.
    rng = np.random.default_rng(77)
    ang = np.linspace(0, 2 * np.pi, 240, endpoint=False)
    rad = 60 + 8 * np.cos(3 * ang) + 5 * np.sin(2 * ang)
    true_xy = np.column_stack([rad * np.cos(ang) * 1.3, rad * np.sin(ang)])
    truth_section = Section(true_xy)
    truth = section_properties(truth_section).values()
    u_off, u_pt, u_sc = 0.15, 0.05, 1e-3
    from tracer.uncertainty.models import _Context

    ctx = _Context.of(truth_section, section_properties(truth_section))
    model = ErrorModel((BoundaryOffset(u_off), PointNoise(u_pt), ScaleError(u_sc)))

    def measure_once():
        xy = true_xy + rng.normal(0, u_off) * ctx.miters.T + rng.normal(0, u_pt, true_xy.shape)
        xy *= 1 + rng.normal(0, u_sc)
        measured = Section(xy)
        lin = propagate_linear(measured, model)
        return section_properties(measured).values(), dict(zip(PROPERTY_KEYS, lin.u))

    _assert_covers(600, measure_once, truth)


def test_coverage_of_what_a_user_is_shown():
    # Through the whole path a user runs (sheet -> measure -> reported u, linear or Monte Carlo):
    # a bevelled-wane rectangle read with a 0.5 mm u, 300 simulated measurements.
    from tracer.result import measure
    from tracer.inputs.sheet import parse_sheet

    rng = np.random.default_rng(5)
    true = dict(b=47.0, h=195.0, x=12.0, y=20.0)
    def sheet(v):
        return (f'units = "mm"\n[uncertainty]\nreading = 0.5\n[shape]\nkind = "rectangle"\nb = {v["b"]}\n'
                f'h = {v["h"]}\nwane = {{ top_left = [{v["x"]}, {v["y"]}] }}\n')
    truth = section_properties(parse_sheet(sheet(true)).section).values()

    def measure_once():
        measured = {k: v + rng.normal(0, 0.5) for k, v in true.items()}
        r = measure(parse_sheet(sheet(measured)), draws=400)
        return r.properties.values(), r.u

    _assert_covers(300, measure_once, truth)
