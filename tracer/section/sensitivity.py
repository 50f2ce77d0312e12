"""Exact sensitivities of the section properties to every vertex coordinate.

For the polygon moments the derivatives are closed forms of the edge formulas of
:func:`tracer.section.properties.area_moments`; the derived properties follow by the chain rule. These
are the sensitivity coefficients of the law of propagation of uncertainty (JCGM 100:2008, 5.1.3)
used by :mod:`tracer.uncertainty`.

Notes
-----
Every moment is a sum over edges of ``c · q(x0, y0, x1, y1)`` with ``c = x0 y1 - x1 y0`` and q a
polynomial, so the derivative with respect to the start point of an edge is, e.g.,
``∂/∂x0 = y1 q + c ∂q/∂x0`` and with respect to its end point ``∂/∂x1 = -y0 q + c ∂q/∂x1``; a
vertex collects the start-point terms of the edge leaving it and the end-point terms of the edge
arriving at it.

The plastic moduli are ``Zx = ∫ |y - yp| dA = 2 F(yp) + ∫ (y - yp) dA`` with
``F(t) = ∫_{y<t} (t - y) dA``. Since dZx/dyp = A_below - A_above = 0 at the equal-area axis,
yp may be held fixed while differentiating. F is the boundary integral ``∮ (t - y)^2 / 2 dx``
over the parts of the rings below t (Green's theorem; along y = t the integrand is zero).

The extreme-fibre distances are maxima over vertices; where several vertices share the extreme
(a flat face) their derivatives are averaged, which is the face's mean position.

References
----------
.. [1] JCGM 100:2008, *Evaluation of measurement data - Guide to the expression of uncertainty
       in measurement*, Sec. 5.1. doi: 10.59161/JCGM100-2008E.
"""

from __future__ import annotations

import math

import numpy as np

from .geometry import Section
from .properties import PROPERTY_KEYS, Properties, section_properties

__all__ = ["property_gradients", "ring_neighbours"]

# Vertices within this share of the extreme distance count as sharing it.
_TIE = 1e-9


