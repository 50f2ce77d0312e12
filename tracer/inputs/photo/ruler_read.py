"""Reading a rule's graduation along a line: the period of its marks, each mark to sub-pixel, the fit.

The image is resampled along the ruler's axis into a straight strip (one pixel of the strip is
one image pixel along the axis). Rows across it that carry the graduation are those whose
spectrum peaks at the tick frequency; their mean is the ruler's profile. Ticks are located in
it to sub-pixel precision (the centroid of each tick's contrast), numbered by their spacing,
and fitted by a projective model along the line,

    s(k) = (a + b k) / (1 + c k),

the exact image of evenly spaced points on a line under any perspective [1] (see
:class:`tracer.inputs.photo.ruler.RulerReading`). The longer marks (every 5th and 10th on a
metric rule, every 2nd, 4th, 8th and 16th on an inch rule) are counted in every level seen;
:mod:`tracer.inputs.photo.graduation` holds them against the pitch the user gave, and tells which
coarser graduation was read where blur took the finest marks.

References
----------
.. [1] R. Hartley and A. Zisserman, *Multiple View Geometry in Computer Vision*, 2nd ed.
       Cambridge University Press, 2004, sec. 2.5 (projective transformations of a line).
"""

from __future__ import annotations

import math

import numpy as np

from ...errors import MeasurementError
from .ruler import MIN_TICKS, RulerReading

__all__ = ["read_ruler"]

# Shortest period looked for [px]: below it the ticks blur into each other.
_MIN_PERIOD = 2.5


def read_ruler(gray: np.ndarray, p0: np.ndarray, p1: np.ndarray, *, half_width: float | None = None) -> RulerReading | None:
    """Read the graduation along the rough line `p0`-`p1` [px]; None when none is there.

    The line's direction is refined until the band of marks runs along the resampled rows: the
    period is read along the graduation's own line.
    """
    p0, p1 = np.asarray(p0, float), np.asarray(p1, float)
    length = float(np.hypot(*(p1 - p0)))
    d = (p1 - p0) / length
    W = float(half_width) if half_width is not None else max(40.0, 0.12 * length)
    margin = 0.05 * length
    origin = p0 - margin * d
    L = length + 2 * margin
    reading = None
    for _ in range(3):                                   # refine the direction from the ticks
        n = np.array([-d[1], d[0]])
        reading = _read_along(gray, origin, d, n, L, W)
        if reading is None:
            return None
        slope = reading.pop("slope")
        if abs(slope) < 1e-4:
            break
        d = d + slope * n
        d /= np.linalg.norm(d)
        origin = 0.5 * (p0 + p1) - 0.5 * L * d              # turned about the line's middle
    n = np.array([-d[1], d[0]])
    return RulerReading(origin=origin, direction=d, normal=n, **reading)


