"""Iso-lines assembled patch by patch against scikit-image's marching squares, and a circle."""

import math

import numpy as np
import pytest
import shapely

from tracer.photo.isolines import Isolines

skimage_measure = pytest.importorskip("skimage.measure")


def _field(seed: int, shape=(180, 260)) -> np.ndarray:
    import cv2

    rng = np.random.default_rng(seed)
    f = cv2.GaussianBlur(rng.standard_normal(shape).astype(np.float32), (0, 0), 5).astype(np.float64)
    f[0, :] = f[-1, :] = f[:, 0] = f[:, -1] = -1.0          # every line closes inside the array
    return f


def _in_patches(f: np.ndarray, rows: int, cuts: list[int], saddle: str = "mean") -> list[np.ndarray]:
    """The field given in blocks of `rows` rows, each split at columns `cuts`."""
    lines = Isolines(width=f.shape[1], saddle=saddle)
    edges = [0] + cuts + [f.shape[1] - 1]
    for r0 in range(0, f.shape[0] - 1, rows):
        n = min(rows, f.shape[0] - 1 - r0)
        for c0, c1 in zip(edges[:-1], edges[1:]):
            lines.add(f[r0:r0 + n + 1, c0:c1 + 1], r0, c0, n, c1 - c0)
    return lines.rings()


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
@pytest.mark.parametrize("rows,cuts", [(32, [100]), (7, [33, 34, 200]), (179, [])])
@pytest.mark.parametrize("saddle", ["low", "high"])
def test_rings_are_those_of_scikit_image(seed, rows, cuts, saddle):
    # Reference: skimage.measure.find_contours (marching squares with linear interpolation)
    # on the whole array, its saddles resolved by `fully_connected`; the same closed lines
    # must come out of the patches, point for point.
    f = _field(seed)
    want = [c[:-1, ::-1] for c in skimage_measure.find_contours(f, 0.0, fully_connected=saddle)
            if np.allclose(c[0], c[-1])]
    got = _in_patches(f, rows, cuts, saddle)
    assert len(got) == len(want) and len(want) > 5
    key = lambda r: (round(abs(shapely.Polygon(r).area), 6), len(r))
    for g, w in zip(sorted(got, key=key), sorted(want, key=key)):
        assert len(g) == len(w)
        assert shapely.Polygon(g).area == pytest.approx(abs(shapely.Polygon(w).area), abs=1e-9)
        # The same vertices, whatever the starting point and direction.
        gs = {tuple(np.round(p, 9)) for p in g}
        ws = {tuple(np.round(p, 9)) for p in w}
        assert gs == ws


def test_positive_side_is_on_the_left_and_a_circle_is_traced_to_a_small_fraction_of_a_pixel():
    # f = R - distance from the centre: the zero line is a circle of radius R (closed form:
    # area pi R^2); linear interpolation on a unit grid puts each vertex within about
    # 1/(8R) px of it (common practice for marching squares on a smooth field).
    R, c = 40.3, (60.2, 55.7)
    yy, xx = np.mgrid[0:120, 0:130]
    f = R - np.hypot(xx - c[0], yy - c[1])
    rings = _in_patches(f, 16, [50, 90])
    assert len(rings) == 1
    ring = rings[0]
    r = np.hypot(ring[:, 0] - c[0], ring[:, 1] - c[1])
    assert np.abs(r - R).max() < 0.02
    poly = shapely.Polygon(ring)
    assert poly.area == pytest.approx(math.pi * R * R, rel=2e-4)
    # The positive side on the left of travel: counter-clockwise as drawn (y down), which is a
    # negative shoelace sum in (column, row) coordinates.
    x, y = ring[:, 0], ring[:, 1]
    signed = 0.5 * np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y)
    assert signed < 0


@pytest.mark.parametrize("corners,rings", [((1.0, -0.2), 1), ((0.2, -1.0), 2)])
def test_the_mean_rule_joins_saddles_as_their_centre_lies(corners, rings):
    # One saddle cell, diagonal corners `hi` (positive) and `lo` (negative), on a negative
    # ground: where the cell's mean is positive the two positive pixels are one region (one
    # ring), else two.
    hi, lo = corners
    f = -np.ones((6, 6))
    f[2, 2], f[2, 3], f[3, 3], f[3, 2] = hi, lo, hi, lo
    assert len(_in_patches(f, 5, [])) == rings


def test_lines_leaving_the_patches_are_left_out():
    f = _field(5)
    lines = Isolines(width=f.shape[1])
    # Only the top half given: lines crossing its lower edge cannot close.
    lines.add(f[:91], 0, 0, 90, f.shape[1] - 1)
    full = _in_patches(f, 179, [])
    got = lines.rings()
    assert 0 < len(got) < len(full)
    assert all(p[:, 1].max() <= 90 for p in got)
