"""The synthetic renderer against references outside it.

References: shapely (areas, centroids, distances of the true outlines as the camera maps them),
the renderer as committed before the site look (0907d9e, loaded from git), OpenCV's lens model
and checkerboard finder, and colour facts of common practice in CIELAB (green has a* < 0, yellow
and beige b* > 0, greys a chroma near 0). Every scene here is of our own invention.
"""

from __future__ import annotations

import subprocess
import sys
import types
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import shapely

from tracer.section.geometry import Section
from tracer.inputs.photo.renders.grounds import GROUNDS
from tracer.inputs.photo.renders.members import corroded_section, log_section, waney_board
from tracer.inputs.photo.renders.scene import Scene
from tracer.inputs.photo.renders.scenery import MARKS, STEEL_FINISHES, WOOD_FINISHES
from tracer.inputs.photo.renders.sites import site_scenes
from tracer.inputs.photo.renders.synth import render
from tracer.section.shapes import angle, box, channel, i_section, rectangle, tube

cv2 = pytest.importorskip("cv2")

OLD = "0907d9e"          # the last commit before the site look
SITE = site_scenes()
SITE_BY_NAME = dict(SITE)


def _old_renderer() -> types.ModuleType:
    """tracer/photo/synth.py as committed in OLD, loaded as a module of its own."""
    root = Path(__file__).resolve().parents[3]
    try:
        src = subprocess.run(["git", "-C", str(root), "show", f"{OLD}:tracer/photo/synth.py"], capture_output=True,
                             text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        pytest.skip(f"commit {OLD} is not available here (not a git checkout of tracer)")
    src = src.replace("from ..geometry import", "from ...section.geometry import")   # its geometry import, in today's layout
    name = f"tracer.inputs.photo._synth_{OLD}"
    if name not in sys.modules:
        mod = types.ModuleType(name)
        mod.__package__ = "tracer.inputs.photo"               # its relative imports resolve in tracer.inputs.photo
        mod.__file__ = f"<{OLD}:tracer/photo/synth.py>"
        sys.modules[name] = mod
        exec(compile(src, mod.__file__, "exec"), mod.__dict__)
    return sys.modules[name]


def _mapped(section: Section, homography: np.ndarray):
    """The section as the camera's homography maps it, a shapely geometry in image pixels."""
    def move(ring):
        q = np.column_stack([ring, np.ones(len(ring))]) @ homography.T
        return q[:, :2] / q[:, 2:]
    return shapely.union_all([shapely.Polygon(move(p.exterior), [move(h) for h in p.holes]) for p in section.parts])


def _lab(pixels: np.ndarray) -> tuple[float, float, float]:
    """Median L*, a*, b* of BGR pixels (N, 3) by OpenCV's 8-bit CIELAB (L scaled by 255/100, a, b offset 128)."""
    lab = cv2.cvtColor(pixels.reshape(-1, 1, 3).astype(np.uint8), cv2.COLOR_BGR2Lab).reshape(-1, 3).astype(float)
    L, a, b = np.median(lab, axis=0)
    return L * 100 / 255, a - 128, b - 128


def _patch(image: np.ndarray, point: tuple[float, float], half: int) -> np.ndarray:
    x, y = int(round(point[0])), int(round(point[1]))
    return image[y - half:y + half + 1, x - half:x + half + 1].reshape(-1, 3)


# -- the plain look is the old renderer's, bit for bit ----------------------------------------------
PLAIN = {
    "waney joist, tilted": dict(section=rectangle(b=47, h=195, wane={"top_left": 16.0}, chord_angle=0.05)
                                .translated(90, -30), px_per_mm=2.0, tilt=7, tilt_axis=35, blur=1.3, seed=11),
    "channel, steel": dict(section=channel(h=152, b=76, tw=6.4, tf=9, r=8, chord_angle=0.05).translated(100, -30),
                           member="steel", px_per_mm=2.5, tilt=5, tilt_axis=120, seed=12),
    "tube and ruler": dict(section=tube(d=114.3, t=6.3, chord_angle=0.05).translated(95, -10), member="steel",
                           px_per_mm=2.0, tilt=4, ruler=True, seed=13),
    "angle, uneven light, lossless": dict(section=angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05)
                                          .translated(90, -30), member="steel", px_per_mm=2.0, light=0.3, turn=-8.5,
                                          target=(9, 6, 15.0), target_at=(-150, -67), jpeg=None, noise=3.1),
    "box, linear tone": dict(section=box(h=150, b=100, t=6.3, ro=12, ri=6, chord_angle=0.05).translated(90, -30),
                             px_per_mm=2.0, tone="linear", blur=0),
    "target alone through a lens": dict(section=None, target=(12, 9, 20.0), target_at=(-80, -50), px_per_mm=1.5,
                                        sensor=(800, 600), focal_px=900.0, distortion=(-0.1, 0.02, 0, 0), tilt=10,
                                        seed=5),
    "side faces on a sensor": dict(section=tube(d=100, t=5, chord_angle=0.05).translated(20, -20),
                                   target=(6, 4, 10.0), target_at=(-33, -80), px_per_mm=2.0, sensor=(800, 600),
                                   focal_px=900.0, member_length=400.0, seed=3),
    "inch rulers, no target": dict(section=rectangle(b=47, h=195, chord_angle=0.05).translated(40, -20), target=None,
                                   ruler=True, ruler_at=(0, -60, 5.0), second_ruler=(-20, -40, 95.0),
                                   ruler_pitch=25.4 / 16, ruler_marks=(16, 8, 4, 2), px_per_mm=2.0),
}