def property_gradients(section: Section, props: Properties | None = None) -> np.ndarray:
    """d(property)/d(vertex coordinate) for every property of :data:`PROPERTY_KEYS`.

    Parameters
    ----------
    section : Section
        The geometry [mm].
    props : Properties, optional
        Its properties, if already computed.

    Returns
    -------
    ndarray, shape (K, 2, N)
        ``g[k, 0, i]`` = ∂P_k/∂x_i and ``g[k, 1, i]`` = ∂P_k/∂y_i for the vertices of
        :meth:`Section.vertices`, in the units of P_k per mm (theta: degrees per mm). A row is NaN
        where the property is not differentiable (I1, I2, theta when I1 = I2).
    """
    p = props if props is not None else section_properties(section)
    xy, starts = section.vertices()
    nxt, prv = ring_neighbours(starts)
    xr, yr = float(xy[0, 0]), float(xy[0, 1])
    x, y = xy[:, 0] - xr, xy[:, 1] - yr
    x1, y1 = x[nxt], y[nxt]
    c = x * y1 - x1 * y

    def moment(q, qx0, qy0, qx1, qy1) -> np.ndarray:
        # Start-point terms of each edge, plus the end-point terms of the edge arriving.
        d_x0, d_y0 = y1 * q + c * qx0, -x1 * q + c * qy0
        d_x1, d_y1 = -y * q + c * qx1, x * q + c * qy1
        return np.stack([d_x0 + d_x1[prv], d_y0 + d_y1[prv]])

    zero = np.zeros_like(x)
    g_A = moment(np.full_like(x, 0.5), zero, zero, zero, zero)
    g_Qx = moment((x + x1) / 6, np.full_like(x, 1 / 6), zero, np.full_like(x, 1 / 6), zero)
    g_Qy = moment((y + y1) / 6, zero, np.full_like(x, 1 / 6), zero, np.full_like(x, 1 / 6))
    g_Sxx = moment((x * x + x * x1 + x1 * x1) / 12, (2 * x + x1) / 12, zero, (x + 2 * x1) / 12, zero)
    g_Syy = moment((y * y + y * y1 + y1 * y1) / 12, zero, (2 * y + y1) / 12, zero, (y + 2 * y1) / 12)
    g_Sxy = moment((x * y1 + 2 * x * y + 2 * x1 * y1 + x1 * y) / 24,
                   (y1 + 2 * y) / 24, (2 * x + x1) / 24, (2 * y1 + y) / 24, (x + 2 * x1) / 24)

    A = p.A
    cxs, cys = p.cx - xr, p.cy - yr
    g = {}
    g["A"] = g_A
    g["cx"] = (g_Qx - cxs * g_A) / A
    g["cy"] = (g_Qy - cys * g_A) / A
    g["Ix"] = g_Syy - 2 * cys * g_Qy + cys**2 * g_A
    g["Iy"] = g_Sxx - 2 * cxs * g_Qx + cxs**2 * g_A
    g["Ixy"] = g_Sxy - cys * g_Qx - cxs * g_Qy + cxs * cys * g_A
    Ixy = p.Ixy
    g["Ip"] = g["Ix"] + g["Iy"]

    # Perimeter: each edge's length pulls its two ends along it.
    ex, ey = x1 - x, y1 - y
    length = np.hypot(ex, ey)
    ux, uy = ex / length, ey / length
    g["perimeter"] = np.stack([-ux + ux[prv], -uy + uy[prv]])

    # Principal moments and angle (chain rule); undefined where I1 = I2.
    half_diff = 0.5 * (p.Ix - p.Iy)
    R = math.hypot(half_diff, Ixy)
    g_h = 0.5 * (g["Ix"] + g["Iy"])
    if p.principal_unique:
        g_R = (half_diff * 0.5 * (g["Ix"] - g["Iy"]) + Ixy * g["Ixy"]) / R
        g_theta_rad = 0.5 * ((p.Ix - p.Iy) * (-2 * g["Ixy"]) - (-2 * Ixy) * (g["Ix"] - g["Iy"])) / (4 * R * R)
    else:
        g_R = np.full_like(g_h, np.nan)
        g_theta_rad = np.full_like(g_h, np.nan)
    g["I1"] = g_h + g_R
    g["I2"] = g_h - g_R
    g["theta"] = np.degrees(g_theta_rad)

    for key, inertia in (("rx", "Ix"), ("ry", "Iy"), ("r1", "I1"), ("r2", "I2")):
        r = getattr(p, key)
        g[key] = (g[inertia] - r * r * g_A) / (2 * r * A) if r > 0 else np.full_like(g_h, np.nan)

    # Elastic moduli to the extreme fibres.
    ax, ay = xy[:, 0], xy[:, 1]
    top, bot = _extreme(ay, max), _extreme(ay, min)
    left, right = _extreme(ax, min), _extreme(ax, max)
    c_top, c_bot = ay.max() - p.cy, p.cy - ay.min()
    c_left, c_right = p.cx - ax.min(), ax.max() - p.cx
    g["Sx_top"] = g["Ix"] / c_top - p.Ix / c_top**2 * (_unit(top, 1, len(x)) - g["cy"])
    g["Sx_bot"] = g["Ix"] / c_bot - p.Ix / c_bot**2 * (g["cy"] - _unit(bot, 1, len(x)))
    g["Sy_left"] = g["Iy"] / c_left - p.Iy / c_left**2 * (g["cx"] - _unit(left, 0, len(x)))
    g["Sy_right"] = g["Iy"] / c_right - p.Iy / c_right**2 * (_unit(right, 0, len(x)) - g["cx"])

    t = math.radians(p.theta)
    cs, sn = math.cos(t), math.sin(t)
    dx, dy = ax - p.cx, ay - p.cy
    u = dx * cs + dy * sn          # along the major axis
    v = -dx * sn + dy * cs         # across it
    g["S1"] = _modulus_about(p.I1, g["I1"], v, lambda k: (
        np.sign(v[k])[:, None, None] * (_units(k, len(x), -sn, cs) + (sn * g["cx"] - cs * g["cy"])[None]
                                        - u[k][:, None, None] * g_theta_rad[None])))
    g["S2"] = _modulus_about(p.I2, g["I2"], u, lambda k: (
        np.sign(u[k])[:, None, None] * (_units(k, len(x), cs, sn) + (-cs * g["cx"] - sn * g["cy"])[None]
                                        + v[k][:, None, None] * g_theta_rad[None])))

    # Plastic moduli, the equal-area axes held fixed (stationary there).
    g["Zx"] = _plastic_gradient(x, y, nxt, prv, p.yp - yr, g_A, g_Qy)
    # Zy in the quarter-turned frame x' = y, y' = -x, where a gradient [gx, gy] reads [gy, -gx]
    # and ∫ y' dA = -∫ x dA; then turned back.
    turn = lambda gr: np.stack([gr[1], -gr[0]])  # noqa: E731
    gz = _plastic_gradient(y, -x, nxt, prv, -(p.xp - xr), turn(g_A), -turn(g_Qx))
    g["Zy"] = np.stack([-gz[1], gz[0]])
    return np.stack([g[k] for k in PROPERTY_KEYS])


