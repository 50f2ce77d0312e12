"""Exact integrals against textbook closed forms, shapely and numpy, and their invariances."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from tracer.section.geometry import Section
from tracer.section.properties import area_moments, ring_moments, section_properties
from tracer.section.shapes import arc_points

from tests.common import rectangle_ring, rel, star_ring, tensor


# -- textbook closed forms (e.g. Gere & Goodno, Mechanics of Materials, 9th ed., Appendix E) -------
def test_rectangle_closed_forms():
    b, h = 47.0, 195.0
    p = section_properties(Section(rectangle_ring(10, -20, 10 + b, -20 + h)))
    assert p.A == pytest.approx(b * h, rel=1e-14)
    assert (p.cx, p.cy) == pytest.approx((10 + b / 2, -20 + h / 2), rel=1e-14)
    assert p.Ix == pytest.approx(b * h**3 / 12, rel=1e-13)
    assert p.Iy == pytest.approx(h * b**3 / 12, rel=1e-13)
    assert p.Ixy == 0.0
    assert p.Sx_top == pytest.approx(b * h**2 / 6, rel=1e-13) and p.Sx_bot == pytest.approx(b * h**2 / 6, rel=1e-13)
    assert p.Sy_left == pytest.approx(h * b**2 / 6, rel=1e-13)
    assert p.Zx == pytest.approx(b * h**2 / 4, rel=1e-13) and p.Zy == pytest.approx(h * b**2 / 4, rel=1e-13)
    assert p.rx == pytest.approx(h / math.sqrt(12), rel=1e-13)
    assert p.perimeter == pytest.approx(2 * (b + h), rel=1e-14)
    assert p.I1 == pytest.approx(p.Ix) and p.I2 == pytest.approx(p.Iy) and p.theta == 0.0
    assert p.S1 == pytest.approx(p.Sx_top) and p.S2 == pytest.approx(p.Sy_left)


def test_plank_is_stiffer_on_edge_than_flat():
    # b h^3 / 12 on edge against h b^3 / 12 flat: the ratio is (h / b)^2 (closed form).
    on_edge = section_properties(Section(rectangle_ring(0, 0, 38, 235)))
    assert on_edge.Ix / on_edge.Iy == pytest.approx((235 / 38) ** 2, rel=1e-13)


def test_triangle_closed_forms():
    b, h = 120.0, 90.0
    p = section_properties(Section([(0, 0), (b, 0), (0.3 * b, h)]))
    assert p.A == pytest.approx(b * h / 2, rel=1e-14)
    assert p.cy == pytest.approx(h / 3, rel=1e-14)
    assert p.cx == pytest.approx((0 + b + 0.3 * b) / 3, rel=1e-14)
    assert p.Ix == pytest.approx(b * h**3 / 36, rel=1e-13)
    # Sx to the apex and to the base: Ix / (2h/3) and Ix / (h/3).
    assert p.Sx_top == pytest.approx(b * h**2 / 24, rel=1e-13) and p.Sx_bot == pytest.approx(b * h**2 / 12, rel=1e-13)
    # Plastic axis of a triangle: the area below it is half, so it lies at h (1 - 1/sqrt 2).
    assert p.yp == pytest.approx(h * (1 - 1 / math.sqrt(2)), rel=1e-12)


def test_semicircle_centroid_and_second_moment():
    r = 50.0
    pts = arc_points(0.0, 0.0, r, 0.0, math.pi)          # the diameter closes the ring
    p = section_properties(Section(pts))
    assert p.A == pytest.approx(math.pi * r**2 / 2, rel=1e-5)
    assert p.cy == pytest.approx(4 * r / (3 * math.pi), rel=1e-5)
    assert p.Ix == pytest.approx((math.pi / 8 - 8 / (9 * math.pi)) * r**4, rel=1e-5)
    assert p.Iy == pytest.approx(math.pi * r**4 / 8, rel=1e-5)
    assert p.cx == pytest.approx(0.0, abs=1e-9)


def test_hollow_rectangle_closed_form():
    B, H, b, h = 100.0, 200.0, 80.0, 170.0
    s = Section(rectangle_ring(0, 0, B, H), [rectangle_ring((B - b) / 2, (H - h) / 2, (B + b) / 2, (H + h) / 2)])
    p = section_properties(s)
    assert p.A == pytest.approx(B * H - b * h, rel=1e-14)
    assert p.Ix == pytest.approx((B * H**3 - b * h**3) / 12, rel=1e-13)
    assert p.Zx == pytest.approx((B * H**2 - b * h**2) / 4, rel=1e-13)
    assert p.perimeter == pytest.approx(2 * (B + H + b + h), rel=1e-14)


def test_far_from_the_origin_keeps_full_precision():
    # Coordinates of a site grid: 1e6 mm from the origin (common practice in traced surveys).
    p = section_properties(Section(rectangle_ring(1e6, 2e6, 1e6 + 47, 2e6 + 195)))
    assert p.Ix == pytest.approx(47 * 195**3 / 12, rel=1e-9)
    assert p.Zx == pytest.approx(47 * 195**2 / 4, rel=1e-9)


# -- shapely and numpy as references ---------------------------------------------------------------
@pytest.mark.parametrize("seed", range(25))
def test_area_and_centroid_match_shapely_on_random_polygons(seed):
    rng = np.random.default_rng(seed)
    ring = star_ring(rng, n=int(rng.integers(3, 60)), centre=tuple(rng.uniform(-500, 500, 2)))
    poly = shapely.Polygon(ring)
    m = area_moments(Section(ring))
    assert m.A == pytest.approx(poly.area, rel=1e-12)
    size = math.sqrt(poly.area)
    assert abs(m.cx - poly.centroid.x) < 1e-10 * size + 1e-12 * abs(poly.centroid.x)
    assert abs(m.cy - poly.centroid.y) < 1e-10 * size + 1e-12 * abs(poly.centroid.y)


@pytest.mark.parametrize("seed", range(25))
def test_second_moments_match_a_triangulation(seed):
    # Reference: shapely's constrained Delaunay triangulation of the polygon, and for each triangle
    # its exact tensor about the origin, (A/12)(Σ p p^T + 9 g g^T) over its vertices p with centroid g
    # (closed form of a triangle's second moments).
    rng = np.random.default_rng(100 + seed)
    ring = star_ring(rng, n=int(rng.integers(3, 40)), centre=tuple(rng.uniform(-100, 100, 2)))
    tris = shapely.constrained_delaunay_triangles(shapely.Polygon(ring)).geoms
    ref = np.zeros((2, 2))
    total, first = 0.0, np.zeros(2)
    for tri in tris:
        v = np.asarray(tri.exterior.coords)[:3]
        a = shapely.area(tri)
        g = v.mean(axis=0)
        ref += a / 12 * (v.T @ v + 9 * np.outer(g, g))
        total += a
        first += a * g
    c = first / total
    ref -= total * np.outer(c, c)
    p = section_properties(Section(ring))
    assert total == pytest.approx(p.A, rel=1e-12)
    assert tensor(p) == pytest.approx(ref, rel=1e-9, abs=1e-9 * np.abs(ref).max())


@pytest.mark.parametrize("seed", range(20))
def test_principal_moments_are_the_eigenvalues(seed):
    rng = np.random.default_rng(200 + seed)
    p = section_properties(Section(star_ring(rng, n=15)))
    w, v = np.linalg.eigh(tensor(p))
    assert (p.I2, p.I1) == pytest.approx(tuple(w), rel=1e-10)
    # theta points along the major axis: bending about it gives I1 = ∫ v^2 dA, v = n . p with n across it.
    t = math.radians(p.theta)
    across = np.array([-math.sin(t), math.cos(t)])
    assert across @ tensor(p) @ across == pytest.approx(p.I1, rel=1e-10)
    assert -90.0 < p.theta <= 90.0


@pytest.mark.parametrize("seed", range(20))
def test_plastic_moduli_match_shapely_clipping(seed):
    rng = np.random.default_rng(300 + seed)
    outer = star_ring(rng, n=20, r_min=0.2)
    s = Section(outer)
    p = section_properties(s)
    poly = shapely.Polygon(outer)
    x0, y0, x1, y1 = poly.bounds
    for axis, level in (("x", p.yp), ("y", p.xp)):
        if axis == "x":
            lo, hi = shapely.box(x0 - 1, y0 - 1, x1 + 1, level), shapely.box(x0 - 1, level, x1 + 1, y1 + 1)
            arm = lambda g: abs(g.centroid.y - level)  # noqa: E731
        else:
            lo, hi = shapely.box(x0 - 1, y0 - 1, level, y1 + 1), shapely.box(level, y0 - 1, x1 + 1, y1 + 1)
            arm = lambda g: abs(g.centroid.x - level)  # noqa: E731
        below, above = poly.intersection(lo), poly.intersection(hi)
        assert below.area == pytest.approx(poly.area / 2, rel=1e-9)
        z_ref = below.area * arm(below) + above.area * arm(above)
        assert (p.Zx if axis == "x" else p.Zy) == pytest.approx(z_ref, rel=1e-9)


def test_plastic_modulus_of_a_section_with_holes_and_parts():
    # Two 47 x 80 parts 60 apart: the equal-area axis is in the gap; Zx = 2 A_part * 70 (closed form).
    s = Section.from_parts([rectangle_ring(0, 0, 47, 80), rectangle_ring(0, 140, 47, 220)])
    p = section_properties(s)
    assert 80 <= p.yp <= 140
    assert p.Zx == pytest.approx(2 * 47 * 80 * 70, rel=1e-13)


# -- invariances (hypothesis) --------------------------------------------------------------------
seeds = st.integers(min_value=0, max_value=2**32 - 1)


def _random_section(seed: int) -> Section:
    rng = np.random.default_rng(seed)
    return Section(star_ring(rng, n=int(rng.integers(3, 30)), centre=tuple(rng.uniform(-300, 300, 2))))


@settings(max_examples=60, deadline=None)
@given(seeds, st.floats(-1e4, 1e4), st.floats(-1e4, 1e4))
def test_translation_moves_only_the_centroid(seed, dx, dy):
    s = _random_section(seed)
    a, b = section_properties(s), section_properties(s.translated(dx, dy))
    scale = a.Ip
    assert b.A == pytest.approx(a.A, rel=1e-9)
    assert (b.cx - a.cx, b.cy - a.cy) == pytest.approx((dx, dy), abs=1e-7 * (1 + abs(dx) + abs(dy)))
    for k in ("Ix", "Iy", "Ixy"):
        assert abs(getattr(b, k) - getattr(a, k)) <= 1e-8 * scale
    for k in ("Zx", "Zy", "Sx_top", "S1"):
        assert getattr(b, k) == pytest.approx(getattr(a, k), rel=1e-7)


@settings(max_examples=60, deadline=None)
@given(seeds, st.floats(-360, 360))
def test_rotation_law_of_the_second_moment_tensor(seed, angle):
    s = _random_section(seed)
    a, b = section_properties(s), section_properties(s.rotated(angle, origin=(17.0, -3.0)))
    r = math.radians(angle)
    R = np.array([[math.cos(r), -math.sin(r)], [math.sin(r), math.cos(r)]])
    expected = R @ tensor(a) @ R.T
    assert tensor(b) == pytest.approx(expected, abs=1e-9 * a.Ip)
    assert (b.I1, b.I2) == pytest.approx((a.I1, a.I2), rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(seeds)
def test_mirror_changes_the_sign_of_ixy(seed):
    s = _random_section(seed)
    a, b = section_properties(s), section_properties(s.mirrored("y"))
    assert b.Ixy == pytest.approx(-a.Ixy, abs=1e-10 * a.Ip)
    assert (b.Ix, b.Iy, b.A) == pytest.approx((a.Ix, a.Iy, a.A), rel=1e-10)
    assert b.cx == pytest.approx(-a.cx, abs=1e-9 * math.sqrt(a.A))
    assert (b.Sy_left, b.Sy_right) == pytest.approx((a.Sy_right, a.Sy_left), rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(seeds, st.floats(0.01, 100.0))
def test_scaling_multiplies_second_moments_by_s4(seed, s_factor):
    s = _random_section(seed)
    a, b = section_properties(s), section_properties(s.scaled(s_factor))
    assert b.A == pytest.approx(a.A * s_factor**2, rel=1e-10)
    assert (b.Ix, b.Iy, b.I1) == pytest.approx((a.Ix * s_factor**4, a.Iy * s_factor**4, a.I1 * s_factor**4), rel=1e-9)
    assert (b.Zx, b.Sx_top) == pytest.approx((a.Zx * s_factor**3, a.Sx_top * s_factor**3), rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(seeds)
def test_parallel_axis_theorem(seed):
    s = _random_section(seed)
    m = area_moments(s)
    x, y, starts = s.packed()
    sums, xr, yr = ring_moments(x - 0.0, y - 0.0, starts)
    # sums are about the first vertex (xr, yr); move them to the origin and compare with the
    # centroidal values plus A d^2 (parallel-axis theorem).
    A, sy, sx, syy, sxx, sxy = sums
    ixx_origin = syy + 2 * yr * sy + A * yr**2
    iyy_origin = sxx + 2 * xr * sx + A * xr**2
    ixy_origin = sxy + xr * sy + yr * sx + A * xr * yr
    assert ixx_origin == pytest.approx(m.Ix + m.A * m.cy**2, rel=1e-9)
    assert iyy_origin == pytest.approx(m.Iy + m.A * m.cx**2, rel=1e-9)
    assert ixy_origin == pytest.approx(m.Ixy + m.A * m.cx * m.cy, rel=1e-9, abs=1e-9 * (ixx_origin + iyy_origin))


@settings(max_examples=60, deadline=None)
@given(seeds, st.floats(0.1, 0.6))
def test_a_hole_subtracts_exactly(seed, k):
    rng = np.random.default_rng(seed)
    outer = star_ring(rng, n=int(rng.integers(8, 30)), r_min=0.8)
    r_in = k * 0.8 * np.hypot(*outer.T).min()
    hole = np.array(rectangle_ring(-r_in / 2, -r_in / 3, r_in / 2, r_in / 3)) + rng.uniform(-0.1, 0.1, 2) * r_in
    whole, solid, plug = (area_moments(Section(outer, [hole])), area_moments(Section(outer)),
                          area_moments(Section(hole)))
    assert whole.A == pytest.approx(solid.A - plug.A, rel=1e-12)
    # About the origin, moments are additive: I_with_hole = I_solid - I_hole.
    def about_origin(m):
        return np.array([m.A * m.cx, m.A * m.cy, m.Ix + m.A * m.cy**2, m.Iy + m.A * m.cx**2, m.Ixy + m.A * m.cx * m.cy])
    diff = about_origin(solid) - about_origin(plug)
    assert about_origin(whole) == pytest.approx(diff, rel=1e-9, abs=1e-9 * np.abs(diff).max())


def test_blocks_of_the_kernel_add_up(monkeypatch):
    # The kernel sums over blocks of vertices; the result must not depend on the block size.
    import tracer.section.properties as props

    rng = np.random.default_rng(7)
    s = Section(star_ring(rng, n=5000), [])
    full = area_moments(s)
    monkeypatch.setattr(props, "_BLOCK", 97)
    blocked = area_moments(s)
    assert [getattr(blocked, k) for k in ("A", "cx", "cy", "Ix", "Iy", "Ixy")] == pytest.approx(
        [getattr(full, k) for k in ("A", "cx", "cy", "Ix", "Iy", "Ixy")], rel=1e-11, abs=1e-11 * full.Ix)


def test_rings_laid_end_to_end_do_not_join(monkeypatch):
    # Many holes across block boundaries: the edges between rings must not count.
    import tracer.section.properties as props

    holes = [rectangle_ring(2 + 4 * i, 2, 4 + 4 * i, 6) for i in range(40)]
    s = Section(rectangle_ring(0, 0, 164, 8), holes)
    monkeypatch.setattr(props, "_BLOCK", 7)
    p = section_properties(s)
    assert p.A == pytest.approx(164 * 8 - 40 * 8, rel=1e-14)
    assert p.Ix == pytest.approx(164 * 8**3 / 12 - 40 * 2 * 4**3 / 12, rel=1e-13)
    assert rel(p.perimeter, 2 * (164 + 8) + 40 * 12) < 1e-14
