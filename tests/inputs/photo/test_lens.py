"""Lens profiles and the camera's view, on synthetic renders through a known lens.

The renderer's camera (focal length, centre, OpenCV-model distortion) is set by the test, so
the calibration must give it back; OpenCV's calib3d model and ``calibrateCamera`` are the
reference implementation the profile uses.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from tracer.errors import InputError, MeasurementError
from tracer.inputs.photo.lens import LensProfile, calibrate, profile_json, read_profile, undistort_points
from tracer.inputs.photo.pipeline import measure_photo
from tracer.inputs.photo.renders.scene import Scene
from tracer.inputs.photo.renders.synth import render
from tracer.inputs.photo.view import camera_view, side_faces
from tracer.section.properties import section_properties
from tracer.result import measure
from tracer.section.shapes import channel, rectangle

cv2 = pytest.importorskip("cv2")

SENSOR = (1280, 960)
FOCAL = 1100.0
DIST = (-0.08, 0.02, 0.0, 0.0)                     # a moderate barrel, as a phone lens may leave
K_TRUE = np.array([[FOCAL, 0.0, (SENSOR[0] - 1) / 2], [0.0, FOCAL, (SENSOR[1] - 1) / 2], [0.0, 0.0, 1.0]])
POSES = [(0, 0, 0), (25, 0, 0), (25, 90, 10), (30, 45, -5), (30, 135, 5), (35, 200, 0), (25, 270, 15)]


@pytest.fixture(scope="module")
def board_photos(tmp_path_factory):
    folder = tmp_path_factory.mktemp("cal")
    paths = []
    for i, (tilt, axis, turn) in enumerate(POSES):
        r = render(Scene(section=None, target=(12, 9, 20.0), target_at=(-80.0, -50.0), px_per_mm=3.5, sensor=SENSOR,
                         focal_px=FOCAL, distortion=DIST, tilt=tilt, tilt_axis=axis, turn=turn, blur=0.8,
                         seed=100 + i, margin=10.0))
        p = folder / f"board{i}.jpg"
        cv2.imwrite(str(p), r.image)
        paths.append(p)
    return paths


@pytest.fixture(scope="module")
def profile(board_photos):
    return calibrate(board_photos, 12, 9, 20.0)


def test_calibration_gives_the_camera_back(profile):
    prof, views = profile
    assert all(v.found for v in views) and prof.image_size == SENSOR
    assert prof.rms_px < 0.3                                   # corners to a small fraction of a pixel
    K = prof.camera_matrix
    assert K[0, 0] == pytest.approx(FOCAL, rel=0.005) and K[1, 1] == pytest.approx(FOCAL, rel=0.005)
    assert np.hypot(K[0, 2] - K_TRUE[0, 2], K[1, 2] - K_TRUE[1, 2]) < 3.0
    # Within the part of the frame the board covered, the profile undistorts as the true lens does.
    hull = np.array(prof.record["covered_px"], np.float32)
    yy, xx = np.mgrid[0:SENSOR[1]:20, 0:SENSOR[0]:20]
    pts = np.column_stack([xx.ravel(), yy.ravel()]).astype(float)
    inside = np.array([cv2.pointPolygonTest(hull, (float(x), float(y)), False) >= 0 for x, y in pts])
    shift = np.hypot(*(prof.undistort(pts[inside]) - undistort_points(pts[inside], K_TRUE, np.array(DIST))).T)
    assert shift.max() < 0.5
    assert prof.max_shift_px() > 10                            # the lens was far from distortion-free


def test_profile_round_trip_and_resized_photos(profile, tmp_path):
    prof, _ = profile
    path = tmp_path / "lens.json"
    path.write_text(profile_json(prof))
    back = read_profile(path)
    np.testing.assert_array_equal(back.camera_matrix, prof.camera_matrix)
    np.testing.assert_array_equal(back.distortion, prof.distortion)
    half = back.for_image(640, 480)                            # a half-size copy of the same photos
    assert half.camera_matrix[0, 0] == pytest.approx(prof.camera_matrix[0, 0] / 2)
    p = np.array([[100.0, 80.0], [600.0, 20.0]])
    np.testing.assert_allclose(half.undistort(p), (back.undistort(2 * p + 0.5) - 0.5) / 2, atol=1e-6)
    np.testing.assert_allclose(back.distort(back.undistort(p)), p, atol=1e-6)
    with pytest.raises(InputError, match="turned"):
        back.for_image(960, 1280)
    with pytest.raises(InputError, match="is for 1280 x 960 px photos"):
        back.for_image(1000, 1000)


@pytest.mark.parametrize("text,message", [
    ("{", "not a lens profile"),
    ('{"schema": "other"}', "schema tracer/lens/1 expected"),
    ('{"schema": "tracer/lens/1", "image_size": [10, 10], "camera_matrix": [[1]], "distortion": [0, 0, 0, 0], '
     '"rms_px": 0.1}', "3 x 3"),
    ('{"schema": "tracer/lens/1"}', "is missing"),
])
def test_bad_profiles_say_what_is_wrong(tmp_path, text, message):
    p = tmp_path / "bad.json"
    p.write_text(text)
    with pytest.raises(InputError, match=message):
        read_profile(p)


def test_too_few_boards_is_refused(board_photos, tmp_path):
    blank = tmp_path / "blank.png"
    cv2.imwrite(str(blank), np.full((SENSOR[1], SENSOR[0]), 90, np.uint8))
    with pytest.raises(MeasurementError, match=r"found in 2 of 3 photos; a profile needs at least 3 \(not found in: blank.png\)"):
        calibrate([board_photos[0], board_photos[1], blank], 12, 9, 20.0)


def test_the_profile_removes_the_lens_error(profile, tmp_path):
    prof, _ = profile
    sec = channel(h=152, b=76, tw=6.4, tf=9, r=8, chord_angle=0.05).translated(20.0, -30.0)
    r = render(Scene(section=sec, target=(9, 6, 15.0), target_at=(-150.0, -60.0), px_per_mm=4.0, sensor=SENSOR,
                     focal_px=FOCAL, distortion=DIST, tilt=8.0, tilt_axis=30.0, member="steel", seed=7))
    photo = tmp_path / "member.jpg"
    cv2.imwrite(str(photo), r.image)
    truth = section_properties(r.section).values()
    err = {}
    for lens in (None, prof):
        res = measure(measure_photo(photo, target="9x6:15mm", lens=lens).measurement, draws=300)
        err[lens is not None] = {k: abs(res.properties.values()[k] / truth[k] - 1) for k in ("A", "I1", "I2")}
        if lens is not None:
            for k in ("A", "I1", "I2"):
                assert abs(res.properties.values()[k] - truth[k]) <= 2 * res.u[k], k
            assert res.measurement.source["scale"]["lens"]["rms_px"] == pytest.approx(prof.rms_px)
            assert not any("no lens profile" in w for w in res.warnings)
    # The photo pipeline's goals (A within 0.3 %, I1 and I2 within 1 %) hold through the lens ...
    assert err[True]["A"] <= 0.003 and err[True]["I1"] <= 0.01 and err[True]["I2"] <= 0.01
    # ... and without the profile the same photo is several per cent off.
    assert err[False]["A"] > 0.03 and err[False]["I2"] > 0.05


def test_cli_calibrate_and_measure_with_the_profile(board_photos, tmp_path):
    out = tmp_path / "phone.json"
    run = subprocess.run([sys.executable, "-m", "tracer", "calibrate", *map(str, board_photos[:4]),
                          "--board", "12x9:20mm", "--out", str(out)], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    assert "RMS reprojection error" in run.stdout and json.loads(out.read_text())["schema"] == "tracer/lens/1"
    bad = subprocess.run([sys.executable, "-m", "tracer", "calibrate", str(board_photos[0]), "--board", "12x9:20mm",
                          "--out", str(tmp_path / "x.json")], capture_output=True, text=True)
    assert bad.returncode == 1 and "a profile needs at least 3" in bad.stderr
    assert not (tmp_path / "x.json").exists()
    scan = subprocess.run([sys.executable, "-m", "tracer", "measure", str(board_photos[0]), "--dpi", "300",
                           "--lens", str(out)], capture_output=True, text=True)
    assert scan.returncode == 2 and "a flatbed scan (--dpi) has no lens profile" in scan.stderr


def test_camera_position_from_the_target(tmp_path):
    # The renderer's camera walks round the scene's centre at a distance f / scale, tilted 20 deg:
    # it stands (f / scale) cos 20 deg above the face's plane.
    sec = rectangle(b=90, h=140, chord_angle=0.05).translated(150.0, -20.0)
    scene = Scene(section=sec, target=(9, 6, 15.0), target_at=(-20.0, -60.0), px_per_mm=4.0, sensor=SENSOR,
                  focal_px=FOCAL, tilt=20.0, tilt_axis=80.0, jpeg=None)
    r = render(scene)
    H = np.linalg.inv(r.homography)
    view = camera_view(H / H[2, 2], SENSOR)                 # focal length from the target's perspective
    assert view.focal_from == "target perspective" and view.focal_px == pytest.approx(FOCAL, rel=0.01)
    assert view.tilt_deg == pytest.approx(20.0, abs=0.2)
    assert view.height == pytest.approx(FOCAL / 4.0 * np.cos(np.radians(20.0)), rel=0.01)
    seen = side_faces(r.section, view)
    assert seen is not None and seen["direction"][0] < -0.9      # the member's left faces are in view


def test_side_faces_in_view_are_warned_about(tmp_path):
    # The renderer's camera stands over the middle of the scene (member and target). A member well
    # off to one side shows its side face to a square-on camera; one under the camera shows none.
    sec = rectangle(b=90, h=140, chord_angle=0.05)
    for x0, expect in ((150.0, True), (-45.0, False)):
        r = render(Scene(section=sec.translated(x0, -20.0), target=(6, 4, 10.0), target_at=(-33.0, -80.0),
                         px_per_mm=4.0, sensor=SENSOR, focal_px=FOCAL, tilt=0.0, member_length=400.0, seed=3))
        photo = tmp_path / f"side{expect}.jpg"
        cv2.imwrite(str(photo), r.image)
        pm = measure_photo(photo, target="6x4:10mm", lens=LensProfile(K_TRUE, np.zeros(5), SENSOR, 0.05))
        warned = [w for w in pm.measurement.warnings if "side faces may show" in w]
        assert bool(warned) is expect, pm.measurement.warnings
        if expect:
            assert "off to the member's left" in warned[0]
