"""The best rigid fit of a measured section onto a nominal one (registration).

A measured outline sits wherever the photo or the sheet put it, turned and possibly mirrored
(the other cut end of a member is its mirror image). :func:`register` finds the rigid motion,
with or without a mirror, that lays it best onto the nominal section: centroids and principal
axes aligned first, every orientation the principal axes leave open tried (a half turn, and a
quarter turn where the two principal moments are close), and each refined by maximising the
area the two sections share. Maximising the overlap, rather than fitting boundaries, keeps a
corroded or pitted section seated in the nominal: material that is missing does not pull the
fit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..section.geometry import Section, trusted_geometry
from ..section.properties import section_properties

__all__ = ["Registration", "register", "transform_vertices", "shapely_of_vertices"]

# Principal moments closer than this share leave the quarter turns open too.
_ISOTROPIC_SHARE = 0.15
# Simplification tolerance of the outlines during the search, as a share of sqrt(A).
_SIMPLIFY = 2e-4


@dataclass(frozen=True)
class Registration:
    """A rigid motion p -> matrix @ p + offset that lays the measured section on the nominal.

    Attributes
    ----------
    matrix : ndarray (2, 2)
        Rotation, times a mirror where ``mirrored``.
    offset : ndarray (2,)
        Translation [mm].
    angle : float
        Rotation [deg], counter-clockwise, applied after the mirror (x -> -x).
    mirrored : bool
    overlap : float
        Shared area over the nominal area after the fit.
    section : Section
        The measured section moved onto the nominal.
    """

    matrix: np.ndarray
    offset: np.ndarray
    angle: float
    mirrored: bool
    overlap: float
    section: Section


def register(measured: Section, nominal: Section) -> Registration:
    """The rigid motion, mirror allowed, that maximises the area `measured` shares with `nominal`.

    Parameters
    ----------
    measured, nominal : Section
        [mm].

    Returns
    -------
    Registration

    Examples
    --------
    >>> from tracer.section.shapes import channel
    >>> nom = channel(h=200, b=75, tw=8.5, tf=11.5)
    >>> moved = nom.mirrored("y").rotated(37.0).translated(400, -50)
    >>> reg = register(moved, nom)
    >>> reg.mirrored, round(reg.overlap, 6)
    (True, 1.0)
    """
    from scipy.optimize import minimize

    pn = section_properties(nominal)
    nom = nominal.to_shapely().simplify(_SIMPLIFY * math.sqrt(pn.A))
    best = None
    for mirrored in (False, True):
        base = measured.mirrored("y") if mirrored else measured
        pm = section_properties(base)
        close = abs(pm.I1 - pm.I2) < _ISOTROPIC_SHARE * pm.I1
        turns = (0.0, 90.0, 180.0, 270.0) if close else (0.0, 180.0)
        meas = base.to_shapely().simplify(_SIMPLIFY * math.sqrt(pm.A))
        for turn in turns:
            a0 = pn.theta - pm.theta + turn
            step = 0.02 * math.sqrt(pn.A)

            def shared(q, a0=a0, pm=pm, meas=meas):
                return -_moved(meas, a0 + q[0], (pm.cx, pm.cy), (pn.cx + q[1], pn.cy + q[2])).intersection(nom).area

            res = minimize(shared, np.zeros(3), method="Nelder-Mead",
                           options={"initial_simplex": [[0, 0, 0], [2.0, 0, 0], [0, step, 0], [0, 0, step]],
                                    "xatol": 1e-5, "fatol": 1e-9 * pn.A, "maxiter": 2000})
            if best is None or res.fun < best[0]:
                best = (res.fun, mirrored, a0 + res.x[0], (pm.cx, pm.cy), (pn.cx + res.x[1], pn.cy + res.x[2]))
    _, mirrored, angle, c_from, c_to = best
    a = math.radians(angle)
    R = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
    F = np.diag([-1.0, 1.0]) if mirrored else np.eye(2)
    # measured p -> F p (mirror about x = 0) -> rotate about the mirrored centroid -> onto c_to
    matrix = R @ F
    offset = np.asarray(c_to) - R @ np.asarray(c_from)
    moved = measured.transformed(matrix, offset)
    overlap = moved.to_shapely().intersection(nominal.to_shapely()).area / pn.A
    return Registration(matrix=matrix, offset=offset, angle=(angle + 180.0) % 360.0 - 180.0, mirrored=mirrored,
                        overlap=float(overlap), section=moved)


def transform_vertices(section: Section, x: np.ndarray, y: np.ndarray, reg: Registration
                       ) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (D, N) of draws of `section` moved by `reg`, in the vertex order of ``reg.section``.

    A mirror reverses every ring (rings are kept counter-clockwise outside, clockwise in holes),
    so the vertices are put in the order the moved section uses.
    """
    M, t = reg.matrix, reg.offset
    X = M[0, 0] * x + M[0, 1] * y + t[0]
    Y = M[1, 0] * x + M[1, 1] * y + t[1]
    if reg.mirrored:
        _, starts = section.vertices()
        order = np.concatenate([np.arange(b - 1, a - 1, -1) for a, b in zip(starts[:-1], starts[1:])])
        X, Y = X[:, order], Y[:, order]
    return X, Y


def shapely_of_vertices(section: Section, xy: np.ndarray):
    """A shapely geometry of `section`'s rings with its vertices moved to `xy` (a Monte Carlo copy).

    Independent noise on closely spaced vertices (a fillet's) can fold an edge over; such a copy
    is made valid (its folds dissolved), as its integrals already treat it.
    """
    import shapely

    with trusted_geometry():
        g = section.with_vertices(xy).to_shapely()
    return g if g.is_valid else shapely.make_valid(g)


def _moved(geom, angle: float, c_from, c_to):
    import shapely.affinity as aff

    g = aff.rotate(geom, angle, origin=c_from)
    return aff.translate(g, c_to[0] - c_from[0], c_to[1] - c_from[1])
