"""Section properties of many perturbed copies of one section at once (Monte Carlo draws).

The copies share the rings and vertex count of a base :class:`~tracer.section.geometry.Section`; only
the vertex positions differ. Every property of :data:`~tracer.section.properties.PROPERTY_KEYS` is
computed for all copies with array operations over (copies, vertices), by the same exact
formulas as :mod:`tracer.section.properties`. The plastic moduli use ``Zx = 2 F(yp) + ∫ (y - yp) dA``
(see :mod:`tracer.section.sensitivity`), with yp found per copy by safeguarded Newton iterations on the
area below a level, whose derivative is the width there.
"""

from __future__ import annotations

import numpy as np

from ..section.geometry import Section
from ..section.properties import PROPERTY_KEYS, Properties

__all__ = ["ensemble_properties", "ENSEMBLE_MOMENTS"]

#: The six moments, in the order :func:`ensemble_properties` returns them with ``moments_only``.
ENSEMBLE_MOMENTS = ("A", "cx", "cy", "Ix", "Iy", "Ixy")

# Elements (copies x vertices) per block: keeps each work array (512 KiB) in the L2 cache.
_BLOCK_ELEMENTS = 65_536
_NEWTON_STEPS = 60


def ensemble_properties(section: Section, x: np.ndarray, y: np.ndarray, *, base: Properties,
                        moments_only: bool = False) -> np.ndarray:
    """Properties of copies of `section` whose vertices are moved to `x`, `y`.

    Parameters
    ----------
    section : Section
        The base geometry; fixes the rings (:meth:`Section.vertices` order).
    x, y : ndarray, shape (D, N)
        Vertex coordinates of D copies [mm].
    base : Properties
        Properties of `section`: starting points for the equal-area axes and the branch of theta.
    moments_only : bool
        Return only the six moments of :data:`ENSEMBLE_MOMENTS` (faster).

    Returns
    -------
    ndarray, shape (K, D)
        Rows in the order of :data:`PROPERTY_KEYS` (or :data:`ENSEMBLE_MOMENTS`).

    Notes
    -----
    The copies are processed a few at a time so that the work arrays stay in cache; each block
    lays its rings out closed and end to end, so that edges are contiguous slices.
    """
    _, starts = section.vertices()
    pack = np.concatenate([np.append(np.arange(a, b), a) for a, b in zip(starts[:-1], starts[1:])])
    bridges = np.cumsum([b - a + 1 for a, b in zip(starts[:-1], starts[1:])])[:-1] - 1
    xy0, _ = section.vertices()
    reference = (xy0[pack, 0], xy0[pack, 1])
    d = x.shape[0]
    step = max(1, min(d, _BLOCK_ELEMENTS // max(len(pack), 1)))
    keys = ENSEMBLE_MOMENTS if moments_only else PROPERTY_KEYS
    out = np.empty((len(keys), d))
    work = _Workspace(step, len(pack))
    for s in range(0, d, step):
        k = min(step, d - s)
        X, Y = work.X[:k], work.Y[:k]
        np.take(x[s:s + k], pack, axis=1, out=X)
        np.take(y[s:s + k], pack, axis=1, out=Y)
        out[:, s:s + k] = _block(X, Y, bridges, base, moments_only, reference, work, k)
    return out


class _Workspace:
    """Work arrays reused from block to block (fresh large arrays cost page faults)."""

    def __init__(self, rows: int, points: int) -> None:
        self.X, self.Y, self.xs, self.ys = (np.empty((rows, points)) for _ in range(4))
        self.c, self.sx, self.sy, self.w = (np.empty((rows, points - 1)) for _ in range(4))


def _block(X: np.ndarray, Y: np.ndarray, bridges: np.ndarray, base: Properties, moments_only: bool,
           reference: tuple[np.ndarray, np.ndarray], work: _Workspace, k: int) -> np.ndarray:
    xr, yr = X[:, :1], Y[:, :1]
    xs = np.subtract(X, xr, out=work.xs[:k])   # small numbers keep full precision
    ys = np.subtract(Y, yr, out=work.ys[:k])
    x, x1, y, y1 = xs[:, :-1], xs[:, 1:], ys[:, :-1], ys[:, 1:]
    c, sx, sy, w = work.c[:k], work.sx[:k], work.sy[:k], work.w[:k]
    np.multiply(x, y1, out=c)
    np.multiply(x1, y, out=w)
    c -= w
    c[:, bridges] = 0.0                         # the joins between rings are no edges
    np.add(x, x1, out=sx)
    np.add(y, y1, out=sy)
    A = c.sum(axis=1) / 2
    Qx = _rowdot(c, sx) / 6
    Qy = _rowdot(c, sy) / 6
    np.multiply(x, x1, out=w)
    Sxx = -_rowdot(c, w)
    np.multiply(y, y1, out=w)
    Syy = -_rowdot(c, w)
    np.multiply(c, sx, out=w)                   # c (x0 + x1)
    Sxx = (Sxx + _rowdot(w, sx)) / 12
    Sxy = _rowdot(w, sy)
    np.multiply(c, sy, out=w)
    Syy = (Syy + _rowdot(w, sy)) / 12
    np.multiply(x, y, out=w)                    # x0 y0 + x1 y1, in two steps
    Sxy += _rowdot(c, w)
    np.multiply(x1, y1, out=w)
    Sxy = (Sxy + _rowdot(c, w)) / 24
    dx, dy = Qx / A, Qy / A
    cx, cy = xr[:, 0] + dx, yr[:, 0] + dy
    Ix = Syy - A * dy * dy
    Iy = Sxx - A * dx * dx
    Ixy = Sxy - A * dx * dy
    if moments_only:
        return np.stack([A, cx, cy, Ix, Iy, Ixy])

    half = 0.5 * (Ix + Iy)
    R = np.hypot(0.5 * (Ix - Iy), Ixy)
    I1, I2 = half + R, half - R
    theta = 0.5 * np.degrees(np.arctan2(-2.0 * Ixy, Ix - Iy))
    # Keep each copy on the base section's branch of the angle (theta is defined modulo 180).
    theta = base.theta + (theta - base.theta + 90.0) % 180.0 - 90.0
    t = np.radians(theta)[:, None]
    ddx, ddy = X - cx[:, None], Y - cy[:, None]
    u_max = np.abs(ddx * np.cos(t) + ddy * np.sin(t)).max(axis=1)
    v_max = np.abs(-ddx * np.sin(t) + ddy * np.cos(t)).max(axis=1)
    dxe, dye = x1 - x, y1 - y
    dxe[:, bridges] = 0.0
    dye[:, bridges] = 0.0
    perimeter = np.hypot(dxe, dye).sum(axis=1)
    x_min, x_max = X.min(axis=1), X.max(axis=1)
    y_min, y_max = Y.min(axis=1), Y.max(axis=1)

    xb, yb = reference
    Zx = _plastic(dxe, y, y1, A, Qy, base.yp, yr[:, 0], Y, yb)
    # Quarter turn x' = y, y' = -x: the edge's dx' is dy, its heights are -x.
    Zy = _plastic(dye, -x, -x1, A, -Qx, -base.xp, -xr[:, 0], -X, -xb)

    with np.errstate(invalid="ignore"):
        values = {
            "A": A, "perimeter": perimeter, "cx": cx, "cy": cy, "Ix": Ix, "Iy": Iy, "Ixy": Ixy,
            "I1": I1, "I2": I2, "theta": theta, "Ip": Ix + Iy,
            "rx": np.sqrt(Ix / A), "ry": np.sqrt(Iy / A), "r1": np.sqrt(I1 / A), "r2": np.sqrt(np.maximum(I2, 0) / A),
            "Sx_top": Ix / (y_max - cy), "Sx_bot": Ix / (cy - y_min),
            "Sy_left": Iy / (cx - x_min), "Sy_right": Iy / (x_max - cx),
            "S1": I1 / v_max, "S2": I2 / u_max, "Zx": Zx, "Zy": Zy,
        }
    return np.stack([values[k] for k in PROPERTY_KEYS])


def _rowdot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.einsum("ij,ij->i", a, b)


def _plastic(dxe, y, y1, A, Qy, yp0, ref, H, Hb):
    """2 F(yp) + ∫ (y - yp) dA for every copy, with yp solved from A_below(yp) = A / 2.

    `dxe` is each edge's x extent (zero on the joins between rings), `y`, `y1` its end heights
    taken from each copy's reference height `ref`; `H` and `Hb` are the copies' and the base's
    absolute heights (closed rings), `yp0` the base's equal-area height.

    Edges that lie below (above) a band around yp0 in every copy add a term polynomial in the
    level (nothing); their sums are taken once, and Newton's iterations run on the band's edges
    only. A copy whose root falls outside the band is solved again over all edges.
    """
    moved = float(np.abs(H - Hb[None]).max())
    span = float(np.ptp(Hb))
    half = 4.0 * moved + 1e-9 * span                    # half-width of the band around yp0
    lo_b, hi_b = np.minimum(Hb[:-1], Hb[1:]), np.maximum(Hb[:-1], Hb[1:])
    below = hi_b + moved <= yp0 - half
    above = lo_b - moved >= yp0 + half
    band = ~(below | above)
    t0 = yp0 - ref
    db, yb0, yb1 = dxe[:, below], y[:, below], y1[:, below]
    s0 = db.sum(axis=1)
    s1 = np.einsum("ij,ij->i", db, yb0 + yb1)
    s2 = np.einsum("ij,ij->i", db, yb0 * yb0 + yb0 * yb1 + yb1 * yb1)
    t, z = _plastic_edges(dxe[:, band], y[:, band], y1[:, band], A, Qy, t0, (t0 - half, t0 + half),
                          fixed=(s0, s1, s2))
    outside = np.abs(t - t0) > half - moved
    if np.any(outside):
        yo, y1o = y[outside], y1[outside]
        bracket = (np.minimum(yo, y1o).min(axis=1), np.maximum(yo, y1o).max(axis=1))
        _, z[outside] = _plastic_edges(dxe[outside], yo, y1o, A[outside], Qy[outside], t0[outside], bracket)
    return z


def _plastic_edges(dxe, y, y1, A, Qy, t0, bracket, fixed=None):
    """Solve A_below(t) = A / 2 for t in `bracket` over the given edges, plus the `fixed` sums of
    the edges wholly below every level tried (Σ dx, Σ dx (y0 + y1), Σ dx (y0² + y0 y1 + y1²));
    return t and Z."""
    s0, s1, s2 = fixed if fixed is not None else (0.0, 0.0, 0.0)
    lo, hi = np.minimum(y, y1), np.maximum(y, y1)
    mid = 0.5 * (y + y1)
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_dh = np.where(hi > lo, 1.0 / (hi - lo), 0.0)
    target = 0.5 * A
    t = t0.copy()
    a_lo, a_hi = (np.array(b, dtype=float, copy=True) for b in bracket)
    for _ in range(_NEWTON_STEPS):
        tt = t[:, None]
        below = hi <= tt
        d = tt - lo
        cross = (d > 0) & ~below
        g = np.where(cross, d * inv_dh, 0.0)
        area = (np.where(below, dxe * (tt - mid), 0.0).sum(axis=1) + 0.5 * (dxe * g * np.where(cross, d, 0.0)).sum(axis=1)
                + t * s0 - 0.5 * s1)
        width = np.where(below, dxe, 0.0).sum(axis=1) + (dxe * g).sum(axis=1) + s0
        f = area - target
        done = np.abs(f) <= 1e-13 * np.abs(A)
        if done.all():
            break
        a_lo = np.where(f < 0, t, a_lo)
        a_hi = np.where(f > 0, t, a_hi)
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = t - f / width
        ok = (width > 0) & (newton > a_lo) & (newton < a_hi)
        t = np.where(done, t, np.where(ok, newton, 0.5 * (a_lo + a_hi)))
    tt = t[:, None]
    d0, d1 = tt - y, tt - y1
    below = hi <= tt
    d = tt - lo
    cross = (d > 0) & ~below
    F = (np.where(below, dxe * (d0 * d0 + d0 * d1 + d1 * d1), 0.0).sum(axis=1)
         + np.where(cross, dxe * d**3 * inv_dh, 0.0).sum(axis=1)
         + 3 * t * t * s0 - 3 * t * s1 + s2) / 6
    return t, 2 * F + Qy - t * A