@pytest.mark.parametrize("case", list(PLAIN))
def test_defaults_render_as_the_old_renderer_bit_for_bit(case):
    # Reference: the renderer as committed in 0907d9e (before the site fields), loaded from git.
    old = _old_renderer()
    a = old.render(old.Scene(**PLAIN[case]))
    b = render(Scene(**PLAIN[case]))
    assert a.image.shape == b.image.shape and np.array_equal(a.image, b.image)
    assert np.array_equal(a.homography, b.homography)
    assert np.array_equal(a.camera_matrix, b.camera_matrix)


# -- every scene of the site set, against shapely and OpenCV -----------------------------------------
@pytest.mark.parametrize("name", list(SITE_BY_NAME))
def test_site_scene_draws_its_truth(name):
    scene = SITE_BY_NAME[name]
    r = render(scene)
    h, w = r.image.shape[:2]
    assert 0.8e6 <= w * h <= 3.2e6                          # the set's stated size: about 1 to 3 MP
    shape = _mapped(r.section, r.homography)
    # The drawn share of every pixel sums to the mapped outline's area (shapely), to rounding:
    # the site look fills each pixel by its exact share of area.
    cover = r.coverage.astype(np.float64)
    assert cover.sum() == pytest.approx(shape.area, rel=1e-8)
    # ... and its centroid is the mapped outline's (shapely), so the truth's frame is the drawn one.
    ys, xs = np.mgrid[0:h, 0:w]
    c = shape.centroid
    assert (cover * xs).sum() / cover.sum() == pytest.approx(c.x, abs=1e-3)
    assert (cover * ys).sum() / cover.sum() == pytest.approx(c.y, abs=1e-3)
    # Large enough for the 0.5 % area goal: at least 600 px across (its box, shapely), and walls
    # at least 25 px thick: opening the outline by a 25 px disc keeps nearly all of it (shapely).
    x0, y0, x1, y1 = shape.bounds
    assert max(x1 - x0, y1 - y0) >= 600
    assert shape.buffer(-12.4).buffer(12.4).area >= 0.97 * shape.area
    # The hints: a member point deep in the face (shapely distance >= 10 px), a ground point well
    # away from the member (>= 20 px) and off the target's paper (mapped, shapely).
    mx, my = r.member_point
    assert shape.contains(shapely.Point(mx, my)) and shape.boundary.distance(shapely.Point(mx, my)) >= 10
    gx, gy = r.ground_point
    assert shape.distance(shapely.Point(gx, gy)) >= 20
    cols, rows, sq = scene.target
    paper = np.array([[-1.6, -1.6], [cols + 0.6, -1.6], [cols + 0.6, rows + 0.6], [-1.6, rows + 0.6]]) * sq
    assert not shapely.Polygon(r.to_image(paper)).buffer(10).contains(shapely.Point(gx, gy))
    # The scale reference is usable: OpenCV finds the 9 x 6 corners where the homography puts them.
    found, corners = cv2.findChessboardCornersSB(cv2.cvtColor(r.image, cv2.COLOR_BGR2GRAY), (cols, rows))
    assert found
    grid = np.array([[i * sq, j * sq] for j in range(rows) for i in range(cols)])
    want = r.to_image(grid)
    gap = np.linalg.norm(corners.reshape(-1, 1, 2) - want[None], axis=2).min(axis=1)
    assert gap.max() < 1.0


