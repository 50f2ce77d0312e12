"""A ruler reading: what was read off a rule's graduation, and the scale it gives.

A reading holds the ticks' positions along the ruler's axis and the projective fit through them,

    s(k) = (a + b k) / (1 + c k),

the exact image of evenly spaced points on a line under any perspective [1]; its derivative is the
local period, so a ruler seen at an angle still gives the scale at the place it is used. Two
rulers lying square to each other in the face give a homography from their vanishing points
(:func:`two_ruler_homography`). Also the ruler's options (``--ruler``, ``--pitch``) and the
graduation tolerance of a rule's accuracy class [2]. :mod:`tracer.inputs.photo.ruler_find` finds a
ruler in view, :mod:`tracer.inputs.photo.ruler_read` reads its graduation.

References
----------
.. [1] R. Hartley and A. Zisserman, *Multiple View Geometry in Computer Vision*, 2nd ed.
       Cambridge University Press, 2004, sec. 2.5 (projective transformations of a line).
.. [2] Directive 2014/32/EU (Measuring Instruments), Annex VII (MI-008, material measures of
       length): maximum permissible error ±(a + b L) mm, class I a = 0.1, b = 0.1; class II
       a = 0.3, b = 0.2; class III a = 0.6, b = 0.4; L in metres rounded up (from memory).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace

import numpy as np

from ...errors import InputError, MeasurementError
from ...units import parse_length

__all__ = ["RulerReading", "parse_pitch", "parse_ruler", "ruler_tolerance", "vanishing_point", "two_ruler_homography",
           "MIN_TICKS", "RULER_CLASSES"]

#: Fewest graduation marks a reading accepts.
MIN_TICKS = 30
#: Maximum permissible error of a rule's graduation, (a, b) of ±(a + b L) mm, L in m [2].
RULER_CLASSES = {"I": (0.1, 0.1), "II": (0.3, 0.2), "III": (0.6, 0.4)}


@dataclass(frozen=True)
class RulerReading:
    """What was read off a ruler.

    Attributes
    ----------
    origin, direction, normal : ndarray (2,)
        The axis: image point of s = 0, unit vector along the graduation, unit vector across.
    s : ndarray (N,)
        The ticks' positions along the axis [px].
    k : ndarray (N,)
        Their numbers (0 for the first found).
    params : ndarray (3,)
        a, b, c of the projective fit s(k).
    cov : ndarray (3, 3)
        Their covariance (from the fit's residuals).
    residual_px : float
        RMS residual of the fit [px].
    band : (t0, t1)
        The rows across [px from the axis] that carry the graduation.
    strip : ndarray (4, 2)
        The ruler's strip in the image [px], never the member.
    long_every : int or None
        The first longer marks fall every this many ticks (None: not seen).
    longest_every : int or None
        The longest marks (centimetres, inches) fall every this many ticks.
    levels : tuple of int
        Every level of longer marks seen: each falls every this many ticks.
    levels_tested : int
        The longest spacing [ticks] at which a level could have been seen in the run of marks read
        (0: none); a level of longer marks beyond it would go unseen.
    located_every : int
        The marks located and fitted fall every this many numbered ticks: 1 where each mark was
        located; more where finer marks, seen between them but too blurred to locate one by one,
        were counted in, or where a coarser graduation was read (see `read_every`).
    read_every : int
        Each mark numbered after :meth:`renumbered` spans this many ticks of the finest
        graduation: 1 where the finest marks were seen; more where they were lost in blur and a
        coarser graduation was identified by its longer marks.
    """

    origin: np.ndarray
    direction: np.ndarray
    normal: np.ndarray
    s: np.ndarray
    k: np.ndarray
    params: np.ndarray
    cov: np.ndarray
    residual_px: float
    band: tuple[float, float]
    strip: np.ndarray
    long_every: int | None
    longest_every: int | None = None
    levels: tuple[int, ...] = ()
    levels_tested: int = 0
    located_every: int = 1
    read_every: int = 1

    @property
    def ticks_px(self) -> np.ndarray:
        """The ticks' positions in the image (on the graduation band's middle line) [px]."""
        t = 0.5 * (self.band[0] + self.band[1])
        return self.origin + np.outer(self.s, self.direction) + t * self.normal

    def along(self, px: np.ndarray) -> float:
        """Position of an image point projected on the axis [px along]."""
        return float((np.asarray(px, float) - self.origin) @ self.direction)

    def across(self, px: np.ndarray) -> float:
        """Distance of an image point from the axis [px]."""
        return float((np.asarray(px, float) - self.origin) @ self.normal)

    def period_at(self, s: float) -> tuple[float, float]:
        """The local period ds/dk [px per tick] at `s` along the axis, and its standard uncertainty."""
        def period(p: np.ndarray) -> float:
            a, b, c = p
            return (b - c * s) ** 2 / (b - a * c)

        T = period(self.params)
        g = np.empty(3)
        for i in range(3):
            d = np.zeros(3)
            d[i] = 1e-6 * max(1.0, abs(self.params[i])) if i < 2 else 1e-10
            g[i] = (period(self.params + d) - period(self.params - d)) / (2 * d[i])
        return T, float(math.sqrt(max(g @ self.cov @ g, 0.0)))

    def renumbered(self, m: int) -> "RulerReading":
        """The same reading with each tick numbered as `m` ticks of a finer graduation: the fit's
        parameters and covariance carried over exactly (k = k'/m in s(k)), so the period's
        relative uncertainty is the coarse fit's."""
        if m == 1:
            return self
        f = np.array([1.0, m, m])
        return replace(self, k=self.k * m, params=self.params / f, cov=self.cov / np.outer(f, f),
                       long_every=None if self.long_every is None else self.long_every * m,
                       longest_every=None if self.longest_every is None else self.longest_every * m,
                       levels=tuple(v * m for v in self.levels), levels_tested=self.levels_tested * m,
                       located_every=self.located_every * m,
                       read_every=self.read_every * m)

    @property
    def extent(self) -> tuple[float, float]:
        """The first and last tick found [px along]."""
        return float(self.s.min()), float(self.s.max())

    def record(self) -> dict:
        (s0, s1) = self.extent
        T0, _ = self.period_at(s0)
        T1, _ = self.period_at(s1)
        t = 0.5 * (self.band[0] + self.band[1])
        ends = self.origin + np.outer([s0, s1], self.direction) + t * self.normal   # along the marks
        return {"axis_px": ends.round(2).tolist(), "ticks_found": int(len(self.s)),
                "period_change_percent": 100.0 * (T1 / T0 - 1.0), "fit_residual_px_rms": self.residual_px,
                "long_marks_every": self.long_every, "longest_marks_every": self.longest_every,
                "mark_levels_every": list(self.levels), "located_every": self.located_every}


def parse_pitch(text: str) -> float:
    """``1mm``, ``0.5mm``, ``1/16in``, ``1/32in`` -> the graduation's pitch [mm]."""
    m = re.fullmatch(r"\s*(\d+)\s*/\s*(\d+)\s*([a-z]+)\s*", text or "")
    if m:
        num, den = int(m.group(1)), int(m.group(2))
        if den == 0:
            raise InputError(f"--pitch {text!r}: the fraction's denominator is zero")
        return parse_length(f"{num / den!r}{m.group(3)}", field="--pitch")
    return parse_length(text, field="--pitch")


def parse_ruler(text: str) -> str | np.ndarray:
    """``auto`` or ``X1,Y1,X2,Y2`` (a rough line along the ruler, pixels) -> "auto" or (2, 2)."""
    if (text or "").strip().lower() == "auto":
        return "auto"
    try:
        xy = [float(v) for v in text.split(",")]
        if len(xy) != 4:
            raise ValueError
    except (ValueError, AttributeError):
        raise InputError(f"--ruler {text!r}: write auto, or a rough line along the ruler as X1,Y1,X2,Y2 "
                         "(pixels, e.g. a click at each end)") from None
    pts = np.array(xy).reshape(2, 2)
    if np.hypot(*(pts[1] - pts[0])) < 50:
        raise InputError(f"--ruler {text!r}: the two ends are less than 50 px apart; click near the ruler's ends")
    return pts


def ruler_tolerance(pitch_mm: float, length_mm: float, cls: str) -> float:
    """Relative half-width of a class `cls` rule's graduation error over `length_mm` [2]."""
    if cls not in RULER_CLASSES:
        raise InputError(f"--ruler-class {cls!r}: use one of {', '.join(RULER_CLASSES)}")
    a, b = RULER_CLASSES[cls]
    metres = max(1, math.ceil(length_mm / 1000.0 - 1e-9))
    return (a + b * metres) / max(length_mm, pitch_mm)


def vanishing_point(reading: RulerReading, params: np.ndarray | None = None) -> np.ndarray:
    """The image of the ruler's point at infinity, homogeneous: from s(k) as k grows without end,
    (c·O + b·d, c) with O the graduation line's origin [1]."""
    a, b, c = reading.params if params is None else params
    t = 0.5 * (reading.band[0] + reading.band[1])
    O = reading.origin + t * reading.normal
    return np.array([c * O[0] + b * reading.direction[0], c * O[1] + b * reading.direction[1], c])


def two_ruler_homography(r1: RulerReading, r2: RulerReading, pitch: float, *, angle_deg: float = 90.0,
                         p1: np.ndarray | None = None, p2: np.ndarray | None = None) -> np.ndarray:
    """Pixels -> mm (y up) from two rulers lying in the face at `angle_deg` to each other.

    The two vanishing points give the vanishing line, which a projective map sends to infinity
    (affine rectification); there each ruler's marks are evenly spaced, and the two spacings and
    the angle fix the remaining affine map up to a turn (metric rectification) [1, sec. 2.7].
    `p1`, `p2` replace the rulers' fitted parameters (for Monte Carlo draws).
    """
    l = np.cross(vanishing_point(r1, p1), vanishing_point(r2, p2))
    if abs(l[2]) < 1e-12 * np.hypot(l[0], l[1]):
        raise MeasurementError("the two rulers' vanishing line passes through the image's origin; cannot rectify")
    l = l / l[2]
    Hp = np.array([[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [l[0], l[1], 1.0]])
    dirs, per_mm = [], []
    for r, p in ((r1, p1), (r2, p2)):
        a, b, c = r.params if p is None else p
        k0, k1 = float(r.k.min()), float(r.k.max())
        t = 0.5 * (r.band[0] + r.band[1])
        pts = np.array([r.origin + ((a + b * k) / (1 + c * k)) * r.direction + t * r.normal for k in (k0, k1)])
        q = np.column_stack([pts, np.ones(2)]) @ Hp.T
        q = q[:, :2] / q[:, 2:]
        v = q[1] - q[0]
        span = float(np.hypot(*v))
        dirs.append(v / span)
        per_mm.append(pitch * (k1 - k0) / span)             # mm per rectified px along the ruler
    (u1, u2), (m1, m2) = dirs, per_mm
    rows = np.array([[u1[0] ** 2, 2 * u1[0] * u1[1], u1[1] ** 2],
                     [u2[0] ** 2, 2 * u2[0] * u2[1], u2[1] ** 2],
                     [u1[0] * u2[0], u1[0] * u2[1] + u1[1] * u2[0], u1[1] * u2[1]]])
    rhs = np.array([m1**2, m2**2, m1 * m2 * math.cos(math.radians(angle_deg))])
    M00, M01, M11 = np.linalg.solve(rows, rhs)
    w, V = np.linalg.eigh(np.array([[M00, M01], [M01, M11]]))
    if w.min() <= 0:
        raise MeasurementError("the two rulers do not fit rulers at right angles on a plane; lay them square to "
                               "each other in the plane of the cut face")
    A = V @ np.diag(np.sqrt(w)) @ V.T                      # no turn: the image's own axes stay
    H = np.diag([1.0, -1.0, 1.0]) @ np.block([[A, np.zeros((2, 1))], [np.zeros((1, 2)), np.ones((1, 1))]]) @ Hp
    return H / H[2, 2]