def _read_along(gray: np.ndarray, origin: np.ndarray, d: np.ndarray, n: np.ndarray, L: float,
                W: float) -> dict | None:
    import cv2

    ns, nt = int(L) + 1, 2 * int(math.ceil(W)) + 1
    s = np.arange(ns, dtype=np.float64)
    t = np.arange(nt, dtype=np.float64) - (nt - 1) / 2
    X = origin[0] + s[None, :] * d[0] + t[:, None] * n[0]
    Y = origin[1] + s[None, :] * d[1] + t[:, None] * n[1]
    R = cv2.remap(gray.astype(np.float32), X.astype(np.float32), Y.astype(np.float32), cv2.INTER_LINEAR,
                  borderMode=cv2.BORDER_CONSTANT, borderValue=float("nan"))
    ok = np.isfinite(R)
    if ok.mean() < 0.5:
        return None
    R = np.where(ok, R, np.nanmedian(R))
    # The tick frequency: the peak of the rows' mean spectrum between MIN_TICKS per length and
    # the shortest readable period.
    nfft = 1 << int(math.ceil(math.log2(4 * ns)))
    win = np.hanning(ns)
    rows = R - R.mean(axis=1, keepdims=True)
    P = np.abs(np.fft.rfft(rows * win, n=nfft, axis=1)) ** 2
    freq = np.fft.rfftfreq(nfft)
    lo, hi = MIN_TICKS / L, 1.0 / _MIN_PERIOD
    sel = (freq >= lo) & (freq <= hi)
    if not sel.any():
        return None
    mean_p = P[:, sel].mean(axis=0)
    floor = float(np.median(mean_p))
    # Candidate frequencies: strong local peaks, highest first. A rule's longer marks make peaks
    # at fractions of the tick frequency and narrow ticks make harmonics above it; the reading
    # that numbers the ticks one by one decides.
    is_peak = (mean_p >= np.roll(mean_p, 1)) & (mean_p >= np.roll(mean_p, -1)) & (mean_p > 20.0 * max(floor, 1e-20))
    cand = np.flatnonzero(sel)[np.flatnonzero(is_peak)]
    cand = cand[np.argsort(-P[:, cand].mean(axis=0))][:6]
    for jj in sorted(cand, key=lambda j: -freq[j]):
        got = _read_at(R, t, P, int(jj), 1.0 / float(freq[jj]))
        if got is not None:
            break
    else:
        return None
    s_t, k, params, cov, rms, r0, r1, T0 = got
    # Marks between the ticks read: the finest graduation is there, too blurred to read mark by
    # mark (the longer marks were read). They are counted in: each tick read is m of them.
    prof = R[r0:r1 + 1].mean(axis=0).astype(np.float64)
    factor = 1
    for _ in range(3):
        finer = _finer_marks(prof, params, k, T0)
        if not finer:
            break
        k, T0, factor = k * finer, T0 / finer, factor * finer
        params = params / np.array([1.0, finer, finer])
        cov = cov / np.outer([1.0, finer, finer], [1.0, finer, finer])
    if T0 < _MIN_PERIOD:
        raise MeasurementError(f"the ruler's finest marks are {T0:.1f} px apart, too close to read; photograph "
                               "it closer, or use a target")
    # The graduation's own line: where the band of marks lies across, chunk by chunk along (under
    # perspective the marks need not be square to it, so their slant would mislead).
    slope = _band_slope(R, t, s_t, T0 * factor, _polarity(prof, T0 * factor))
    band = (float(t[r0]), float(t[r1]))
    levels, tested = _mark_levels(R, prof, s_t, k / factor, r0, r1, T0 * factor)
    levels = tuple(v * factor for v in levels)
    long_every, longest_every = (min(levels), max(levels)) if levels else (None, None)
    strip = _strip(R, t, r0, r1, s_t, T0, origin, d, n)
    return {"s": s_t, "k": k, "params": params, "cov": cov, "residual_px": rms, "band": band,
            "strip": strip, "long_every": long_every, "longest_every": longest_every, "levels": levels,
            "levels_tested": tested * factor, "located_every": factor, "slope": slope}


def _read_at(R: np.ndarray, t: np.ndarray, P: np.ndarray, jj: int, T0: float):
    """Ticks at the period `T0` (spectrum bin `jj`): the band of rows, the ticks, the fit; or None."""
    nt = len(t)
    row_p = P[:, max(jj - 2, 0): jj + 3].sum(axis=1)
    # The band: rows where the marks of this period are all there. Rows that only the longer marks
    # reach (every other one, or every fifth) are periodic at twice the period, and show it in the
    # power at half the frequency (at T0 their harmonic would pass for the graduation).
    jh = jj // 2
    whole = P[:, max(jh - 2, 0): jh + 3].sum(axis=1) < row_p
    if not whole.any():
        whole[:] = True
    best = int(np.argmax(np.where(whole, row_p, -1.0)))
    strong = (row_p >= 0.3 * row_p[best]) & whole
    r0 = r1 = best
    while r0 > 0 and strong[r0 - 1]:
        r0 -= 1
    while r1 < nt - 1 and strong[r1 + 1]:
        r1 += 1
    prof = R[r0:r1 + 1].mean(axis=0).astype(np.float64)
    ticks = _ticks(prof, T0)
    if ticks is None:
        return None
    s_t, k = ticks
    params, cov, rms, keep = _fit(s_t, k)
    if rms > 0.15 * T0 or keep.sum() < MIN_TICKS:
        return None
    if _between(prof, s_t[keep], k[keep], params, T0) > 0.3:
        return None                      # marks as strong as the ticks between them: not a graduation
    return s_t[keep], k[keep], params, cov, rms, r0, r1, T0