def test_the_site_set_is_fixed_named_and_spread_over_the_conditions():
    # Reference: the conditions site_scenes promises (every ground, finish, mark and member kind,
    # shadows, glints, side faces, strong light, tilts to 10 deg), counted from the scenes.
    again = site_scenes()
    assert len(SITE) >= 40
    assert len({n for n, _ in SITE}) == len(SITE)
    assert [n for n, _ in again] == [n for n, _ in SITE]
    for (_, a), (_, b) in zip(SITE, again):
        assert np.array_equal(a.section.vertices()[0], b.section.vertices()[0])
        assert replace(a, section=None, under_bark=None) == replace(b, section=None, under_bark=None)
    scenes = [s for _, s in SITE]
    assert {s.ground for s in scenes} == set(GROUNDS)
    finishes = {s.finish or ("end grain" if s.member == "timber" else "grey") for s in scenes}   # Scene's defaults
    assert finishes == set(WOOD_FINISHES) | set(STEEL_FINISHES)
    assert {m for s in scenes for m in s.marks} == set(MARKS)
    assert any(s.under_bark is not None for s in scenes)
    assert sum(s.shadow > 0 for s in scenes) >= 10 and sum(s.glints > 0 for s in scenes) >= 5
    assert sum(s.member_length > 0 and s.camera_shift != (0.0, 0.0) for s in scenes) >= 4
    assert any(s.light >= 0.5 for s in scenes) and max(s.tilt for s in scenes) == pytest.approx(10.0)
    names = " ".join(n for n, _ in SITE)
    for kind in ("joist", "board", "log", "ipe", "heb", "channel", "angle", "tee", "tube", "box", "bar", "pitted"):
        assert kind in names, kind
    for hard in ("ipe-grey-concrete", "log-grass", "joist-wood-chips", "joist-decking", "tube-sand",
                 "channel-shadow-side"):
        assert hard in SITE_BY_NAME, hard


# -- truth and textures ----------------------------------------------------------------------------
def _log_scene(**kw) -> Scene:
    whole, wood = log_section(d=200.0, bark=8.0, seed=21)
    fields = dict(ground="grass", checks=3, seed=5) | kw
    return Scene(section=whole.translated(200.0, 40.0), under_bark=wood.translated(200.0, 40.0), px_per_mm=1.6,
                 **fields)


def test_textures_leave_the_truth_unchanged():
    # Invariance: grounds, finishes, checks, marks, glints, shadows, light and seeds are surface
    # only; the section, the wood under the bark and the filled outline stay exactly the same.
    base = render(_log_scene())
    for change in (dict(ground="decking"), dict(finish="sawn", checks=0), dict(marks=("chalk", "paint")),
                   dict(glints=7), dict(shadow=40.0, light_from=30.0), dict(pith=(130.0, 20.0)),
                   dict(light=0.5, noise=6.0, blur=2.0)):
        other = render(_log_scene(**change))
        assert np.array_equal(other.coverage, base.coverage), change
        assert np.array_equal(other.section.vertices()[0], base.section.vertices()[0])
        assert np.array_equal(other.under_bark.vertices()[0], base.under_bark.vertices()[0])
        assert not np.array_equal(other.image, base.image), change
    # The plain look sees the member through the very same camera.
    plain = render(Scene(section=_log_scene().section, px_per_mm=1.6, seed=5))
    assert np.array_equal(plain.homography, base.homography)


def test_the_same_seed_gives_the_same_photo_and_another_seed_another():
    scene = SITE_BY_NAME["log-wood-chips"]
    a, b = render(scene), render(scene)
    assert np.array_equal(a.image, b.image)
    c = render(replace(scene, seed=scene.seed + 1))
    assert not np.array_equal(a.image, c.image)
    assert np.array_equal(a.coverage, c.coverage)


