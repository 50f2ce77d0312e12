"""Exact section properties of a polygonal :class:`~tracer.section.geometry.Section`.

Area, first and second moments come from Green's theorem over the oriented rings: for a
closed polygon the integrals are exact sums over its edges [1]_, [2]_. Holes are clockwise
rings, so they subtract themselves. The plastic moduli are found with the equal-area axis solved
exactly from the piecewise-quadratic area function, then the first moments of the two halves by
clipping the rings at that axis.

References
----------
.. [1] C. Steger, "On the calculation of arbitrary moments of polygons," Technische Universitaet
       Muenchen, Tech. Rep. FGBV-96-05, 1996.
.. [2] W. D. Pilkey, *Analysis and Design of Elastic Beams: Computational Methods*.
       New York: Wiley, 2002, ch. 1. doi: 10.1002/9780470172667.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from .geometry import Section

__all__ = [
    "Moments",
    "Properties",
    "PROPERTY_KEYS",
    "PROPERTY_NAMES",
    "area_moments",
    "ring_moments",
    "plastic_moduli",
    "section_properties",
]

#: Property keys in the order of DESIGN.md (those this module computes).
PROPERTY_KEYS: tuple[str, ...] = (
    "A", "perimeter", "cx", "cy", "Ix", "Iy", "Ixy", "I1", "I2", "theta", "Ip",
    "rx", "ry", "r1", "r2", "Sx_top", "Sx_bot", "Sy_left", "Sy_right", "S1", "S2", "Zx", "Zy",
)

#: A short description of every property key, for tables and reports.
PROPERTY_NAMES: dict[str, str] = {
    "A": "area",
    "perimeter": "perimeter, holes included",
    "cx": "centroid x",
    "cy": "centroid y",
    "Ix": "second moment about the centroidal x axis",
    "Iy": "second moment about the centroidal y axis",
    "Ixy": "product moment, centroidal",
    "I1": "major principal second moment",
    "I2": "minor principal second moment",
    "theta": "angle from +x to the major principal axis",
    "Ip": "polar second moment, Ix + Iy",
    "rx": "radius of gyration about x",
    "ry": "radius of gyration about y",
    "r1": "radius of gyration about the major axis",
    "r2": "radius of gyration about the minor axis",
    "Sx_top": "elastic modulus about x, top fibre",
    "Sx_bot": "elastic modulus about x, bottom fibre",
    "Sy_left": "elastic modulus about y, left fibre",
    "Sy_right": "elastic modulus about y, right fibre",
    "S1": "elastic modulus about the major axis",
    "S2": "elastic modulus about the minor axis",
    "Zx": "plastic modulus about x",
    "Zy": "plastic modulus about y",
    "J": "St Venant torsion constant",
    "Cw": "warping constant",
    "xs": "shear centre x",
    "ys": "shear centre y",
}

# Vertices per block of the moment kernel: small enough that a block's work arrays stay in
# the L2 cache, large enough that the Python overhead per block is negligible.
_BLOCK = 8192
# Second moments below this share of Ix + Iy count as equal / zero for the principal angle.
_ISOTROPIC = 1e-12


@dataclass(frozen=True)
class Moments:
    """Area moments of a section: the six exact polygon integrals.

    Attributes
    ----------
    A : float
        Area [mm^2].
    cx, cy : float
        Centroid [mm].
    Ix, Iy, Ixy : float
        Second moments about centroidal axes parallel to x and y [mm^4]: ``Ix = ∫ y'^2 dA``,
        ``Iy = ∫ x'^2 dA``, ``Ixy = ∫ x' y' dA`` with x', y' measured from the centroid.
    """

    A: float
    cx: float
    cy: float
    Ix: float
    Iy: float
    Ixy: float


@dataclass(frozen=True)
class Properties:
    """All section properties of one section, lengths in mm (DESIGN.md keys).

    theta is in degrees, from +x to the axis of I1, counter-clockwise, in (-90, 90].
    S1 and S2 are the elastic moduli about the principal axes to the extreme fibre in that
    frame; Zx and Zy the plastic moduli about the equal-area axes parallel to x and y.
    ``yp`` and ``xp`` locate those equal-area axes [mm].
    """

    A: float
    perimeter: float
    cx: float
    cy: float
    Ix: float
    Iy: float
    Ixy: float
    I1: float
    I2: float
    theta: float
    Ip: float
    rx: float
    ry: float
    r1: float
    r2: float
    Sx_top: float
    Sx_bot: float
    Sy_left: float
    Sy_right: float
    S1: float
    S2: float
    Zx: float
    Zy: float
    yp: float
    xp: float
    principal_unique: bool

    def values(self) -> dict[str, float]:
        """The properties under their DESIGN.md keys, in the order of :data:`PROPERTY_KEYS`."""
        d = asdict(self)
        return {k: d[k] for k in PROPERTY_KEYS}


def section_properties(section: Section) -> Properties:
    """Compute every section property of `section`.

    Parameters
    ----------
    section : Section
        The geometry [mm].

    Returns
    -------
    Properties
        Lengths in mm, theta in degrees.

    Examples
    --------
    A 100 x 200 rectangle: A = b h, Ix = b h^3 / 12, Zx = b h^2 / 4.

    >>> from tracer.section.shapes import rectangle
    >>> p = section_properties(rectangle(b=100, h=200))
    >>> round(p.A, 6), round(p.Ix, 3), abs(p.Ix / (100 * 200**3 / 12) - 1) < 1e-14
    (20000.0, 66666666.667, True)
    >>> round(p.Zx, 6), round(p.Sx_top, 6)
    (1000000.0, 666666.666667)
    """
    m = area_moments(section)
    if abs(m.Ixy) <= _ISOTROPIC * (m.Ix + m.Iy):   # rounding noise of a symmetric section
        m = Moments(m.A, m.cx, m.cy, m.Ix, m.Iy, 0.0)
    x, y, starts = section.packed()
    x_min, y_min, x_max, y_max = section.bounds

    half = 0.5 * (m.Ix + m.Iy)
    radius = math.hypot(0.5 * (m.Ix - m.Iy), m.Ixy)
    I1, I2 = half + radius, half - radius
    unique = radius > _ISOTROPIC * (m.Ix + m.Iy)
    # I(phi) = Ix cos^2 phi + Iy sin^2 phi - 2 Ixy sin phi cos phi is largest at this phi.
    theta = 0.5 * math.degrees(math.atan2(-2.0 * m.Ixy, m.Ix - m.Iy)) if unique else 0.0
    if theta <= -90.0:
        theta += 180.0
    theta += 0.0  # no negative zero

    # Extreme fibres in the principal frame: u along axis 1, v across it.
    t = math.radians(theta)
    dx, dy = x - m.cx, y - m.cy
    u = dx * math.cos(t) + dy * math.sin(t)
    v = -dx * math.sin(t) + dy * math.cos(t)
    v_max = float(np.max(np.abs(v)))
    u_max = float(np.max(np.abs(u)))

    Zx, yp = _plastic(x, y, starts, m.A)
    # A quarter turn, (x, y) -> (y, -x), keeps the rings' orientation and puts x upright.
    Zy, minus_xp = _plastic(y, -x, starts, m.A)
    xp = -minus_xp

    return Properties(
        A=m.A,
        perimeter=_perimeter(x, y, starts),
        cx=m.cx, cy=m.cy, Ix=m.Ix, Iy=m.Iy, Ixy=m.Ixy,
        I1=I1, I2=I2, theta=theta, Ip=m.Ix + m.Iy,
        rx=math.sqrt(m.Ix / m.A), ry=math.sqrt(m.Iy / m.A),
        r1=math.sqrt(I1 / m.A), r2=math.sqrt(max(I2, 0.0) / m.A),
        Sx_top=m.Ix / (y_max - m.cy), Sx_bot=m.Ix / (m.cy - y_min),
        Sy_left=m.Iy / (m.cx - x_min), Sy_right=m.Iy / (x_max - m.cx),
        S1=I1 / v_max, S2=I2 / u_max,
        Zx=Zx, Zy=Zy, yp=yp, xp=xp,
        principal_unique=unique,
    )


def area_moments(section: Section) -> Moments:
    """The six exact polygon integrals A, cx, cy, Ix, Iy, Ixy of `section`.

    Notes
    -----
    For an edge from (x0, y0) to (x1, y1) with cross product c = x0 y1 - x1 y0, Green's
    theorem gives the exact integrals as sums over the edges ([1]_, eqs. for moments of order
    0 to 2):

    - A   = 1/2  Σ c
    - ∫x  = 1/6  Σ c (x0 + x1)
    - ∫x² = 1/12 Σ c (x0² + x0 x1 + x1²) = 1/12 Σ c ((x0 + x1)² - x0 x1)
    - ∫xy = 1/24 Σ c (x0 y1 + 2 x0 y0 + 2 x1 y1 + x1 y0) = 1/24 Σ c ((x0+x1)(y0+y1) + x0 y0 + x1 y1)

    Coordinates are taken relative to a point of the section, and the second moments moved to
    the centroid by the parallel-axis theorem; that keeps full precision far from the origin.
    The sums run over blocks of vertices so that the work arrays stay in cache.

    Examples
    --------
    >>> from tracer.section.geometry import Section
    >>> m = area_moments(Section([(0, 0), (3, 0), (0, 3)]))
    >>> m.A, m.cx, m.cy
    (4.5, 1.0, 1.0)
    """
    x, y, starts = section.packed()
    return _moments_from_sums(*ring_moments(x, y, starts))


def ring_moments(x: np.ndarray, y: np.ndarray, starts: np.ndarray) -> tuple[np.ndarray, float, float]:
    """Raw Green's-theorem sums over closed rings laid end to end.

    Parameters
    ----------
    x, y : ndarray
        Coordinates [mm] of closed rings (each repeats its first point), one after another.
    starts : ndarray of int
        Start index of each ring, with ``len(x)`` appended (see :meth:`Section.packed`).

    Returns
    -------
    sums : ndarray, shape (6,)
        ``[A, ∫y', ∫x', ∫y'^2, ∫x'^2, ∫x'y']`` over the signed rings, x' = x - x_ref,
        y' = y - y_ref [mm^2, mm^3, mm^3, mm^4, mm^4, mm^4].
    x_ref, y_ref : float
        The reference point [mm].
    """
    n_edges = len(x) - 1
    x_ref, y_ref = float(x[0]), float(y[0])
    bridges = np.asarray(starts[1:-1]) - 1  # edge i runs from point i to i + 1
    block = min(_BLOCK, max(n_edges, 1))
    bx, by = np.empty(block + 1), np.empty(block + 1)
    c, sx, sy, w = np.empty(block), np.empty(block), np.empty(block), np.empty(block)
    q = np.empty(block + 1)
    acc = np.zeros(6)
    for s in range(0, n_edges, block):
        k = min(block, n_edges - s)
        xs, ys = bx[:k + 1], by[:k + 1]
        np.subtract(x[s:s + k + 1], x_ref, out=xs)
        np.subtract(y[s:s + k + 1], y_ref, out=ys)
        x0, x1, y0, y1 = xs[:-1], xs[1:], ys[:-1], ys[1:]
        cc, ww, ssx, ssy = c[:k], w[:k], sx[:k], sy[:k]
        np.multiply(x0, y1, out=cc)
        np.multiply(x1, y0, out=ww)
        cc -= ww
        inside = bridges[(bridges >= s) & (bridges < s + k)]
        if inside.size:
            cc[inside - s] = 0.0
        np.add(x0, x1, out=ssx)
        np.add(y0, y1, out=ssy)
        s_1 = cc.sum()
        s_y, s_x = np.dot(cc, ssy), np.dot(cc, ssx)
        np.multiply(cc, ssx, out=ww)
        s_xx, s_xy = np.dot(ww, ssx), np.dot(ww, ssy)    # Σ c sx², Σ c sx sy
        np.multiply(cc, ssy, out=ww)
        s_yy = np.dot(ww, ssy)                           # Σ c sy²
        np.multiply(x0, x1, out=ww)
        s_xx -= np.dot(cc, ww)
        np.multiply(y0, y1, out=ww)
        s_yy -= np.dot(cc, ww)
        qq = q[:k + 1]
        np.multiply(xs, ys, out=qq)
        np.add(qq[:-1], qq[1:], out=ww)
        s_xy += np.dot(cc, ww)
        acc += (s_1, s_y, s_x, s_yy, s_xx, s_xy)
    acc /= (2.0, 6.0, 6.0, 12.0, 12.0, 24.0)
    return acc, x_ref, y_ref


def plastic_moduli(section: Section) -> tuple[float, float]:
    """Plastic moduli ``(Zx, Zy)`` [mm^3] about the equal-area axes parallel to x and y.

    Notes
    -----
    The equal-area axis y = yp splits the area in half. The width w(y) of a polygon is
    piecewise linear between the vertex heights, so the area below a height is piecewise
    quadratic; yp is the root of that quadratic in the one interval where the area crosses
    A / 2. The rings are then clipped at yp and ``Zx = Q_above + Q_below``, the first moments of
    the two halves about the axis.
    """
    p = section_properties(section)
    return p.Zx, p.Zy


# ---------------------------------------------------------------------------------------------
def _moments_from_sums(sums: np.ndarray, x_ref: float, y_ref: float) -> Moments:
    A, s_y, s_x, s_yy, s_xx, s_xy = (float(v) for v in sums)
    dx, dy = s_x / A, s_y / A
    return Moments(
        A=A,
        cx=x_ref + dx,
        cy=y_ref + dy,
        Ix=s_yy - A * dy * dy,     # parallel-axis theorem
        Iy=s_xx - A * dx * dx,
        Ixy=s_xy - A * dx * dy,
    )


def _perimeter(x: np.ndarray, y: np.ndarray, starts: np.ndarray) -> float:
    seg = np.hypot(np.diff(x), np.diff(y))
    seg[np.asarray(starts[1:-1]) - 1] = 0.0
    return float(seg.sum())


def _plastic(x: np.ndarray, y: np.ndarray, starts: np.ndarray, area: float) -> tuple[float, float]:
    """Plastic modulus about the equal-area axis parallel to x, and that axis's height."""
    yp = _equal_area_height(x, y, starts, area)
    above = _clip_above(x, y, starts, yp)
    below = _clip_above(-x, -y, starts, -yp)   # a half-turn maps "below" onto "above"
    q_above = _first_moment_about(above, yp)
    q_below = _first_moment_about(below, -yp)
    return q_above + q_below, yp


