"""The photo pipeline on the project's own synthetic renders, whose true sections are known."""

from __future__ import annotations

import json
import math
import subprocess
import sys

import numpy as np
import pytest

from tracer.errors import InputError, MeasurementError
from tracer.section.geometry import Section
from tracer.inputs.photo.load import load_photo
from tracer.inputs.photo.pipeline import measure_photo
from tracer.inputs.photo.renders.scene import Scene
from tracer.inputs.photo.renders.synth import render
from tracer.section.properties import section_properties
from tracer.result import measure
from tracer.section.shapes import angle, channel, rectangle, tube

cv2 = pytest.importorskip("cv2")

BIG_TARGET = dict(target=(9, 6, 15.0), target_at=(-150.0, -60.0))


def _write(tmp_path, img, name="photo.png"):
    p = tmp_path / name
    cv2.imwrite(str(p), img)
    return p


def _placed(section: Section) -> Section:
    x0, y0, _, _ = section.bounds
    return section.translated(90 - x0, -30 - y0)


# -- loading ---------------------------------------------------------------------------------------
def test_formats_depths_alpha_orientation_and_dpi(tmp_path):
    from PIL import Image

    base = np.zeros((40, 60, 3), np.uint8)
    base[5:15, 10:50] = 200                                    # a bright bar, wider than high
    Image.fromarray(base).save(tmp_path / "a.png", dpi=(300, 300))
    Image.fromarray(base[..., 0]).save(tmp_path / "a.bmp")
    Image.fromarray(base).save(tmp_path / "a.webp", lossless=True)
    Image.fromarray((base[..., 0].astype(np.uint16) * 257)).save(tmp_path / "a16.tif")
    rgba = np.dstack([base, np.where(base[..., 0] > 0, 255, 0).astype(np.uint8)])
    Image.fromarray(rgba, "RGBA").save(tmp_path / "alpha.png")
    im = Image.fromarray(base)
    exif = im.getexif()
    exif[0x0112] = 6                                           # rotate 90 degrees clockwise to view
    im.save(tmp_path / "turned.jpg", exif=exif, quality=95)
    p = load_photo(tmp_path / "a.png")
    assert p.shape == (40, 60) and p.dpi == pytest.approx(300, abs=0.01)
    assert load_photo(tmp_path / "a.bmp").gray.max() == pytest.approx(200 / 255, abs=1e-6)
    assert load_photo(tmp_path / "a.webp").gray[10, 30] == pytest.approx(200 / 255, abs=0.02)
    assert load_photo(tmp_path / "a16.tif").gray[10, 30] == pytest.approx(200 / 255, abs=1e-4)
    a = load_photo(tmp_path / "alpha.png")
    assert a.alpha is not None and a.alpha[10, 30] and not a.alpha[30, 5]
    turned = load_photo(tmp_path / "turned.jpg")
    assert turned.shape == (60, 40)                            # the EXIF tag was applied


def test_bad_files_are_input_errors(tmp_path):
    (tmp_path / "x.jpg").write_bytes(b"not an image at all")
    with pytest.raises(InputError, match="not a readable image"):
        load_photo(tmp_path / "x.jpg")
    with pytest.raises(InputError, match="no such file"):
        load_photo(tmp_path / "missing.png")
    cv2.imwrite(str(tmp_path / "big.png"), np.zeros((100, 200), np.uint8))
    with pytest.raises(InputError, match="megapixels is more than"):
        load_photo(tmp_path / "big.png", max_pixels=10_000)


# -- accuracy against the truth ----------------------------------------------------------------------
SHAPES = {
    "joist": rectangle(b=47, h=195, wane={"top_left": 16.0}, chord_angle=0.05),
    "channel": channel(h=152, b=76, tw=6.4, tf=9, r=8, chord_angle=0.05),
    "tube": tube(d=114.3, t=6.3, chord_angle=0.05),
    "angle": angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05),
}