def test_the_wood_under_the_bark_lies_inside_and_the_bark_has_its_thickness():
    r = render(_log_scene())
    whole, wood = r.section.to_shapely(), r.under_bark.to_shapely()
    assert whole.covers(wood)                                      # shapely
    # Distance from every point of the wood's outline to the outside (shapely): the median is the
    # stated 8 mm, and torn places still keep some bark.
    d = shapely.distance(whole.exterior, shapely.points(np.asarray(wood.exterior.coords)))
    assert np.median(d) == pytest.approx(8.0, rel=0.02)
    assert d.min() > 0.1 * 8.0
    # A waney board: bark only round its wane; its wood leaves the more waney side where stated
    # (h - wane = 20 mm, within the log's 0.8 % wobble of its 150 mm radius).
    board, board_wood = (s.to_shapely() for s in waney_board(b=150.0, h=45.0, log_d=300.0, wane=25.0, bark=6.0,
                                                                offset=20.0, seed=5))
    assert board.covers(board_wood)
    assert board.difference(board_wood).bounds[1] >= 45.0 - 25.0 - 2.0
    side = np.asarray(board_wood.exterior.coords)
    assert side[np.abs(side[:, 0]) < 1e-9, 1].max() == pytest.approx(20.0, abs=2.0)
    # In the photo the bark is darker than the sapwood round the outside of the wood (common
    # practice), each sampled away from its edges.
    band = whole.buffer(-1.5).difference(wood.buffer(1.5))
    deep = wood.buffer(-4.0).difference(wood.buffer(-20.0))
    rng = np.random.default_rng(0)
    pts = rng.uniform(whole.bounds[:2], whole.bounds[2:], (20000, 2))

    def pixels(region):
        inside = pts[shapely.contains_xy(region, pts[:, 0], pts[:, 1])]
        q = np.round(r.to_image(inside)).astype(int)
        return r.image[q[:, 1], q[:, 0]]

    assert _lab(pixels(band))[0] < _lab(pixels(deep))[0] - 15


def test_grounds_have_the_colours_of_their_materials():
    # Common practice of colour (CIELAB): green grass has a* < 0; sand and timber are yellowish
    # (b* > 0), wood chips orange-brown (a* > 0 too); concrete, gravel and card are near grey
    # (chroma small); a dark floor is dark, a light card light. Sampled round the ground point.
    sec = rectangle(b=47.0, h=120.0, chord_angle=0.05).translated(90.0, -30.0)
    want = {
        "grass": lambda L, a, b: a < -10,
        "sand": lambda L, a, b: b > 10 and L > 60,
        "wood chips": lambda L, a, b: a > 4 and b > 12 and L < 60,
        "decking": lambda L, a, b: b > 8,
        "concrete": lambda L, a, b: np.hypot(a, b) < 6 and 45 < L < 80,
        "gravel": lambda L, a, b: np.hypot(a, b) < 10,
        "dark floor": lambda L, a, b: L < 30,
        "light card": lambda L, a, b: L > 80 and np.hypot(a, b) < 8,
    }
    assert set(want) == set(GROUNDS)
    for ground, ok in want.items():
        for seed in (1, 2):
            r = render(Scene(section=sec, ground=ground, px_per_mm=2.0, light=0.0, seed=seed))
            lab = _lab(_patch(r.image, r.ground_point, 20))
            assert ok(*lab), (ground, seed, lab)


def test_steel_finishes_have_their_colours():
    # Common practice: rust is orange-brown (a* > 0, b* > 0), mill scale dark and blue-grey
    # (L* < 45, b* < 0), bright steel light and grey, grey steel grey. Median over the face.
    sec = box(h=100.0, b=100.0, t=40.0).translated(90.0, -30.0)
    want = {
        "rust": lambda L, a, b: a > 8 and b > 15,
        "mill scale": lambda L, a, b: L < 45 and b < 0,
        "bright": lambda L, a, b: L > 62 and np.hypot(a, b) < 8,
        "grey": lambda L, a, b: 40 < L < 62 and np.hypot(a, b) < 6,
    }
    for finish, ok in want.items():
        r = render(Scene(section=sec, member="steel", ground="light card", finish=finish, px_per_mm=2.0, light=0.0,
                         seed=3))
        face = cv2.erode((r.coverage >= 0.999).astype(np.uint8), np.ones((7, 7), np.uint8)).astype(bool)
        lab = _lab(r.image[face])
        assert ok(*lab), (finish, lab)


