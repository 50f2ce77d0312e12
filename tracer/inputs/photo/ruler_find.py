"""A ruler in view: found as a straight strip of either shade, or as a row of marks along a line.

Candidates are strips at least 4 times longer than wide that keep clear of the other references;
the first, longest first, whose graduation :func:`tracer.inputs.photo.ruler_read.read_ruler`
reads is the ruler. A rule of the ground's own shade shows no strip; its marks are then found as
a row of small, like blobs on a line. A second ruler at more than 30 degrees to the first is
looked for too (:func:`find_rulers`).
"""

from __future__ import annotations

import math

import numpy as np

from ...errors import MeasurementError
from .ruler import MIN_TICKS, RulerReading
from .ruler_read import read_ruler

__all__ = ["find_ruler", "find_rulers"]


def find_ruler(gray: np.ndarray, *, keep_out: list[np.ndarray] = ()) -> RulerReading:
    """Find a ruler in `gray` (H, W, 0..1) and read it.

    Candidates are straight strips (at least 4 times longer than wide, filling their rectangle)
    of either shade that keep clear of the other references; the first, longest first, whose
    read gives :data:`MIN_TICKS` or more evenly spaced ticks is the ruler.

    Raises
    ------
    MeasurementError
        No such strip, or none with a readable graduation.
    """
    import cv2

    H, W = gray.shape
    f = min(1.0, 1000.0 / max(H, W))
    small = cv2.resize(gray.astype(np.float32), (max(2, int(W * f)), max(2, int(H * f))),
                       interpolation=cv2.INTER_AREA) if f < 1 else gray.astype(np.float32)
    small = cv2.GaussianBlur(small, (0, 0), 1.0)
    refs = np.zeros(small.shape, np.uint8)
    for poly in keep_out:
        cv2.fillPoly(refs, [np.round(np.asarray(poly) * f).astype(np.int32)], 1)
    from .lookalike import otsu

    vals = small[refs == 0]
    t = otsu(vals, float(vals.min()), float(vals.max()))
    candidates = []
    h, w = small.shape
    for cls in (small > t, small <= t):
        m = cv2.morphologyEx((cls & (refs == 0)).astype(np.uint8), cv2.MORPH_CLOSE, np.ones((3, 3), np.uint8))
        n, labels, stats, _ = cv2.connectedComponentsWithStats(m, connectivity=8)
        for i in range(1, n):
            x, y, bw, bh, area = stats[i]
            if area < 200 or x == 0 or y == 0 or x + bw == w or y + bh == h:
                continue
            cnts, _ = cv2.findContours((labels[y:y + bh, x:x + bw] == i).astype(np.uint8), cv2.RETR_EXTERNAL,
                                       cv2.CHAIN_APPROX_SIMPLE)
            (cx, cy), (a, b), ang = cv2.minAreaRect(max(cnts, key=cv2.contourArea) + np.array([x, y]))
            long_, short = max(a, b), min(a, b)
            if short < 3 or long_ / short < 4 or area / (a * b) < 0.6 or long_ < 0.1 * max(h, w):
                continue
            th = math.radians(ang if a >= b else ang + 90.0)
            d = np.array([math.cos(th), math.sin(th)])
            c = np.array([cx, cy])
            candidates.append((long_, (c - 0.5 * long_ * d) / f, (c + 0.5 * long_ * d) / f, 0.5 * short / f))
    for _, p0, p1, half in sorted(candidates, key=lambda c: -c[0]):
        reading = read_ruler(gray, p0, p1, half_width=1.3 * half + 4.0)
        if reading is not None:
            return reading
    # A rule of the ground's own shade shows no strip; its marks still make a row of small,
    # like, evenly spaced blobs along a line.
    line = _row_of_marks(gray, refs_full=keep_out)
    if line is not None:
        reading = read_ruler(gray, line[0], line[1], half_width=line[2])
        if reading is not None:
            return reading
    raise MeasurementError(f"no ruler found: looked for a straight strip at least 4 times longer than wide with "
                           f"{MIN_TICKS} or more evenly spaced graduation marks; give --ruler X1,Y1,X2,Y2 along it, "
                           "or use a target")


def find_rulers(gray: np.ndarray, *, keep_out: list[np.ndarray] = ()) -> list[RulerReading]:
    """The ruler in view and, where there is one, a second at more than 30 degrees to it.

    Raises
    ------
    MeasurementError
        No ruler at all (see :func:`find_ruler`).
    """
    first = find_ruler(gray, keep_out=keep_out)
    try:
        second = find_ruler(gray, keep_out=list(keep_out) + [first.strip])
    except MeasurementError:
        return [first]
    if abs(float(first.direction @ second.direction)) > math.cos(math.radians(30.0)):
        return [first]
    return [first, second]


def _row_of_marks(gray: np.ndarray, *, refs_full: list[np.ndarray] = ()) -> tuple[np.ndarray, np.ndarray, float] | None:
    """A line through the most small, elongated blobs of either shade (a rule's marks), by a
    vectorised RANSAC on their centres; (p0, p1, half width) or None."""
    import cv2

    g8 = np.clip(gray * 255.0 + 0.5, 0, 255).astype(np.uint8)
    H, W = g8.shape
    refs = np.zeros((H, W), np.uint8)
    for poly in refs_full:
        cv2.fillPoly(refs, [np.round(np.asarray(poly)).astype(np.int32)], 1)
    best = None
    for invert in (False, True):
        img = 255 - g8 if invert else g8
        # Thin dark lines: the black-hat (closing minus image) picks marks narrower than 9 px.
        hat = cv2.morphologyEx(img, cv2.MORPH_BLACKHAT, np.ones((9, 9), np.uint8))
        _, bw = cv2.threshold(hat, 0, 255, cv2.THRESH_BINARY | cv2.THRESH_OTSU)
        bw[refs > 0] = 0
        n, labels, stats, cents = cv2.connectedComponentsWithStats(bw, connectivity=8)
        a = stats[1:, 4]
        long_side = np.maximum(stats[1:, 2], stats[1:, 3])
        short = np.minimum(stats[1:, 2], stats[1:, 3])
        ok = (a >= 3) & (a <= 600) & (long_side >= 2 * np.maximum(short, 1))
        c = cents[1:][ok]
        if len(c) < MIN_TICKS:
            continue
        rng = np.random.default_rng(0)
        i, j = rng.integers(0, len(c), (2, 400))
        keep = i != j
        p, q = c[i[keep]], c[j[keep]]
        d = q - p
        nrm = np.hypot(d[:, 0], d[:, 1])
        good = nrm > 20
        p, d, nrm = p[good], d[good], nrm[good]
        normal = np.column_stack([-d[:, 1], d[:, 0]]) / nrm[:, None]
        dist = np.abs(np.einsum("lnk,lk->ln", c[None, :, :] - p[:, None, :], normal))
        votes = (dist < 2.0).sum(axis=1)
        k = int(np.argmax(votes))
        if votes[k] >= MIN_TICKS and (best is None or votes[k] > best[0]):
            inl = c[dist[k] < 2.0]
            u = d[k] / nrm[k]
            t = (inl - p[k]) @ u
            lens = long_side[ok][dist[k] < 2.0]
            best = (int(votes[k]), p[k] + t.min() * u, p[k] + t.max() * u, float(2.0 * np.median(lens) + 6.0))
    if best is None:
        return None
    return best[1], best[2], best[3]