def test_accuracy_and_coverage_with_a_target(tmp_path):
    # Renders with a target, tilt up to 12 deg, blur up to 2 px, sections >= 600 px across.
    rng = np.random.default_rng(1)
    names = list(SHAPES) * 3
    errors = {k: [] for k in ("A", "I1", "I2")}
    covered = {k: [] for k in ("A", "I1", "I2")}
    for i, name in enumerate(names):
        scene = Scene(section=_placed(SHAPES[name]), tilt=rng.uniform(0, 12), tilt_axis=rng.uniform(0, 180),
                      blur=rng.uniform(0.5, 2.0), light=rng.uniform(0, 0.3), px_per_mm=5.0, seed=200 + i,
                      member="timber" if name == "joist" else "steel", **BIG_TARGET)
        r = render(scene)
        pm = measure_photo(_write(tmp_path, r.image, f"r{i}.jpg"), target="9x6:15mm")
        res = measure(pm.measurement, draws=400)
        truth = section_properties(r.section).values()
        for k in errors:
            e = res.properties.values()[k] - truth[k]
            errors[k].append(abs(e) / truth[k])
            covered[k].append(abs(e) <= 2 * res.u[k])
    # The goals of the photo pipeline: |error| of A <= 0.3 %, of I1 and I2 <= 1.0 %.
    assert max(errors["A"]) <= 0.003
    assert max(errors["I1"]) <= 0.010 and max(errors["I2"]) <= 0.010
    for k in covered:
        assert np.mean(covered[k]) >= 0.9, k


@pytest.mark.parametrize("seed,px_per_mm,light,tilt,turn", [(1006, 6.6, 0.31, 5.8, -8.5), (1026, 5.4, 0.35, 9.0, 4.0)])
def test_a_thin_member_on_a_mottled_ground_is_found_not_a_patch_of_the_ground(tmp_path, seed, px_per_mm, light,
                                                                                tilt, turn):
    # A thin grey steel angle on the renderer's mottled ground under strongly uneven light: the
    # member is a few per cent of the pixels, so Otsu's two-class level falls inside the
    # ground's own spread and cuts it into light and dark patches (one of which was once taken
    # for the member, 66 % off in A). Truth: the rendered section.
    sec = _placed(angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05))
    r = render(Scene(section=sec, member="steel", px_per_mm=px_per_mm, light=light, tilt=tilt, tilt_axis=161.0,
                     turn=turn, blur=0.7, noise=3.1, seed=seed, target=(9, 6, 15.0), target_at=(-150.0, -67.0)))
    p = tmp_path / "angle.jpg"
    cv2.imwrite(str(p), r.image, [cv2.IMWRITE_JPEG_QUALITY, 85])
    res = measure(measure_photo(p, target="9x6:15mm").measurement, draws=400)
    want = section_properties(r.section).values()
    for k in ("A", "I1", "I2"):
        assert abs(res.properties.values()[k] - want[k]) <= 2 * res.u[k], k


def test_the_frame_is_never_mirrored(tmp_path):
    # An unequal angle has a principal angle whose sign a mirror image would flip; with the target's
    # axes lined up with the section's, the measured theta keeps the true sign (common practice:
    # a mirrored photo is a different member).
    truth = _placed(angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05))
    r = render(Scene(section=truth, member="steel", px_per_mm=5.0, tilt=3.0, **BIG_TARGET))
    pm = measure_photo(_write(tmp_path, r.image), target="9x6:15mm")
    got = section_properties(pm.measurement.section)
    want = section_properties(r.section)
    # The target's origin may be any of its corners (a half turn keeps the tensor), never a mirror.
    assert math.copysign(1, got.Ixy) == math.copysign(1, want.Ixy)
    assert got.I1 == pytest.approx(want.I1, rel=0.01)