def _between(prof: np.ndarray, s: np.ndarray, k: np.ndarray, params: np.ndarray, T0: float) -> float:
    """How strong the marks between the ticks are: the highest tick signal in the middle of each
    gap (0.3 to 0.7 of the way), its 90th percentile over the gaps, as a share of the ticks' median.

    Between the marks of a graduation lie only finer marks, weaker in the blur than the ticks (or
    nothing). Ticks that are a lattice of marks but no graduation of the rule (every 4th
    millimetre, say, which the spectrum of 5 mm and centimetre marks can suggest) leave marks as
    strong as themselves between them, in some of the gaps: their longer marks could pass for the
    rule's and the scale be off by a whole factor.
    """
    q = _tick_signal(prof, T0)
    a, b, c = params
    x = np.arange(k.min(), k.max())[:, None] + np.linspace(0.3, 0.7, 9)[None, :]
    grid = np.arange(len(q), dtype=np.float64)
    gaps = np.interp((a + b * x) / (1 + c * x), grid, q).max(axis=1)
    ticks = np.median(np.interp(s, grid, q))
    return float(np.percentile(gaps, 90) / ticks) if ticks > 0 else np.inf


def _ticks(prof: np.ndarray, T0: float) -> tuple[np.ndarray, np.ndarray] | None:
    """Sub-pixel tick positions in a profile and their numbers (the longest even run)."""
    q = _tick_signal(prof, T0)
    peaks = _peaks(q, max(1, int(0.6 * T0)), 0.3 * float(np.std(q)))
    if len(peaks) < MIN_TICKS:
        return None
    s = _centroids(q, peaks.astype(np.float64), T0)
    s = s[_line_like(prof, s, T0, _polarity(prof, T0))]
    if len(s) < MIN_TICKS:
        return None
    gaps = np.diff(s) / T0
    steps = np.round(gaps)
    even = (np.abs(gaps - steps) < 0.2) & (steps >= 1) & (steps <= 2)
    if not even.any() or np.mean(steps[even] == 1) < 0.8:
        return None                                   # mostly every other: a harmonic, not the ticks
    # The longest run of evenly spaced ticks (noise beyond the rule's ends breaks it).
    best, start = (0, 0), 0
    for i, e in enumerate(np.append(even, False)):
        if not e:
            if i - start > best[1] - best[0]:
                best = (start, i)
            start = i + 1
    i0, i1 = best
    if i1 - i0 + 1 < MIN_TICKS:
        return None
    s = s[i0:i1 + 1]
    k = np.concatenate([[0], np.cumsum(steps[i0:i1])]).astype(np.float64)
    return s, k


def _line_like(prof: np.ndarray, s: np.ndarray, T0: float, sign: float) -> np.ndarray:
    """Which peaks at `s` are marks: a line stands out from the rule on both sides alike, where an
    edge (the rule's end, the ground beyond it) is a step between two levels, which the high-pass
    turns into a peak beside it. Kept: a depth below the mean of both sides larger than the step
    between them."""
    x = np.arange(len(prof), dtype=np.float64)
    left, mid, right = (np.interp(s + d, x, prof) for d in (-0.5 * T0, 0.0, 0.5 * T0))
    depth = sign * (mid - 0.5 * (left + right))
    return depth > np.abs(left - right)


def _tick_signal(prof: np.ndarray, T0: float) -> np.ndarray:
    """The profile less its running mean over three periods, turned so that ticks are peaks."""
    return _polarity(prof, T0) * _highpass(np.asarray(prof, np.float64), T0)


