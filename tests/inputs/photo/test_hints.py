"""Hints (points on the member and on the ground, a box), the photo's sidecar, and their errors."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from tracer.errors import InputError, MeasurementError
from tracer.inputs.photo.hints import Hints, make_hints, parse_box, parse_points
from tracer.inputs.photo.pipeline import measure_photo
from tracer.inputs.photo.sidecar import read_sidecar
from tracer.inputs.photo.renders.scene import Scene
from tracer.inputs.photo.renders.synth import render
from tracer.section.properties import section_properties
from tracer.section.shapes import rectangle

cv2 = pytest.importorskip("cv2")

BIG_TARGET = dict(target=(9, 6, 15.0), target_at=(-150.0, -60.0))


def _joist(tmp_path, name="joist.png", **scene):
    sec = rectangle(b=47, h=195, chord_angle=0.05)
    x0, y0, _, _ = sec.bounds
    r = render(Scene(section=sec.translated(90 - x0, -30 - y0), **{"px_per_mm": 3.0, **BIG_TARGET, **scene}))
    p = tmp_path / name
    cv2.imwrite(str(p), r.image)
    return p, r


def _px(r, xy_mm):
    """A point of the scene's mm plane in the image [px], by the renderer's own homography (which
    maps the target's frame: the scene's less `target_at`)."""
    tx, ty = r.scene.target_at
    q = r.homography @ np.array([xy_mm[0] - tx, xy_mm[1] - ty, 1.0])
    return q[:2] / q[2]


def _run(*args):
    return subprocess.run([sys.executable, "-m", "tracer", *map(str, args)], capture_output=True, text=True)


def test_points_and_boxes_are_read_from_text_and_lists():
    assert parse_points(["1,2", [3, 4.5]], "--seed") == ((1.0, 2.0), (3.0, 4.5))
    assert parse_points([10, 20], "--seed") == ((10.0, 20.0),)
    assert parse_box([400, 300, 100, 50]) == (100.0, 50.0, 400.0, 300.0)
    assert Hints().given is False and make_hints(seed="5,6").record() == {"seed": [[5.0, 6.0]]}


@pytest.mark.parametrize("hints,message", [
    (dict(seed="12,x"), r"--seed '12,x': write X,Y in pixels"),
    (dict(box="10,10,10,50"), r"--box 10,10,10,50 has no size"),
    (dict(box="1,2,3"), r"--box '1,2,3': write X0,Y0,X1,Y1"),
])
def test_malformed_hints_are_refused_by_name(hints, message):
    with pytest.raises(InputError, match=message):
        make_hints(**hints)


@pytest.mark.parametrize("hints,message", [
    (dict(seed=("99999,5",)), r"--seed 99999,5 lies outside the \d+ x \d+ image"),
    (dict(outside=("-3,5",)), r"--outside -3,5 lies outside the"),
    (dict(seed=("100,100",), outside=("101,100",)), r"mark the same place as both member and ground"),
    (dict(seed=("5,5",), box="100,100,400,400"), r"--seed 5,5 lies outside --box 100,100,400,400"),
    (dict(box="-500,-500,-100,-100"), r"--box .* lies outside the"),
])
def test_impossible_hints_are_bad_usage(tmp_path, hints, message):
    photo, _ = _joist(tmp_path)
    with pytest.raises(InputError, match=message):
        measure_photo(photo, target="9x6:15mm", **hints)


def test_hint_errors_exit_2_with_one_line_and_no_traceback(tmp_path):
    photo, _ = _joist(tmp_path)
    run = _run("measure", photo, "--target", "9x6:15mm", "--box", "10,10,10,50")
    assert run.returncode == 2 and "Traceback" not in run.stderr
    assert run.stderr.strip().count("\n") <= 1 and "--box 10,10,10,50 has no size" in run.stderr


def test_a_seed_on_the_ground_is_refused_and_says_so(tmp_path):
    photo, r = _joist(tmp_path)
    ground = _px(r, (60.0, 150.0))                       # left of the joist, above the target
    with pytest.raises(MeasurementError, match=r"--seed .* is on the background"):
        measure_photo(photo, target="9x6:15mm", seed=f"{ground[0]:.0f},{ground[1]:.0f}")


def test_a_seed_and_a_box_find_the_member_as_unattended(tmp_path):
    # Truth: the rendered section (A = 47 x 195 mm^2 exactly for a sharp rectangle).
    photo, r = _joist(tmp_path, px_per_mm=5.0)
    want = section_properties(r.section).A
    on = _px(r, (90 + 23.5, -30 + 97.5))
    corners = np.array([_px(r, (80, -40)), _px(r, (147, 175))])
    box = ",".join(f"{v:.0f}" for v in (*corners.min(axis=0), *corners.max(axis=0)))
    for kw in (dict(), dict(seed=f"{on[0]:.0f},{on[1]:.0f}"), dict(box=box)):
        pm = measure_photo(photo, target="9x6:15mm", **kw)
        assert section_properties(pm.measurement.section).A == pytest.approx(want, rel=0.005), kw
        assert pm.measurement.source["trace"]["hints"] == make_hints(**kw).record()


def test_the_sidecar_sets_options_and_hints_and_the_command_line_overrides_it(tmp_path):
    photo, r = _joist(tmp_path, px_per_mm=5.0)
    on = _px(r, (113.5, 67.5))
    (tmp_path / "joist.toml").write_text(f'name = "J-3"\ntarget = "9x6:15mm"\nseed = [[{on[0]:.1f}, {on[1]:.1f}]]\n'
                                         'notes = "a person\'s note"\n\n[truth]\nA = 9165.0\n', encoding="utf-8")
    options, name = read_sidecar(photo)
    assert name == "J-3" and options["seed"] == [[round(on[0], 1), round(on[1], 1)]]
    run = _run("measure", photo, "--json", "-", "--draws", "200")
    assert run.returncode == 0, run.stderr
    doc = json.loads(run.stdout)
    assert doc["name"] == "J-3" and doc["source"]["scale"]["method"] == "target"
    assert doc["source"]["trace"]["hints"]["seed"] == [[round(on[0], 1), round(on[1], 1)]]
    # A scale reference on the command line replaces the sidecar's (the target): a two-point scale.
    a, b = _px(r, (-150, -60)), _px(r, (-50, -60))        # 100 mm apart along the target's first row
    spec = f"{a[0]:.1f},{a[1]:.1f},{b[0]:.1f},{b[1]:.1f}=100mm"
    run = _run("measure", photo, "--scale", spec, "--json", "-", "--draws", "200")
    assert run.returncode == 0, run.stderr
    assert json.loads(run.stdout)["source"]["scale"]["method"] == "two points"


def test_a_sidecar_with_an_unknown_key_names_it(tmp_path):
    photo, _ = _joist(tmp_path)
    (tmp_path / "joist.toml").write_text('target = "9x6:15mm"\nseeds = [[1, 2]]\n', encoding="utf-8")
    run = _run("measure", photo)
    assert run.returncode == 2 and "unknown setting 'seeds'" in run.stderr and "Traceback" not in run.stderr
    (tmp_path / "joist.toml").write_text('target = "9x6:15mm"\n[trace]\npoints = [[1, 2], [3, 4]]\n',
                                         encoding="utf-8")
    run = _run("measure", photo)
    assert run.returncode == 2 and "[trace] points has 2 point(s); a ring needs at least 3" in run.stderr


def test_a_boundary_placed_by_hand_replaces_the_trace_with_its_allowance(tmp_path):
    photo, r = _joist(tmp_path, px_per_mm=5.0)
    # The true outline, mapped to pixels by the renderer's homography, as a person would click it.
    outline = [_px(r, p) for p in ((90, -30), (137, -30), (137, 165), (90, 165))]
    pts = ", ".join(f"[{x:.2f}, {y:.2f}]" for x, y in outline)
    (tmp_path / "joist.toml").write_text(f'target = "9x6:15mm"\n[trace]\npoints = [{pts}]\n', encoding="utf-8")
    run = _run("measure", photo, "--json", "-", "--draws", "200")
    assert run.returncode == 0, run.stderr
    doc = json.loads(run.stdout)
    assert doc["source"]["trace"]["hints"]["boundary"] == "hand-edited"
    # Truth: 47 x 195 mm (textbook rectangle), through the target's fit.
    assert doc["properties"]["A"]["value"] == pytest.approx(47 * 195, rel=0.003)
    inputs = [row["input"] for row in doc["uncertainty"]["budget"]["A"]]
    assert "hand-placed boundary, offset" in inputs


def test_a_rough_outline_with_snap_finds_the_members_edge_near_it(tmp_path):
    # A person's rough outline drawn round the face, its corners 4 and 6 px out by turns: with
    # snap the edge is found in the photo near it. Truth: 47 x 195 mm (textbook rectangle).
    photo, r = _joist(tmp_path, px_per_mm=5.0)
    corners = [_px(r, p) for p in ((90, -30), (137, -30), (137, 165), (90, 165))]
    centre = np.mean(corners, axis=0)
    rough = [list(c + (5.0 + (-1) ** i) * (c - centre) / np.linalg.norm(c - centre)) for i, c in enumerate(corners)]
    drawn = measure_photo(photo, target="9x6:15mm", trace={"points": rough}, accept_trace=True)
    snapped = measure_photo(photo, target="9x6:15mm", trace={"points": rough, "snap": True})
    a_drawn = section_properties(drawn.measurement.section).A
    a_snapped = section_properties(snapped.measurement.section).A
    assert a_drawn / (47 * 195) - 1 > 0.015               # as drawn: about 2 % too large
    assert abs(a_snapped / (47 * 195) - 1) < 0.005
    assert snapped.measurement.source["trace"]["hints"]["boundary"] == "drawn by hand, snapped to the edge"
    assert not snapped.check.needs_review


def test_a_hand_boundary_placed_coarsely_carries_a_larger_allowance(tmp_path):
    from tracer.result import measure

    photo, r = _joist(tmp_path, px_per_mm=5.0)
    outline = [list(_px(r, p)) for p in ((90, -30), (137, -30), (137, 165), (90, 165))]
    fine = measure(measure_photo(photo, target="9x6:15mm", trace={"points": outline}).measurement, draws=400)
    coarse = measure(measure_photo(photo, target="9x6:15mm",
                                   trace={"points": outline, "allowance_px": 4.0}).measurement, draws=400)
    # The offset allowance enters A as perimeter x offset: 8 times the default 0.5 px, so U of A
    # grows several times over (the scale's share is the same in both).
    assert coarse.u["A"] > 3 * fine.u["A"]
    with pytest.raises(InputError, match="allowance_px"):
        measure_photo(photo, target="9x6:15mm", trace={"points": outline, "allowance_px": -1})


def test_a_hand_boundary_off_the_photos_edge_is_flagged_and_one_on_it_is_not(tmp_path):
    # A site render of an irregular log on grass (tracer.inputs.photo.renders.synth, an invented member): its
    # true outline, mapped by the renderer's homography, lies on the photo's edge; an ellipse
    # through five points of it (a round rim drawn round an irregular log) strays off it.
    import shapely

    from tracer.inputs.photo.renders.sites import site_scenes

    r = render(dict(site_scenes())["log-grass"])
    p = tmp_path / "log.jpg"
    cv2.imwrite(str(p), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
    ring = np.asarray(r.section.parts[0].exterior)
    q = np.column_stack([ring, np.ones(len(ring))]) @ r.homography.T
    true = q[:, :2] / q[:, 2:]
    c = true.mean(axis=0)
    # The ellipse (here a circle) of the same area about the same centre: off the edge where
    # the log is not round.
    rad = np.sqrt(shapely.Polygon(true).area / np.pi)
    t = np.linspace(0, 2 * np.pi, 180, endpoint=False)
    circle = c + rad * np.column_stack([np.cos(t), np.sin(t)])
    on = measure_photo(p, target="9x6:15mm", trace={"points": true.tolist(), "allowance_px": 1.5},
                       accept_trace=True)
    off = measure_photo(p, target="9x6:15mm", trace={"points": circle.tolist(), "allowance_px": 1.5},
                        accept_trace=True)
    assert not on.check.needs_review and off.check.needs_review
    assert off.check.measures["on_the_edge"] < 0.6 < on.check.measures["on_the_edge"]
    assert "placed by hand" in off.check.reasons[0]