def test_openings_stay_holes_and_texture_does_not(tmp_path):
    r = render(Scene(section=_placed(tube(d=114.3, t=6.3, chord_angle=0.05)), member="steel", px_per_mm=5.0,
                     **BIG_TARGET))
    pm = measure_photo(_write(tmp_path, r.image), target="9x6:15mm")
    assert pm.measurement.section.n_holes == 1
    r = render(Scene(section=_placed(rectangle(b=47, h=195, chord_angle=0.05)), px_per_mm=5.0, **BIG_TARGET))
    pm = measure_photo(_write(tmp_path, r.image, "joist.png"), target="9x6:15mm")
    assert pm.measurement.section.n_holes == 0            # growth rings make no holes


def test_two_point_scale_covers_the_truth_on_ten_renders(tmp_path):
    # --scale only: no perspective correction, so the interval must carry the tilt allowance
    # (default bound 5 deg) and the two points' distance from the member. Ten renders of four
    # shapes, tilt 0 to 5 deg about random axes, the two points 100 mm apart on the target's
    # paper, read off the true camera map to 0.25 px as a careful person would.
    rng = np.random.default_rng(7)
    names = list(SHAPES) * 3
    covered = {k: [] for k in ("A", "I1", "I2")}
    widths = []
    for i, name in enumerate(names[:10]):
        r = render(Scene(section=_placed(SHAPES[name]), tilt=rng.uniform(0, 5), tilt_axis=rng.uniform(0, 180),
                         blur=rng.uniform(0.5, 1.5), px_per_mm=5.0, seed=300 + i,
                         member="timber" if name == "joist" else "steel", **BIG_TARGET))
        a = np.array([-150.0, -60.0 + rng.uniform(0, 75)])
        q = np.column_stack([np.array([a, a + (100.0, 0.0)]), np.ones(2)]) @ r.homography.T
        px = q[:, :2] / q[:, 2:] + rng.uniform(-0.25, 0.25, (2, 2))
        spec = ",".join(f"{v:.2f}" for v in px.ravel()) + "=100mm"
        pm = measure_photo(_write(tmp_path, r.image, f"s{i}.jpg"), scale=spec)
        res = measure(pm.measurement, draws=400)
        want = section_properties(r.section).values()
        for k in covered:
            covered[k].append(abs(res.properties.values()[k] - want[k]) <= 2 * res.u[k])
        widths.append(res.u["A"] / want["A"])
        assert any("unknown tilt of up to 5 deg" in w for w in res.warnings)
    for k in covered:
        assert np.mean(covered[k]) >= 0.9, (k, covered[k])
    assert np.median(widths) > 0.002             # wider than a target's: the tilt is not removed


def test_scan_at_its_own_dpi(tmp_path):
    from PIL import Image

    dpi = 300.0
    s = 25.4 / dpi
    img = np.full((900, 700), 240, np.uint8)
    poly = np.array([[100, 100], [600, 120], [560, 800], [150, 760]], np.float64)
    cv2.fillPoly(img, [poly.astype(np.int32)], 30)
    Image.fromarray(img).save(tmp_path / "scan.png", dpi=(dpi, dpi))
    pm = measure_photo(tmp_path / "scan.png")
    got = section_properties(pm.measurement.section).A
    # Filled pixels of the polygon, at (25.4 / dpi)^2 mm^2 each (OpenCV fills boundary pixels too).
    want = float((img < 128).sum()) * s * s
    assert got == pytest.approx(want, rel=0.01)
    assert pm.measurement.source["scale"]["method"] == "dpi"


@pytest.mark.parametrize("kwargs,error,message", [
    (dict(target="7x5:10mm"), MeasurementError, r"no 7x5 checkerboard target found; --target counts the inner corners"),
    (dict(target="9x6:15mm", seed="99999,5"), InputError, r"--seed 99999,5 lies outside"),
    (dict(target="9x6:15mm", seed="3,3"), MeasurementError, r"is on the background"),
    (dict(target="9x6"), InputError, r"--target '9x6': write inner corners and square size"),
    (dict(), InputError, r"no scale: give --target"),
    (dict(target="9x6:15mm", scale="1,2,300,4=10mm"), InputError, r"give one scale reference"),
])
def test_photo_errors_say_what_to_do(tmp_path, kwargs, error, message):
    r = render(Scene(section=_placed(rectangle(b=47, h=195, chord_angle=0.05)), px_per_mm=3.0, **BIG_TARGET))
    with pytest.raises(error, match=message):
        measure_photo(_write(tmp_path, r.image), **kwargs)