def test_a_shadow_darkens_the_ground_beside_the_member_and_never_the_face():
    sec = rectangle(b=60.0, h=150.0).translated(90.0, -30.0)
    kw = dict(section=sec, member="steel", ground="concrete", finish="grey", px_per_mm=2.0, jpeg=None, seed=4,
              light_from=180.0)
    lit, shaded = render(Scene(**kw)), render(Scene(shadow=40.0, **kw))
    # Light from -x: the shadow falls to +x, over the ground 5 to 25 mm right of the member.
    strip = np.array([[155.0 + dx, y] for dx in np.linspace(0.0, 20.0, 11) for y in np.linspace(-20.0, 110.0, 27)])
    q = np.round(lit.to_image(strip)).astype(int)
    before, after = _lab(lit.image[q[:, 1], q[:, 0]])[0], _lab(shaded.image[q[:, 1], q[:, 0]])[0]
    assert after < 0.8 * before
    # ... and not the ground on the lit side, 5 to 25 mm left of it.
    q = np.round(lit.to_image(strip - (90.0, 0.0))).astype(int)
    assert _lab(shaded.image[q[:, 1], q[:, 0]])[0] == pytest.approx(_lab(lit.image[q[:, 1], q[:, 0]])[0], abs=1.0)
    # The face, away from its edges by more than the blur reaches, is untouched (invariance).
    face = cv2.erode((lit.coverage >= 0.999).astype(np.uint8), np.ones((9, 9), np.uint8)).astype(bool)
    assert face.sum() > 1000 and np.array_equal(lit.image[face], shaded.image[face])


def test_glints_on_steel_clip_the_sensor():
    # Common practice: a specular highlight is brighter than any diffuse white and clips.
    sec = box(h=100.0, b=100.0, t=40.0).translated(90.0, -30.0)
    kw = dict(section=sec, member="steel", ground="concrete", finish="grey", px_per_mm=3.0, seed=6)
    face = lambda r: cv2.erode((r.coverage >= 0.999).astype(np.uint8), np.ones((5, 5), np.uint8)).astype(bool)
    plain, glinting = render(Scene(**kw)), render(Scene(glints=9, **kw))
    assert (plain.image[face(plain)].min(axis=1) >= 250).sum() == 0
    assert (glinting.image[face(glinting)].min(axis=1) >= 250).sum() >= 6


def test_side_faces_are_drawn_beside_the_face_and_are_not_section():
    scene = SITE_BY_NAME["ipe-mill-scale-gravel-side"]
    seen, alone = render(scene), render(replace(scene, member_length=0.0))
    assert np.array_equal(seen.coverage, alone.coverage)
    assert np.array_equal(seen.section.vertices()[0], alone.section.vertices()[0])
    # The camera stands to the member's right (+x): the side faces show right of the web and
    # flange tips, on pixels outside the section (shapely), and change them.
    shape = _mapped(seen.section, seen.homography)
    x0, y0, x1, y1 = seen.scene.section.bounds
    beside = np.array([[x0 + 55.0 + 5.0 * i, 0.5 * (y0 + y1) + 30.0 * j] for i in range(3) for j in range(-2, 3)])
    beside = beside - seen.scene.target_at                      # just right of the web [mm, the truth's frame]
    q = seen.to_image(beside)
    outside = [not shape.buffer(3).contains(shapely.Point(*p)) for p in q]
    assert sum(outside) == len(q)
    qi = np.round(q[outside]).astype(int)
    diff = np.abs(seen.image[qi[:, 1], qi[:, 0]].astype(int) - alone.image[qi[:, 1], qi[:, 0]].astype(int)).sum(axis=1)
    assert np.median(diff) > 60 and np.mean(diff > 20) >= 0.8    # (the sum over B, G, R of 0..255 levels)


