"""Region models and the minimum graph cut (tracer.inputs.photo.regions)."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from tracer.inputs.photo.regions import Appearance, appearance, first_guess, grow_region, min_cut, region_costs

cv2 = pytest.importorskip("cv2")


def _energy(labels: np.ndarray, cm: np.ndarray, cg: np.ndarray, right: np.ndarray, down: np.ndarray,
            smoothness: float) -> float:
    """The cut's cost written out: each pixel's model cost plus each unlike neighbour pair's weight."""
    e = np.where(labels, cm, cg).sum()
    e += smoothness * (right[:, :-1] * (labels[:, 1:] != labels[:, :-1])).sum()
    e += smoothness * (down[:-1, :] * (labels[1:, :] != labels[:-1, :])).sum()
    return float(e)


def test_the_cut_is_the_least_cost_labelling_found_by_exhaustive_search():
    # The minimum of the energy over all 2^12 labellings of a 3 x 4 grid, found by trying every
    # one (the definition of the minimum, outside the max-flow algorithm), equals the min cut's.
    rng = np.random.default_rng(5)
    for trial in range(6):
        h, w = 3, 4
        cm = rng.uniform(0, 3, (h, w)).astype(np.float32)
        cg = rng.uniform(0, 3, (h, w)).astype(np.float32)
        right = rng.uniform(0, 1, (h, w)).astype(np.float32)
        down = rng.uniform(0, 1, (h, w)).astype(np.float32)
        right[:, -1] = 0
        down[-1, :] = 0
        app = Appearance(lab=np.zeros((h, w, 3), np.float32), texture=None, codes=None, palette=None,
                         right=right, down=down, edge=None)
        cut = min_cut(app, cm, cg, smoothness=1.5)
        best = min(_energy(np.array(bits, bool).reshape(h, w), cm, cg, right, down, 1.5)
                   for bits in itertools.product([False, True], repeat=h * w))
        assert _energy(cut, cm, cg, right, down, 1.5) == pytest.approx(best, rel=1e-6, abs=1e-6)


def test_hard_constraints_hold_against_the_costs():
    app = Appearance(lab=np.zeros((4, 4, 3), np.float32), texture=None, codes=None, palette=None,
                     right=np.ones((4, 4), np.float32), down=np.ones((4, 4), np.float32), edge=None)
    cm = np.full((4, 4), 5.0, np.float32)             # every pixel would rather be ground ...
    cg = np.zeros((4, 4), np.float32)
    member = np.zeros((4, 4), bool)
    member[1, 1] = True                               # ... but this one is held to the member
    cut = min_cut(app, cm, cg, member=member)
    assert cut[1, 1] and cut.sum() == 1


@pytest.mark.parametrize("bgr,lab", [
    # CIELAB of the sRGB primaries and white under D65 (CIE 15:2004 formulae; values from memory,
    # as tabulated for sRGB: white 100/0/0, red 53.24/80.09/67.20, green 87.73/-86.18/83.18,
    # blue 32.30/79.19/-107.86).
    ((1.0, 1.0, 1.0), (100.0, 0.0, 0.0)),
    ((0.0, 0.0, 1.0), (53.24, 80.09, 67.20)),
    ((0.0, 1.0, 0.0), (87.73, -86.18, 83.18)),
    ((1.0, 0.0, 0.0), (32.30, 79.19, -107.86)),
])
def test_colour_is_cielab_of_linear_light(bgr, lab):
    img = np.ones((4, 4, 3), np.float32) * np.array(bgr, np.float32)     # linear light, BGR
    got = appearance(img, looks=False).lab[2, 2]
    assert got == pytest.approx(lab, abs=0.6)


def test_a_member_of_two_looks_is_one_region_and_a_ground_patch_stays_ground():
    # A synthetic scene: ground of one colour with a few darker speckles (texture), a member of
    # two colours (heartwood and sapwood, say) in the middle. Grown from a first guess of the
    # middle against the border strip, the cut is the member, both looks, and nothing else.
    rng = np.random.default_rng(2)
    h, w = 60, 80
    img = np.empty((h, w, 3), np.float32)
    img[:] = (0.10, 0.30, 0.05)                       # green ground (BGR, linear light)
    img += rng.normal(0, 0.01, img.shape).astype(np.float32)
    truth = np.zeros((h, w), bool)
    truth[15:45, 20:60] = True
    img[truth] = (0.35, 0.45, 0.60)                   # light wood ...
    inner = np.zeros_like(truth)
    inner[22:38, 30:50] = True
    img[inner] = (0.08, 0.12, 0.30)                   # ... and a reddish-brown core
    app = appearance(np.clip(img, 0, 1))
    strip = np.zeros((h, w), bool)
    strip[:4] = strip[-4:] = True
    strip[:, :4] = strip[:, -4:] = True
    member0 = first_guess(app, ~strip, strip)
    cut = grow_region(app, member0, strip, hard_ground=strip, rounds=3)
    # The whole member, both looks, and of the ground only a rim of at most 2 px where the
    # texture window straddles the edge (the band cut at full resolution takes that back).
    near = cv2.dilate(truth.astype(np.uint8), np.ones((5, 5), np.uint8)).astype(bool)
    assert (truth & ~cut).sum() == 0 and (cut & ~near).sum() == 0


def test_the_first_guess_keeps_a_mottled_ground_out_of_the_member():
    # A grey ground mottled in large blobs (as concrete or a card under uneven light), a dark
    # member. Everything inside as the first member model fits the ground about as well as the
    # ground's own does, and the cut then runs through the ground's blobs; the first guess
    # (looks inside over their share in the border strip) does not. Seed 1 is one such scene.
    rng = np.random.default_rng(1)
    h, w = 60, 80
    blob = cv2.resize(rng.normal(0, 1, (8, 10)).astype(np.float32), (w, h), interpolation=cv2.INTER_CUBIC)
    img = np.full((h, w, 3), 0.25, np.float32) + 0.1 * blob[..., None]
    truth = np.zeros((h, w), bool)
    truth[15:45, 20:60] = True
    img[truth] = (0.10, 0.11, 0.12)
    img += rng.normal(0, 0.005, img.shape).astype(np.float32)
    app = appearance(np.clip(img, 0, 1))
    strip = np.zeros((h, w), bool)
    strip[:4] = strip[-4:] = True
    strip[:, :4] = strip[:, -4:] = True
    cut = grow_region(app, first_guess(app, ~strip, strip), strip, hard_ground=strip, rounds=3)
    naive = grow_region(app, (~strip).astype(float), strip, hard_ground=strip, rounds=3)
    assert (cut ^ truth).sum() < 0.2 * truth.sum()
    assert (naive ^ truth).sum() > 3 * (cut ^ truth).sum()


def test_region_costs_prefer_the_model_a_look_belongs_to():
    img = np.zeros((10, 20, 3), np.float32)
    img[:, :10] = 0.8
    img[:, 10:] = 0.1
    app = appearance(img)
    left = np.zeros((10, 20), bool)
    left[:, :10] = True
    cm, cg = region_costs(app, left, ~left)
    assert np.all(cm[:, :10] < cg[:, :10]) and np.all(cm[:, 10:] > cg[:, 10:])
