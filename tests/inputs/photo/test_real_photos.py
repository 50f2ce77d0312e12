"""Real photos of cut ends, taken by other people (tests/data/real-photos: sources, licences and
reference outlines in its README): measured unattended against their reference outlines, and the
trace check never letting a wrong trace out as if it were sure.

None of these photos has a known scale: they are measured with ``dpi=25.4`` (1 px = 1 mm), and
the reference outline's pixels give the truth in the same units (each white pixel a unit square).
The references are good to a few pixels of the original photo, hence the goals of the issue that
asked for this: area within 2 %, I1 and I2 within 4 %.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from tracer.errors import MeasurementError
from tracer.inputs.photo.pipeline import TraceNeedsReview, measure_photo
from tracer.section.properties import section_properties

from tests.common import run_tracer

cv2 = pytest.importorskip("cv2")

REAL = Path(__file__).resolve().parents[2] / "data" / "real-photos"
#: The goals: |error| of A within 2 %, of I1 and I2 within 4 % (the reference outlines' own accuracy).
GOAL = {"A": 0.02, "I1": 0.04, "I2": 0.04}


def _photo(stem: str) -> Path:
    return next(REAL.glob(f"{stem}_*.jpg"))


def _reference(photo: Path, kind: str) -> dict:
    """A, I1, I2 of a reference mask [px units], each white pixel a unit square (its own I about
    its centre, 1/12, included)."""
    m = cv2.imread(str(photo.with_suffix(f".{kind}.png")), cv2.IMREAD_GRAYSCALE) > 127
    ys, xs = np.nonzero(m)
    a = float(len(xs))
    dx, dy = xs - xs.mean(), ys - ys.mean()
    ix, iy = float((dy ** 2).sum()) + a / 12, float((dx ** 2).sum()) + a / 12
    ixy = -float((dx * dy).sum())
    c, r = 0.5 * (ix + iy), float(np.hypot(0.5 * (ix - iy), ixy))
    return {"A": a, "I1": c + r, "I2": c - r}


def _errors(pm, truth: dict) -> dict:
    got = section_properties(pm.measurement.section).values()
    return {k: got[k] / truth[k] - 1 for k in GOAL}


@pytest.mark.parametrize("stem", ["p07", "p08", "p14"])
def test_log_ends_with_a_silhouette_are_measured_unattended_within_the_goals(stem):
    # Truth: the photo's reference outline (whole face, bark included), README of real-photos.
    photo = _photo(stem)
    pm = measure_photo(photo, dpi=25.4)
    assert not pm.check.needs_review, pm.check.reasons
    err = _errors(pm, _reference(photo, "silhouette"))
    assert all(abs(err[k]) <= GOAL[k] for k in GOAL), err


@pytest.mark.parametrize("stem", ["p03", "p04"])
def test_a_log_end_in_a_harvester_head_is_right_under_bark_or_flagged(stem):
    # Truth: the wood inside the bark, as outlined in the source repository (README of real-photos).
    photo = _photo(stem)
    try:
        pm = measure_photo(photo, dpi=25.4, under_bark=True)
    except TraceNeedsReview as e:
        pm = e.photo_measurement                     # flagged: what was traced, for the review
    err = _errors(pm, _reference(photo, "underbark"))
    within = all(abs(err[k]) <= GOAL[k] for k in GOAL)
    # Never a wrong trace without a flag.
    assert within or pm.check.needs_review, err
    assert pm.measurement.source["trace"]["bark"]["traced"] == "wood inside the bark"
    if stem == "p03":
        # On this one the wood is traced within the goals (its rough rim asks for review).
        assert within, err


def test_bark_is_traced_whole_by_default_and_said_so_and_left_out_on_request():
    # The disc's bark is its darker ragged rim on about all of its outline (README of real-photos).
    photo = _photo("p14")
    whole = measure_photo(photo, dpi=25.4)
    bark = whole.measurement.source["trace"]["bark"]
    assert bark["seen"] and bark["traced"] == "whole face" and bark["coverage"] > 0.8
    assert any("bark included" in w for w in whole.measurement.warnings)
    inner = measure_photo(photo, dpi=25.4, under_bark=True)
    assert inner.measurement.source["trace"]["bark"]["traced"] == "wood inside the bark"
    a_whole = section_properties(whole.measurement.section).A
    a_inner = section_properties(inner.measurement.section).A
    # The bark's share of the area, as the check measured it, is what under-bark leaves out.
    assert a_inner == pytest.approx(a_whole * (1 - bark["area_share"]), rel=0.03)
    assert a_inner < 0.95 * a_whole


@pytest.mark.parametrize("stem", ["p18", "p19"])
def test_a_tube_seen_end_on_is_traced_as_an_annulus(stem):
    # No reference outline: the tube's end is a ring, so the trace must be one outline with one
    # concentric hole (textbook: a tube's section), neither a disc nor the bore alone.
    photo = _photo(stem)
    try:
        pm = measure_photo(photo, dpi=25.4)
    except TraceNeedsReview as e:
        pm = e.photo_measurement
    sec = pm.measurement.section
    assert sec.n_parts == 1 and sec.n_holes == 1
    outer, hole = sec.parts[0].exterior, sec.parts[0].holes[0]
    d = 2 * np.sqrt(_area(outer) / np.pi)
    assert 0.3 < _area(hole) / _area(outer) < 0.95
    assert np.hypot(*(_centroid(outer) - _centroid(hole))) < 0.05 * d


def _area(ring: np.ndarray) -> float:
    x, y = np.asarray(ring, float).T
    return abs(0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))


def _centroid(ring: np.ndarray) -> np.ndarray:
    return np.asarray(ring, float).mean(axis=0)


def test_a_log_end_partly_hidden_by_another_is_refused_or_flagged():
    # The face runs under another log at the left (README of real-photos): no trace of it is sure.
    with pytest.raises(MeasurementError):
        measure_photo(_photo("p06"), dpi=25.4)


@pytest.mark.parametrize("seed", ["640,745", "1140,760"])
def test_pipe_ends_seen_obliquely_with_a_seed_are_never_measured_as_if_sure(seed):
    # Open pipe ends seen from the side: the bore shows its inner wall, so the end's ring cannot be
    # traced from the photo alone; the seed picks one end, and the tool must refuse or flag.
    x, y = map(float, seed.split(","))
    try:
        pm = measure_photo(_photo("p21"), dpi=25.4, seed=seed)
    except TraceNeedsReview as e:
        pm = e.photo_measurement
        # What it traced is the end the seed is on: the seed within its outline, in the photo.
        outer = np.asarray(pm.trace.rings_px[0], np.float32)
        assert cv2.pointPolygonTest(outer, (x, y), False) >= 0
    except MeasurementError:
        return
    else:
        pytest.fail(f"measured without a flag: {pm.check}")


def test_a_trace_needing_review_exits_1_with_its_picture_unless_accepted(tmp_path):
    # p03 traced whole: its rough rim against sawdust and steel asks for review (see above).
    photo = _photo("p03")
    over, js = tmp_path / "look.png", tmp_path / "r.json"
    r = run_tracer("measure", str(photo), "--dpi", "25.4", "--overlay", str(over), "--json", str(js))
    assert r.returncode == 1 and "needs review" in r.stderr and "--accept-trace" in r.stderr
    assert len(r.stderr.strip().splitlines()) <= 2 and "Traceback" not in r.stderr
    assert over.exists() and cv2.imread(str(over)) is not None      # the picture to look at
    assert not js.exists()                                           # no result as if it were sure
    r = run_tracer("measure", str(photo), "--dpi", "25.4", "--accept-trace", "--json", str(js))
    assert r.returncode == 0, r.stderr
    assert "accepted unchecked" in r.stdout
    trace = json.loads(js.read_text())["source"]["trace"]
    assert trace["needs_review"] is True and trace["accepted_unchecked"] is True and trace["reasons"]
    assert 0 <= trace["confidence"] < 1
