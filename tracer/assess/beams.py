"""Maximum moment and deflection of single-span beams under a uniform and a point load.

Three supports, each with the point load where it acts worst: ``simple`` (both ends pinned,
point load at midspan), ``cantilever`` (one end fixed, point load at the free tip) and
``fixed`` (both ends fixed, point load at midspan). For each, the uniform load's and the point
load's maxima of moment and of deflection fall at the same section (midspan, the support, the
tip, and for fixed ends the supports for moment), so superposing the two maxima is exact:

    M_max = a_w · w · L² + a_P · P · L
    δ_max = (b_w · w · L⁴ + b_P · P · L³) / (E · I)

Every function works on numpy arrays element by element (Monte Carlo draws of E·I).

References
----------
.. [1] W. C. Young, R. G. Budynas and A. M. Sadegh, *Roark's Formulas for Stress and Strain*,
       8th ed. New York: McGraw-Hill, 2012, Table 8.1 (case 1, concentrated load, and case 2,
       distributed load, with end conditions a cantilever, d both ends fixed, e both ends simply
       supported); case numbers from memory.
.. [2] J. M. Gere and B. J. Goodno, *Mechanics of Materials*, 8th ed. Stamford: Cengage,
       2013, appendix tables of deflections and slopes of cantilever and simple beams (from
       memory).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

__all__ = ["SUPPORTS", "BEAM_CASES", "max_moment", "max_deflection", "longest_span"]

#: Support conditions and where the point load acts.
SUPPORTS: dict[str, str] = {
    "simple": "simply supported, point load at midspan",
    "cantilever": "cantilever, point load at the free tip",
    "fixed": "both ends fixed, point load at midspan",
}

#: (a_w, a_P, b_w, b_P) of M_max = a_w w L² + a_P P L and δ_max = (b_w w L⁴ + b_P P L³)/(E I).
BEAM_CASES: dict[str, tuple[float, float, float, float]] = {
    "simple": (1 / 8, 1 / 4, 5 / 384, 1 / 48),          # [1] Table 8.1 cases 2e and 1e (a = L/2)
    "cantilever": (1 / 2, 1.0, 1 / 8, 1 / 3),          # [1] Table 8.1 cases 2a and 1a (a = 0)
    "fixed": (1 / 12, 1 / 8, 1 / 384, 1 / 192),        # [1] Table 8.1 cases 2d and 1d; M at the supports
}


def max_moment(support: str, *, span, udl=0.0, point=0.0):
    """Largest bending moment along the beam.

    Parameters
    ----------
    support : {"simple", "cantilever", "fixed"}
    span : float or ndarray
        Span L [mm].
    udl : float or ndarray
        Uniform load w over the whole span [N/mm] (self-weight included by the caller).
    point : float or ndarray
        Point load P [N].

    Returns
    -------
    float or ndarray
        M_max [N·mm].

    Examples
    --------
    >>> max_moment("simple", span=4000.0, udl=5.0)      # w L^2 / 8 = 5 * 4000^2 / 8
    10000000.0
    """
    a_w, a_p, _, _ = _case(support)
    return a_w * udl * span ** 2 + a_p * point * span


def max_deflection(support: str, *, span, EI, udl=0.0, point=0.0):
    """Largest deflection along the beam.

    Parameters
    ----------
    support : {"simple", "cantilever", "fixed"}
    span : float or ndarray
        Span L [mm].
    EI : float or ndarray
        Bending stiffness E·I [N·mm²].
    udl, point : float or ndarray
        Uniform load [N/mm] and point load [N].

    Returns
    -------
    float or ndarray
        δ_max [mm].

    Examples
    --------
    >>> round(max_deflection("cantilever", span=1000.0, EI=1e12, point=1000.0), 6)   # P L^3 / (3 E I)
    0.333333
    """
    _, _, b_w, b_p = _case(support)
    return (b_w * udl * span ** 4 + b_p * point * span ** 3) / EI


def longest_span(support: str, *, udl, point, moment_capacity, EI, limit: float,
                 self_weight=0.0, iterations: int = 80):
    """The longest span at which both M_max ≤ `moment_capacity` and δ_max ≤ L / `limit`.

    The loads are the same at every span; `self_weight` [N/mm] is added to `udl`. Both
    conditions tighten as L grows, so each has one boundary, found by bisection.

    Parameters
    ----------
    support : str
    udl, point : float or ndarray
        Uniform [N/mm] and point [N] loads.
    moment_capacity : float or ndarray
        The moment at which the utilisation reaches 1 [N·mm].
    EI : float or ndarray
        Bending stiffness [N·mm²].
    limit : float
        Deflection limit N of span / N.
    self_weight : float or ndarray
        Weight per length of the member [N/mm].
    iterations : int
        Bisection steps (80 halve any bracket to below 1e-20 of its size).

    Returns
    -------
    ndarray
        The span [mm]; inf where no load acts at all.

    Examples
    --------
    >>> # simple span, w = 1 N/mm, capacity 8e6 N mm: w L^2 / 8 = 8e6 gives L = 8000 mm
    >>> round(float(longest_span("simple", udl=1.0, point=0.0, moment_capacity=8e6, EI=1e30, limit=250)))
    8000
    """
    a_w, a_p, b_w, b_p = _case(support)
    w = np.asarray(udl, dtype=float) + np.asarray(self_weight, dtype=float)
    P = np.asarray(point, dtype=float)
    Mc = np.asarray(moment_capacity, dtype=float)
    EI = np.asarray(EI, dtype=float)
    w, P, Mc, EI = np.broadcast_arrays(w, P, Mc, EI)
    loaded = (w > 0) | (P > 0)

    def strength(L):        # > 0 where the span is too long for the moment capacity
        return a_w * w * L ** 2 + a_p * P * L - Mc

    def stiffness(L):       # δ / L - 1 / N, multiplied through by E I / L
        return b_w * w * L ** 3 + b_p * P * L ** 2 - EI / limit

    out = np.minimum(_bisect(strength, loaded, iterations), _bisect(stiffness, loaded, iterations))
    return np.where(loaded, out, np.inf)


def _bisect(f, loaded: np.ndarray, iterations: int) -> np.ndarray:
    """The root of f, increasing in L from f(0) < 0, for each element."""
    hi = np.ones(loaded.shape)
    for _ in range(200):                       # widen until every loaded element's root is bracketed
        short = loaded & (f(hi) <= 0)
        if not short.any():
            break
        hi = np.where(short, hi * 4.0, hi)
    lo = np.zeros(loaded.shape)
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        over = f(mid) > 0
        hi = np.where(over, mid, hi)
        lo = np.where(over, lo, mid)
    return 0.5 * (lo + hi)


def _case(support: str) -> tuple[float, float, float, float]:
    try:
        return BEAM_CASES[support]
    except KeyError:
        raise InputError(f"support = {support!r}; use one of {', '.join(SUPPORTS)}") from None