def test_points_go_through_the_lens_as_opencv_models_it():
    # Reference: OpenCV's lens model; undistorting what to_image returns gives the ideal
    # (homography) pixels back.
    r = render(Scene(section=None, target=(12, 9, 20.0), target_at=(-80, -50), px_per_mm=1.5, sensor=(800, 600),
                     focal_px=900.0, distortion=(-0.12, 0.03, 0.001, -0.001), tilt=6))
    pts = np.array([[0.0, 0.0], [100.0, 20.0], [200.0, 150.0], [-40.0, 170.0]])
    seen = r.to_image(pts)
    ideal = np.column_stack([pts, np.ones(4)]) @ r.homography.T
    ideal = ideal[:, :2] / ideal[:, 2:]
    crit = (cv2.TERM_CRITERIA_COUNT | cv2.TERM_CRITERIA_EPS, 100, 1e-12)
    K, dist = r.camera_matrix, np.array(r.scene.distortion)
    if hasattr(cv2, "undistortPointsIter"):                      # OpenCV 4
        back = cv2.undistortPointsIter(seen.reshape(-1, 1, 2), K, dist, None, K, crit)
    else:                                                        # OpenCV 5 takes the criteria directly
        back = cv2.undistortPoints(seen.reshape(-1, 1, 2), K, dist, R=None, P=K, criteria=crit)
    back = back.reshape(-1, 2)
    assert np.abs(back - ideal).max() < 1e-4
    assert np.abs(seen - ideal).max() > 1.0                     # the lens did move them


def test_corrosion_eats_into_the_section_within_its_stated_depths():
    ipe = i_section(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0, chord_angle=0.05)
    eaten = corroded_section(ipe, loss=0.4, pits=14, depth=1.5, size=5.0, where=(0.0, 180.0, 100.0, 200.0), seed=8)
    a, b = ipe.to_shapely(), eaten.to_shapely()
    assert a.buffer(1e-9).covers(b)                               # shapely: only material is lost
    assert b.area < a.area
    # No point of the old outline is deeper in than loss + 1.3 x depth (shapely Hausdorff).
    assert shapely.hausdorff_distance(a.exterior, b.exterior) <= 0.4 + 1.3 * 1.5 + 1e-6
    # Outside the top flange only the general loss of at most 0.4 mm along the boundary is gone.
    lost = a.difference(b)
    below = lost.intersection(shapely.box(-1.0, -1.0, 101.0, 179.0))
    assert below.area <= 0.4 * a.exterior.length


@pytest.mark.parametrize("kwargs,message", [
    (dict(ground="lava"), r"ground = 'lava' is not a ground; use one of concrete"),
    (dict(finish="rust"), r"finish = 'rust' does not suit a timber member"),
    (dict(marks=("ink",)), r"mark 'ink' is not a mark"),
    (dict(checks=-1), r"checks = -1; give a count of 0 or more"),
    (dict(shadow=-5.0), r"shadow = -5.0; give a reach of 0 mm or more"),
    (dict(member="steel", pith=(1.0, 2.0)), r"pith is for timber; this member is steel"),
    (dict(under_bark=rectangle(b=20.0, h=20.0).translated(300.0, 0.0)), r"under_bark must lie inside the section"),
])
def test_site_fields_out_of_range_are_refused(kwargs, message):
    with pytest.raises(ValueError, match=message):
        render(Scene(section=rectangle(b=47.0, h=100.0).translated(90.0, -30.0), px_per_mm=1.0, **kwargs))


@pytest.mark.parametrize("build,message", [
    (lambda: log_section(d=100.0, bark=30.0), r"bark = 30.0 mm; give 0 or more, below d/4 = 25 mm"),
    (lambda: log_section(d=0.0), r"d = 0.0; give a diameter above 0 mm"),
    (lambda: waney_board(b=300.0, h=50.0, log_d=200.0, wane=10.0), r"cannot reach both sides of the board"),
    (lambda: waney_board(b=175.0, h=63.0, log_d=340.0, wane=40.0), r"leaves no sawn top face"),
    (lambda: waney_board(b=100.0, h=40.0, log_d=300.0, wane=45.0), r"wane = 45.0 mm; give more than 0"),
    (lambda: corroded_section(rectangle(b=10.0, h=10.0), where=(100.0, 100.0, 110.0, 110.0)),
     r"no boundary inside where"),
])
def test_member_builders_refuse_impossible_members(build, message):
    with pytest.raises(ValueError, match=message):
        build()