def test_a_member_cut_off_by_the_frame_is_refused(tmp_path):
    r = render(Scene(section=_placed(rectangle(b=47, h=195, chord_angle=0.05)), px_per_mm=3.0, **BIG_TARGET))
    # Cut the photo through the middle of the member (x = 90 + 47/2 mm), keeping the target.
    q = r.homography @ np.array([90 + 47 / 2 + 150, 0.0 + 60 + 67, 1.0])
    cropped = r.image[:, : int(q[0] / q[2])]
    with pytest.raises(MeasurementError, match="cut off by the image border"):
        measure_photo(_write(tmp_path, cropped), target="9x6:15mm")


def test_cli_measures_a_photo_with_json_and_overlay(tmp_path):
    r = render(Scene(section=_placed(channel(h=152, b=76, tw=6.4, tf=9, r=8, chord_angle=0.05)), member="steel",
                     px_per_mm=4.0, **BIG_TARGET))
    photo = _write(tmp_path, r.image, "channel.jpg")
    over = tmp_path / "over.png"
    run = subprocess.run([sys.executable, "-m", "tracer", "measure", str(photo), "--target", "9x6:15mm",
                          "--json", "-", "--overlay", str(over), "--draws", "300"], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    doc = json.loads(run.stdout)
    assert doc["source"]["kind"] == "photo" and doc["source"]["scale"]["method"] == "target"
    assert doc["source"]["scale"]["corner_residual_mm_rms"] < 0.1
    assert all("u" in v for v in doc["properties"].values())
    assert any("no lens profile" in w for w in doc["warnings"])
    picture = cv2.imread(str(over))
    assert picture is not None and picture.shape[:2] == r.image.shape[:2]
    assert (np.abs(picture.astype(int) - r.image.astype(int)).sum(axis=2) > 60).any()   # something drawn
    bad = subprocess.run([sys.executable, "-m", "tracer", "measure", str(photo), "--target", "5x5:10mm"],
                         capture_output=True, text=True)
    assert bad.returncode == 1 and "no 5x5 checkerboard target found" in bad.stderr


def test_demo_runs_on_a_bundled_sample(tmp_path):
    run = subprocess.run([sys.executable, "-m", "tracer", "demo", "--overlay", str(tmp_path / "demo.png"),
                          "--report", str(tmp_path / "demo.html")], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    assert "synthetic photo of an invented member" in run.stdout and (tmp_path / "demo.png").exists()
    assert "synthetic photo of an invented member" in (tmp_path / "demo.html").read_text(encoding="utf-8")


def test_known_depth_sets_the_scale_or_cross_checks_a_target(tmp_path):
    truth = _placed(rectangle(b=47, h=195, chord_angle=0.05))
    r = render(Scene(section=truth, px_per_mm=5.0, tilt=2.0, target=None))
    pm = measure_photo(_write(tmp_path, r.image, "alone.png"), known="depth=195mm")
    res = measure(pm.measurement, draws=400)
    want = section_properties(r.section).values()
    assert pm.measurement.source["scale"]["method"] == "known"
    for k in ("A", "I1", "I2"):
        assert abs(res.properties.values()[k] - want[k]) <= 2 * res.u[k], k
    r = render(Scene(section=truth, px_per_mm=5.0, tilt=2.0, **BIG_TARGET))
    photo = _write(tmp_path, r.image)
    checked = measure_photo(photo, target="9x6:15mm", known="depth=195mm")
    diff = checked.measurement.source["scale"]["known_check"]["difference_percent"]
    assert abs(diff) < 0.5
    assert any(w.startswith("cross-check: the traced depth") for w in checked.measurement.warnings)
    with pytest.raises(InputError, match="write depth=LENGTH or width=LENGTH"):
        measure_photo(photo, known="height=3mm")