def ring_neighbours(starts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Index of the next and previous vertex of every vertex, within its own ring."""
    n = int(starts[-1])
    idx = np.arange(n)
    nxt, prv = idx + 1, idx - 1
    first, last = np.asarray(starts[:-1]), np.asarray(starts[1:]) - 1
    nxt[last] = first
    prv[first] = last
    return nxt, prv


# ---------------------------------------------------------------------------------------------
def _extreme(values: np.ndarray, pick) -> np.ndarray:
    target = pick(values)
    span = float(np.ptp(values)) or 1.0
    return np.flatnonzero(np.abs(values - target) <= _TIE * span)


def _unit(indices: np.ndarray, axis: int, n: int) -> np.ndarray:
    """Gradient of the mean coordinate `axis` of the vertices `indices`."""
    out = np.zeros((2, n))
    out[axis, indices] = 1.0 / len(indices)
    return out


def _units(indices: np.ndarray, n: int, wx: float, wy: float) -> np.ndarray:
    """For each index k, the gradient of wx·x_k + wy·y_k, shape (len(indices), 2, n)."""
    out = np.zeros((len(indices), 2, n))
    out[np.arange(len(indices)), 0, indices] = wx
    out[np.arange(len(indices)), 1, indices] = wy
    return out


def _modulus_about(inertia: float, g_inertia: np.ndarray, dist: np.ndarray, g_dist_of) -> np.ndarray:
    """Gradient of I / max|dist|, the tied extreme vertices averaged."""
    a = np.abs(dist)
    k = _extreme(a, max)
    c = a.max()
    g_c = g_dist_of(k).mean(axis=0)
    return g_inertia / c - inertia / c**2 * g_c


def _plastic_gradient(x: np.ndarray, y: np.ndarray, nxt: np.ndarray, prv: np.ndarray, t: float,
                      g_A: np.ndarray, g_Qy: np.ndarray) -> np.ndarray:
    """Gradient of 2 F(t) + ∫ (y - t) dA with t fixed, coordinates as given."""
    x1, y1 = x[nxt], y[nxt]
    dxe = x1 - x
    d0, d1 = t - y, t - y1
    lo, hi = np.minimum(y, y1), np.maximum(y, y1)
    below = hi <= t
    cross = (lo < t) & ~below
    gx0, gy0, gx1, gy1 = (np.zeros_like(x) for _ in range(4))
    # Edges wholly below t: f = dx (d0^2 + d0 d1 + d1^2) / 6.
    q = d0 * d0 + d0 * d1 + d1 * d1
    gx0[below] = -q[below] / 6
    gx1[below] = q[below] / 6
    gy0[below] = -dxe[below] * (2 * d0[below] + d1[below]) / 6
    gy1[below] = -dxe[below] * (d0[below] + 2 * d1[below]) / 6
    # Edges crossing t: f = dx d^3 / (6 dh), d = t - y_low, dh = y_high - y_low.
    if np.any(cross):
        d = (t - lo)[cross]
        dh = (hi - lo)[cross]
        dxc = dxe[cross]
        cube = d**3 / (6 * dh)
        gx0[cross] = -cube
        gx1[cross] = cube
        g_low = dxc / 6 * (-3 * d * d / dh + d**3 / dh**2)
        g_high = dxc / 6 * (-(d**3) / dh**2)
        start_low = (y < y1)[cross]
        gy0[cross] = np.where(start_low, g_low, g_high)
        gy1[cross] = np.where(start_low, g_high, g_low)
    g_F = np.stack([gx0 + gx1[prv], gy0 + gy1[prv]])
    return 2 * g_F + g_Qy - t * g_A