def _highpass(x: np.ndarray, T0: float) -> np.ndarray:
    """`x` less its running mean over about three periods, along the last axis."""
    size = max(3, int(round(3 * T0))) | 1
    pad = np.pad(x, [(0, 0)] * (x.ndim - 1) + [(size // 2, size // 2)], mode="edge")
    c = np.concatenate([np.zeros(x.shape[:-1] + (1,)), np.cumsum(pad, axis=-1)], axis=-1)
    return x - (c[..., size:] - c[..., :-size]) / size


def _peaks(q: np.ndarray, distance: int, height: float) -> np.ndarray:
    """Indices of the highest points of `q` within ±`distance` that exceed `height`."""
    from numpy.lib.stride_tricks import sliding_window_view

    w = 2 * distance + 1
    local = sliding_window_view(np.pad(q, distance, mode="constant", constant_values=-np.inf), w).max(axis=1)
    return np.flatnonzero((q >= local) & (q > height))


def _centroids(q: np.ndarray, at: np.ndarray, T0: float) -> np.ndarray:
    """Centroid of each tick's contrast within ±0.4 period of `at` (vectorised)."""
    r = max(1, int(round(0.4 * T0)))
    offs = np.arange(-r, r + 1)
    idx = np.clip(np.round(at).astype(int)[:, None] + offs[None, :], 0, len(q) - 1)
    v = q[idx]
    v = v - v.min(axis=1, keepdims=True)
    wsum = v.sum(axis=1)
    c = (v * idx).sum(axis=1) / np.where(wsum > 0, wsum, 1.0)
    return np.where(wsum > 0, c, at)


def _band_slope(R: np.ndarray, t: np.ndarray, s: np.ndarray, T0: float, sign: float) -> float:
    """d(across)/d(along) of the band of marks: its centre across, in four runs of ticks along.

    Each row's weight is the lower quartile of its contrast at the ticks themselves: read at the
    ticks (a matched filter), an edge crossing the strip (the member's, the ground's) does not sway
    the centre, and the lower quartile is the shortest marks' (half or more of every rule's marks),
    which every mark shares. A mean, or a median where half the marks are longer, would follow the
    longer marks into the rows they reach, by more or less from place to place.
    """
    idx = np.clip(np.round(s).astype(int), 0, R.shape[1] - 1)
    q = sign * _highpass(R.astype(np.float64), T0)[:, idx]           # (rows, ticks)
    mids, centres = [], []
    for run in np.array_split(np.arange(len(s)), 4):
        if len(run) < 3:
            continue
        e = np.clip(np.percentile(q[:, run], 25, axis=1), 0.0, None)
        if e.max() <= 0:
            continue
        w = np.where(e >= 0.5 * e.max(), e, 0.0)
        centres.append(float((w * t).sum() / w.sum()))
        mids.append(float(s[run].mean()))
    if len(mids) < 2:
        return 0.0
    return float(np.polyfit(mids, centres, 1)[0])


def _fit(s: np.ndarray, k: np.ndarray) -> tuple[np.ndarray, np.ndarray, float, np.ndarray]:
    """Projective fit s = (a + b k) / (1 + c k): linear start, Gauss-Newton, 4σ outliers out."""
    keep = np.ones(len(s), bool)
    p = np.zeros(3)
    for _ in range(3):
        A = np.column_stack([np.ones(keep.sum()), k[keep], -k[keep] * s[keep]])
        p = np.linalg.lstsq(A, s[keep], rcond=None)[0]
        for _ in range(5):
            a, b, c = p
            den = 1 + c * k[keep]
            model = (a + b * k[keep]) / den
            J = np.column_stack([1 / den, k[keep] / den, -(a + b * k[keep]) * k[keep] / den**2])
            step = np.linalg.lstsq(J, s[keep] - model, rcond=None)[0]
            p = p + step
        a, b, c = p
        r = s - (a + b * k) / (1 + c * k)
        sigma = 1.4826 * float(np.median(np.abs(r[keep] - np.median(r[keep])))) + 1e-9
        new = np.abs(r) < 4 * max(sigma, 0.01)
        if (new == keep).all():
            break
        keep = new
    a, b, c = p
    den = 1 + c * k[keep]
    J = np.column_stack([1 / den, k[keep] / den, -(a + b * k[keep]) * k[keep] / den**2])
    r = s[keep] - (a + b * k[keep]) / den
    dof = max(1, keep.sum() - 3)
    rms = float(np.sqrt(np.sum(r**2) / dof))
    cov = rms**2 * np.linalg.pinv(J.T @ J)
    return p, cov, rms, keep


def _finer_marks(prof: np.ndarray, params: np.ndarray, k: np.ndarray, T0: float) -> int | None:
    """2 or 5 where marks lie between the ticks read at halves or fifths of their spacing.

    The profile's tick signal at k + j/m is set against its value a half step (1/2m) to either
    side, averaged over every tick; a finer graduation stands out of the noise even where each mark
    alone is lost in it.
    """
    q = _tick_signal(prof, T0)
    a, b, c = params
    kk = np.arange(k.min(), k.max())

    def at(x: np.ndarray) -> np.ndarray:
        pos = (a + b * x) / (1 + c * x)
        return np.interp(pos, np.arange(len(q)), q)

    for m, j in ((2, np.array([1])), (5, np.array([2, 3]))):
        # (for fifths, the places next to the ticks read are left out: their blurred flanks would
        # swamp the comparison)
        sub = at(kk[:, None] + j[None, :] / m)
        mid = 0.5 * (at(kk[:, None] + (j[None, :] - 0.5) / m) + at(kk[:, None] + (j[None, :] + 0.5) / m))
        diff = (sub - mid).ravel()
        if len(diff) > 10 and diff.mean() > 4.0 * diff.std() / math.sqrt(len(diff)) and diff.mean() > 0:
            return m
    return None


def _mark_levels(R: np.ndarray, prof: np.ndarray, s: np.ndarray, k: np.ndarray, r0: int, r1: int,
                 T0: float) -> tuple[tuple[int, ...], int]:
    """Every how many ticks read each level of longer marks falls, shortest level first, and the
    longest spacing a level could have been seen at.

    Each group of a few rows across the strip, within the band of marks and beyond it, is read at
    the ticks with the band's own polarity (so that past the rule's edge, where the blurred marks
    show inverted, nothing is read). For each m the ticks are sorted into classes by k modulo m,
    and each class's mean contrast taken (a mean over many marks stands out of the noise where a
    single blurred mark does not). A group shows level m where one class stands out (its mean
    more than six standard errors above zero and more than half the band's median contrast) and
    every other class's mean is below 0.3 of it; the group's level is the largest such m (every
    m/2-th tick also fits, its standing class diluted by marks that do not reach; every 2m-th
    does not, two classes then standing out). A level counts where two or more groups show it.

    The longest level seen is then split into every other mark, and the halves' mean contrasts
    compared row by row: where they differ (by more than half the marks' peak contrast and six
    standard errors, in three or more groups) every other one reaches further, and twice that
    level is a level too. A level could have been seen where five or more of its marks lie in the
    run read; above the longest level seen, only where the split shows no hint of a difference
    (a quarter of the peak contrast and three standard errors, in two groups), had the power to
    show one (half the peak contrast over the split's median standard error where the marks stand,
    six or more), and those marks are seen to end within the rows read.
    """
    sign = _polarity(prof, T0)
    idx = np.clip(np.round(s).astype(int), 0, R.shape[1] - 1)
    q_band = float(np.median(sign * _highpass(prof, T0)[idx]))
    if q_band <= 0:
        return (), 0
    win = max(2, (r1 - r0 + 1) // 4)
    c = np.cumsum(np.vstack([np.zeros((1, R.shape[1])), R.astype(np.float64)]), axis=0)
    con = sign * _highpass((c[win:] - c[:-win]) / win, T0)[:, idx] / q_band   # (row groups, ticks)
    kk = np.round(k - k.min()).astype(int)
    level = np.zeros(len(con), int)
    which = np.zeros(len(con), int)
    for m in range(2, min(64, len(k) // 3) + 1):
        of = ((kk[None, :] % m) == np.arange(m)[:, None]).astype(np.float64)   # (classes, ticks)
        n = of.sum(axis=1)
        if n.min() < 3:
            continue
        mean = con @ of.T / n
        var = np.maximum((con**2) @ of.T / n - mean**2, 0.0) * n / (n - 1)
        r = np.argmax(mean, axis=1)
        top = mean[np.arange(len(con)), r]
        se = np.sqrt(var[np.arange(len(con)), r] / n[r])
        rest = np.where(np.arange(m)[None, :] == r[:, None], -np.inf, mean).max(axis=1)
        fits = (top > 0.5) & (top > 6.0 * se) & (rest < 0.3 * top)
        level[fits], which[fits] = m, r[fits]
    vals, counts = np.unique(level[level > 0], return_counts=True)
    seen = tuple(int(v) for v in vals[counts >= 2])
    # A level above the longest seen is ruled out only where it would have shown: five or more of
    # its marks in the run read, and those longest marks seen to end within the rows read (where
    # they run off the strip one may lie beyond).
    tested = min(64, (int(np.ptp(kk)) + 1) // 5)
    if not seen:
        return seen, tested
    M = seen[-1]
    r = int(np.bincount(which[level == M]).argmax())
    while 2 * M <= tested:
        # Every other one of the longest marks reaching further is a level above, even where the
        # class means above missed it (the shorter marks lingering in some rows).
        cls = (kk % M) == r
        other = ((kk[cls] - r) // M) % 2 == 1
        a, b = con[:, cls][:, ~other], con[:, cls][:, other]
        d = a.mean(axis=1) - b.mean(axis=1)
        se = np.sqrt(a.var(axis=1, ddof=1) / a.shape[1] + b.var(axis=1, ddof=1) / b.shape[1]) + 1e-12
        reach = con[:, cls].mean(axis=1)
        split = (np.abs(d) > 0.5 * reach.max()) & (np.abs(d) > 6.0 * se)
        if split.sum() >= 3:
            r = r if d[split].mean() > 0 else r + M
            M *= 2
            seen = seen + (M,)
            continue
        # Not shown, but not ruled out either where a weaker difference shows, or where a split as
        # large as half the marks' contrast would not stand six standard errors clear.
        hint = (np.abs(d) > 0.25 * reach.max()) & (np.abs(d) > 3.0 * se)
        power = 0.5 * reach.max() / np.median(se[reach > 0.5 * reach.max()])
        if hint.sum() >= 2 or power < 6.0:
            tested = min(tested, M)
        break
    reach = con[:, (kk % M) == r].mean(axis=1)
    far = int(np.argmax(reach))
    beyond = reach[far:] if far >= (r0 + r1) / 2 else reach[far::-1]
    if not (beyond < 0.3 * reach[far]).any():
        tested = min(tested, M)
    return seen, tested


def _polarity(prof: np.ndarray, T0: float) -> float:
    """+1 where the ticks are peaks of the high-passed profile, -1 where they are troughs (narrow
    ticks make a skewed profile: dark ticks on a light rule give a long tail below).

    The values are clipped at 4 robust standard deviations first: the steps to the ground beyond
    the rule's ends are far stronger than the marks and would otherwise decide the sign.
    """
    hp = _highpass(np.asarray(prof, np.float64), T0)
    lim = 4.0 * 1.4826 * float(np.median(np.abs(hp - np.median(hp)))) + 1e-12
    return -1.0 if np.mean(np.clip(hp, -lim, lim) ** 3) < 0 else 1.0


def _strip(R: np.ndarray, t: np.ndarray, r0: int, r1: int, s: np.ndarray, T0: float, origin: np.ndarray,
           d: np.ndarray, n: np.ndarray) -> np.ndarray:
    """The ruler's strip in the image: the rows round the band with the rule's own shade."""
    i0, i1 = int(max(0, s.min() - 2 * T0)), int(min(R.shape[1], s.max() + 2 * T0))
    med = np.median(R[:, i0:i1], axis=1)
    inside = float(np.median(med[r0:r1 + 1]))
    outside = float(np.median(np.concatenate([med[:2], med[-2:]])))
    if abs(inside - outside) > 0.05:
        like = np.abs(med - inside) < 0.5 * abs(inside - outside)
        a = b = (r0 + r1) // 2
        while a > 0 and like[a - 1]:
            a -= 1
        while b < len(like) - 1 and like[b + 1]:
            b += 1
    else:
        # A rule of the ground's own shade: no edge to find, and nothing to take for a member;
        # the graduation and its longer marks are what must be kept out.
        w = r1 - r0 + 1
        a, b = max(0, r0 - 3 * w), min(len(med) - 1, r1 + 3 * w)
    ext = 0.06 * (s.max() - s.min()) + 3 * T0
    s0, s1 = s.min() - ext, s.max() + ext
    ta, tb = t[a] - 3.0, t[b] + 3.0
    corners = np.array([[s0, ta], [s1, ta], [s1, tb], [s0, tb]])
    return origin + corners[:, :1] * d + corners[:, 1:] * n