def _equal_area_height(x: np.ndarray, y: np.ndarray, starts: np.ndarray, area: float) -> float:
    """Height yp with half of the area below it, exactly.

    Between two consecutive vertex heights the area below a level t is a quadratic in t, so
    the level is bracketed between vertex heights by bisection and then found as the root of
    that quadratic, fitted exactly through three evaluations.
    """
    valid = np.ones(len(x) - 1, dtype=bool)
    valid[np.asarray(starts[1:-1]) - 1] = False
    y_ref = float(y[0])                     # small numbers keep the sums precise
    y0, y1 = y[:-1][valid] - y_ref, y[1:][valid] - y_ref
    dx = (x[1:] - x[:-1])[valid]
    edges = (dx, np.minimum(y0, y1), np.maximum(y0, y1), 0.5 * (y0 + y1))
    levels = np.unique(np.concatenate([y0, y1]))
    target = 0.5 * area
    lo, hi = 0, len(levels) - 1                 # area_below(levels[lo]) <= target <= ...[hi]
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if _area_below(edges, levels[mid]) < target:
            lo = mid
        else:
            hi = mid
    t0, t1 = levels[lo], levels[hi]
    a0, a1 = _area_below(edges, t0), _area_below(edges, t1)
    am = _area_below(edges, 0.5 * (t0 + t1))
    h = t1 - t0
    # Quadratic through (0, a0), (h/2, am), (h, a1) in tau = t - t0: a0 + b tau + c tau^2.
    c = 2.0 * (a1 - 2.0 * am + a0) / (h * h) if h > 0 else 0.0
    b = (a1 - a0) / h - c * h if h > 0 else 0.0
    rest = target - a0
    disc = max(b * b + 4.0 * c * rest, 0.0)
    denom = b + math.sqrt(disc)                 # stable form of the root of c tau^2 + b tau = rest
    tau = 2.0 * rest / denom if denom > 0 else 0.0
    return float(y_ref + t0 + min(max(tau, 0.0), h))


