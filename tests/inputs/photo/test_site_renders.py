"""The photo path on the 45 site renders of ``tracer.inputs.photo.renders.sites.site_scenes`` (invented members on
invented grounds, each with its true section), measured unattended as a user would.

Truth: each render's own section, integrated by tracer.section.properties (itself checked against
textbook closed forms and shapely in test_properties). The goals are those of the issue that
asked for these renders: >= 95 % measured; of those, |error| of A <= 0.5 %, of I1 and I2 <= 1 %,
k = 2 coverage >= 90 %; none beyond 3U without a needs-review flag. They are not met yet: the
test of the goals is marked as an expected failure (strict, so that it fails once they are met
and the mark must go), and the tests before it hold what is met today so that it cannot slip:
no new silent error, and the scenes measured within the goals stay so.
"""

from __future__ import annotations

from concurrent.futures import ProcessPoolExecutor

import pytest

from tracer.errors import TracerError
from tracer.inputs.photo.pipeline import measure_photo
from tracer.inputs.photo.renders.sites import site_scenes
from tracer.inputs.photo.renders.synth import render
from tracer.section.properties import section_properties
from tracer.result import measure

cv2 = pytest.importorskip("cv2")

KEYS = ("A", "I1", "I2")
GOAL = {"A": 0.005, "I1": 0.01, "I2": 0.01}
NAMES = [n for n, _ in site_scenes()]

#: Measured without a flag though beyond 3U today, each for a reason known and not yet mended:
#: side faces traced with the end (joist-gravel-side, board-gravel), a leak into a dark mottled
#: floor (ipe-chalk-dark-floor).
KNOWN_SILENT = {"joist-gravel-side", "board-gravel", "ipe-chalk-dark-floor"}
#: Likewise with a seed on the member (a person's click): side faces (the two above, and a
#: channel's painted side face on decking), an equal angle on wood chips and a tee on decking
#: traced a few per cent short or long.
KNOWN_SILENT_SEEDED = {"joist-gravel-side", "board-gravel", "channel-decking-side", "angle-equal-wood-chips",
                       "tee-decking"}
#: Measured within the goals today.
KNOWN_GOOD = {"stud-grass", "stud-dark-floor", "post-light-card", "log-sand-side", "board-grass", "heb-light-card",
              "tee-paint-concrete", "tube-sand", "bar-bright-concrete"}


def _one(job: tuple[int, bool]) -> dict:
    import tempfile
    from pathlib import Path

    index, seeded = job
    name, scene = site_scenes()[index]
    r = render(scene)
    truth = section_properties(r.section).values()
    kw = {"seed": "{:.1f},{:.1f}".format(*r.member_point)} if seeded else {}
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"{name}.jpg"
        cv2.imwrite(str(path), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
        try:
            pm = measure_photo(path, target="9x6:15mm", accept_trace=True, **kw)
        except TracerError as e:
            return {"name": name, "outcome": "refused", "reason": str(e)}
    res = measure(pm.measurement, draws=300)
    got = res.properties.values()
    err = {k: got[k] / truth[k] - 1 for k in KEYS}
    u = {k: res.u[k] / truth[k] for k in KEYS}
    return {"name": name, "outcome": "flagged" if pm.check.needs_review else "measured", "err": err,
            "covered": all(abs(err[k]) <= 2 * u[k] for k in KEYS),
            "beyond_3u": any(abs(err[k]) > 3 * u[k] for k in KEYS),
            "within": all(abs(err[k]) <= GOAL[k] for k in KEYS)}


def _all(seeded: bool) -> dict:
    with ProcessPoolExecutor(max_workers=2) as pool:
        return {r["name"]: r for r in pool.map(_one, [(i, seeded) for i in range(len(NAMES))])}


@pytest.fixture(scope="module")
def rows() -> dict:
    return _all(False)


@pytest.fixture(scope="module")
def seeded_rows() -> dict:
    return _all(True)


def test_the_set_is_at_least_forty_renders_of_every_member_kind():
    # The issue asks for at least 40 renders over every kind of member.
    assert len(NAMES) >= 40 and len(set(NAMES)) == len(NAMES)
    kinds = {n.split("-")[0] for n in NAMES}
    assert {"joist", "board", "log", "ipe", "heb", "channel", "angle", "tee", "tube", "box", "bar"} <= kinds


def test_no_new_error_goes_out_without_a_flag(rows):
    silent = {n for n, r in rows.items() if r["outcome"] == "measured" and r["beyond_3u"]}
    assert silent <= KNOWN_SILENT, f"new silent errors: {sorted(silent - KNOWN_SILENT)}"


def test_with_a_seed_on_the_member_no_new_error_goes_out_without_a_flag(seeded_rows):
    # The render's own point on the member, as a person's click would give it.
    silent = {n for n, r in seeded_rows.items() if r["outcome"] == "measured" and r["beyond_3u"]}
    assert silent <= KNOWN_SILENT_SEEDED, f"new silent errors: {sorted(silent - KNOWN_SILENT_SEEDED)}"
    assert not any(r["outcome"] == "refused" for r in seeded_rows.values())


def test_the_scenes_measured_within_the_goals_stay_so(rows):
    slipped = {n: rows[n] for n in KNOWN_GOOD if rows[n]["outcome"] != "measured" or not rows[n]["within"]}
    assert not slipped, slipped


@pytest.mark.xfail(strict=True, reason="the site-render goals of the photo issue are not met yet (see the "
                                       "issue's note and benchmarks/trace_quality.py)")
def test_the_goals_on_site_renders(rows):
    measured = [r for r in rows.values() if r["outcome"] == "measured"]
    assert len(measured) >= 0.95 * len(rows)
    assert all(r["within"] for r in measured)
    assert sum(r["covered"] for r in measured) >= 0.9 * len(measured)
    assert not any(r["beyond_3u"] for r in measured)