def _area_below(edges: tuple[np.ndarray, ...], t: float) -> float:
    """Area of the material below the level y = t, from A = -∮ (y - t) dx over the rings.

    An edge wholly below t gives dx (t - y_mid); an edge crossing t gives the share of it below,
    dx g (t - y_low) / 2 with g = (t - y_low) / |dy| in [0, 1]; along y = t the integrand is zero.
    """
    dx, y_low, y_high, y_mid = edges
    below = y_high <= t
    total = float(np.dot(dx[below], t - y_mid[below]))
    cross = (y_low < t) & ~below
    if np.any(cross):
        d = t - y_low[cross]
        g = d / (y_high[cross] - y_low[cross])
        total += 0.5 * float(np.dot(dx[cross] * g, d))
    return total


def _clip_above(x: np.ndarray, y: np.ndarray, starts: np.ndarray, level: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Clip every ring to the half plane y >= level (Sutherland-Hodgman, vectorised).

    For one clipping line the output of a non-convex ring may run back and forth along the
    line, but those runs enclose no area, so the Green's-theorem integrals of the clipped rings
    are exact.
    """
    out_x, out_y, out_starts = [], [], [0]
    for k in range(len(starts) - 1):
        rx, ry = x[starts[k]:starts[k + 1]], y[starts[k]:starts[k + 1]]
        px, py, qx, qy = rx[:-1], ry[:-1], rx[1:], ry[1:]
        p_in, q_in = py >= level, qy >= level
        cross = p_in != q_in
        with np.errstate(divide="ignore", invalid="ignore"):
            f = np.where(cross, (level - py) / (qy - py), 0.0)
        ix = px + f * (qx - px)
        # Each edge emits up to two points: its start (if inside), then the crossing (if any).
        pts_x = np.stack([px, ix], axis=1)
        pts_y = np.stack([py, np.full_like(py, level)], axis=1)
        emit = np.stack([p_in, cross], axis=1)
        cx, cy = pts_x[emit], pts_y[emit]
        if len(cx) < 3:
            continue
        out_x.append(np.append(cx, cx[0]))
        out_y.append(np.append(cy, cy[0]))
        out_starts.append(out_starts[-1] + len(cx) + 1)
    if not out_x:
        return np.zeros(0), np.zeros(0), np.zeros(1, dtype=int)
    return np.concatenate(out_x), np.concatenate(out_y), np.asarray(out_starts)


def _first_moment_about(rings: tuple[np.ndarray, np.ndarray, np.ndarray], level: float) -> float:
    """∫ (y - level) dA over clipped rings [mm^3]."""
    x, y, starts = rings
    if len(x) == 0:
        return 0.0
    sums, _, y_ref = ring_moments(x, y, starts)
    return float(sums[1] + sums[0] * (y_ref - level))
