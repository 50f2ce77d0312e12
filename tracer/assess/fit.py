"""Fit a parametric kind to a measured outline: its dimensions with their uncertainty.

The fit moves and sizes a shape of :mod:`tracer.section.shapes` until the measured boundary lies on it:
robust least squares (soft-L1 loss, so pits, wane and spalls count for little) of the signed
distance from points spread evenly along the measured boundary to the shape's boundary, over
the shape's dimensions and a rigid pose. Every orientation the principal axes leave open (and
the mirror image, for an angle) is tried and the best kept.

References
----------
.. [1] M. A. Branch, T. F. Coleman and Y. Li, "A subspace, interior, and conjugate gradient
       method for large-scale bound-constrained minimization problems," *SIAM J. Sci. Comput.*,
       vol. 21, no. 1, pp. 1-23, 1999. doi: 10.1137/S1064827595289108 (scipy's ``trf``).
.. [2] P. J. Huber, *Robust Statistics*. New York: Wiley, 1981 (robust loss functions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError, MeasurementError, ShapeError
from ..measurement import Measurement
from ..section.properties import section_properties
from ..uncertainty import DEFAULT_SEED
from .shared import ASSESS_CAUTIONS, json_head, quantity

__all__ = ["FIT_KINDS", "ShapeFit", "fit_shape", "fit_json"]

#: Kinds that can be fitted, and the dimensions fitted for each.
FIT_KINDS: dict[str, tuple[str, ...]] = {
    "rectangle": ("b", "h", "wane.bottom_left", "wane.bottom_right", "wane.top_right", "wane.top_left"),
    "i-section": ("h", "b", "tw", "tf", "r"),
    "channel": ("h", "b", "tw", "tf", "r"),
    "angle": ("h", "b", "t", "r", "rt"),
    "tee": ("h", "b", "tw", "tf", "r"),
    "tube": ("d", "t"),
    "box": ("h", "b", "t", "ro", "ri"),
}

_POINTS = 600                 # sample points along the measured boundary
_CHORD = 0.05                 # chord angle of the model's arcs [rad]: sagitta below 3.2e-4 r
_UNCERTAINTY_DRAWS = 100


@dataclass(frozen=True)
class ShapeFit:
    """The fitted shape.

    Attributes
    ----------
    kind : str
    dims : dict
        Fitted dimensions [mm] (rectangle wane as ``wane.CORNER``, round wane radii).
    u : dict
        Their standard uncertainty [mm]: the measurement's error model carried through the
        fit, and the scatter of the residuals, added in quadrature.
    u_parts : dict
        ``{"measurement": {...}, "residuals": {...}}``, the two parts.
    angle, mirrored, offset :
        The pose: measured points p map into the shape's frame by R(angle) (F p) + offset,
        F the mirror x -> -x where ``mirrored``.
    residual_rms : float
        Robust RMS of the boundary distances at the solution [mm] (1.4826 x median |r|).
    outliers : float
        Share of points farther than 3 robust RMS from the fitted boundary (pits, wane, spalls).
    nominal : dict or None
        The nominal's dimensions [mm], where one was given.
    tolerance : dict
        Per dimension with a rolling tolerance: nominal, minus, plus, status.
    warnings : tuple of str
    """

    kind: str
    dims: dict[str, float]
    u: dict[str, float]
    u_parts: dict[str, dict[str, float]]
    angle: float
    mirrored: bool
    offset: tuple[float, float]
    residual_rms: float
    outliers: float
    points: int
    draws: int
    nominal: dict[str, float] | None = None
    tolerance: dict[str, dict[str, Any]] = field(default_factory=dict)
    tolerance_source: str = ""
    warnings: tuple[str, ...] = ()


def fit_shape(measurement: Measurement, kind: str, *, nominal: dict[str, float] | None = None,
              tolerances: dict | None = None, draws: int = _UNCERTAINTY_DRAWS, seed: int = DEFAULT_SEED) -> ShapeFit:
    """Fit a parametric `kind` to the measured outline.

    Parameters
    ----------
    measurement : Measurement
        The measured section (any input) and its error model.
    kind : str
        One of :data:`FIT_KINDS`.
    nominal : dict, optional
        The nominal dimensions [mm] of the same kind: the fit starts from them, and each fitted
        dimension is judged against its rolling tolerance.
    tolerances : dict, optional
        A rolling-tolerance table (:func:`tracer.assess.tolerances.load_tolerances`).
    draws : int
        Monte Carlo draws of the measured section for the measurement part of u.
    seed : int

    Returns
    -------
    ShapeFit

    Notes
    -----
    u has two parts. The measurement part: each Monte Carlo draw of the measured section moves
    the sample points; the fit's linear response, Δp = -(JᵀWJ)⁻¹ JᵀW Δr (J the Jacobian of the
    distances at the solution, W the soft-L1 weights), gives the dimensions' change, and u is
    their RMS. The residual part: σ² (JᵀWJ)⁻¹ (JᵀW²J) (JᵀWJ)⁻¹, σ the robust RMS of the
    residuals, which treats the sample points as independent; it covers what the shape does not
    describe (and double counts point noise already in the error model, so u is on the safe
    side).
    """
    from scipy.optimize import least_squares

    if kind not in FIT_KINDS:
        raise InputError(f"--kind {kind!r} cannot be fitted; use one of {', '.join(FIT_KINDS)}")
    names = FIT_KINDS[kind]
    warnings: list[str] = list(measurement.warnings)
    sec = measurement.section
    if sec.n_parts != 1:
        raise MeasurementError(f"the measured section has {sec.n_parts} parts; a {kind} is one")
    xy, starts = sec.vertices()
    edges, frac = _sample(xy, starts, _POINTS)
    pts = _points(xy, starts, edges, frac)
    pm_all = section_properties(sec)
    size = math.sqrt(pm_all.A)

    tried = []
    for mirrored, turn in _candidates(kind):
        q0 = pts * ([-1.0, 1.0] if mirrored else [1.0, 1.0])
        # The smallest bounding rectangle lies along the plates (flanges, legs, walls); the shapes
        # are built with their bounding box's bottom-left corner at the origin.
        phi = -_envelope_angle(q0) - turn
        z = q0 @ _rot(phi).T
        dims0 = _start(kind, names, z, pm_all.A, nominal)
        if _build(kind, names, dims0) is None:
            continue
        off = -z.min(axis=0)
        x0 = np.concatenate([[dims0[n] for n in names], [math.degrees(phi), off[0], off[1]]])
        fun = _residuals(kind, names, q0, size)
        lo, hi = _bounds(names, size)
        x0 = np.clip(x0, lo + 1e-9, hi - 1e-9)
        res = least_squares(fun, x0, bounds=(lo, hi), loss="soft_l1", f_scale=0.01 * size, x_scale="jac",
                            max_nfev=200 * len(x0))
        scale = max(1.4826 * float(np.median(np.abs(res.fun))), 1e-4 * size)
        res = least_squares(fun, res.x, bounds=(lo, hi), loss="soft_l1", f_scale=2.5 * scale, x_scale="jac",
                            max_nfev=200 * len(x0))
        robust = float(np.median(np.abs(res.fun)))
        tried.append((robust, res, mirrored, q0, fun, 2.5 * scale))
    if not tried:
        raise MeasurementError(f"no {kind} could be started from this outline; is it {_article(kind)}?")
    # Of the equally good fits (a symmetric shape fits several ways) keep the least turned one, so
    # that the dimensions keep the names they have in the measured frame (b across, h up).
    least = min(t[0] for t in tried)
    good = [t for t in tried if t[0] <= 1.05 * least + 1e-9 * size]
    best = min(good, key=lambda t: (abs((t[1].x[len(names)] + 180.0) % 360.0 - 180.0), t[0]))
    _, res, mirrored, q0, fun, f_scale = best
    p = res.x
    r = res.fun
    sigma = max(1.4826 * float(np.median(np.abs(r))), 1e-12)
    J = _jacobian(fun, p, size)
    w = 1.0 / np.sqrt(1.0 + (r / f_scale) ** 2)                     # soft-L1 weights rho'(z)
    JW = J * w[:, None]
    H = J.T @ JW
    try:
        Hinv = np.linalg.inv(H)
    except np.linalg.LinAlgError:
        raise MeasurementError(f"the {kind} fit is singular: some dimension does not show in this outline") from None
    cov_res = sigma ** 2 * Hinv @ (JW.T @ JW) @ Hinv
    n = len(names)
    u_res = {nm: float(math.sqrt(max(cov_res[i, i], 0.0))) for i, nm in enumerate(names)}
    u_meas: dict[str, float] = {}
    if measurement.error_model:
        from ..uncertainty import draw_vertices

        X, Y = draw_vertices(sec, measurement.error_model, draws=draws, seed=seed, props=pm_all)
        dr = np.empty((draws, len(r)))
        for d in range(draws):
            q = _points(np.column_stack([X[d], Y[d]]), starts, edges, frac)
            q = q * ([-1.0, 1.0] if mirrored else [1.0, 1.0])
            dr[d] = _residuals(kind, names, q, size)(p) - r
        dp = -(Hinv @ (JW.T @ dr.T)).T                                # (D, params)
        u_meas = {nm: float(np.sqrt(np.mean(dp[:, i] ** 2))) for i, nm in enumerate(names)}
    else:
        warnings.append("no uncertainty was stated for the measurement: u comes from the residuals alone")
    dims = {nm: float(p[i]) for i, nm in enumerate(names)}
    u = {nm: math.hypot(u_res[nm], u_meas.get(nm, 0.0)) for nm in names}
    outliers = float(np.mean(np.abs(r) > 3 * sigma))
    if sigma > 0.01 * size:
        warnings.append(f"the outline lies {sigma:.3g} mm (robust RMS) from the fitted {kind}: is it {_article(kind)}?")
    tol_rows: dict[str, dict[str, Any]] = {}
    source = ""
    if nominal is not None:
        from .tolerances import load_tolerances, tolerance_of

        table = tolerances if tolerances is not None else load_tolerances()
        source = str(table.get(kind, {}).get("standard", ""))
        for nm in names:
            if nm not in nominal:
                continue
            tol = tolerance_of(table, kind, nm, nominal[nm])
            row: dict[str, Any] = {"nominal": nominal[nm], "difference": dims[nm] - nominal[nm]}
            if tol is not None:
                row.update(minus=tol.minus, plus=tol.plus, status=tol.status(nominal[nm], dims[nm], u[nm]))
            tol_rows[nm] = row
    angle = (math.degrees(math.radians(p[n])) + 180.0) % 360.0 - 180.0
    return ShapeFit(kind=kind, dims=dims, u=u, u_parts={"measurement": u_meas, "residuals": u_res}, angle=angle,
                    mirrored=mirrored, offset=(float(p[n + 1]), float(p[n + 2])), residual_rms=sigma,
                    outliers=outliers, points=len(r), draws=draws if u_meas else 0, nominal=nominal,
                    tolerance=tol_rows, tolerance_source=source, warnings=tuple(warnings))


# ---------------------------------------------------------------------------------------------
def _candidates(kind: str) -> list[tuple[bool, float]]:
    """(mirrored, turn [rad]) starts: the quarter turns of the bounding rectangle; the mirror for angles."""
    if kind == "tube":
        return [(False, 0.0)]
    turns = [k * 0.5 * math.pi for k in range(4)]
    return [(m, t) for m in ((False, True) if kind == "angle" else (False,)) for t in turns]


def _residuals(kind: str, names, q: np.ndarray, size: float):
    """Signed distances (outside +) of points q (measured frame) to the shape at parameters x."""
    import shapely

    def fun(x: np.ndarray) -> np.ndarray:
        dims = dict(zip(names, x[:len(names)]))
        model = _build(kind, names, dims)
        if model is None:
            return np.full(len(q), size)                          # an impossible shape: far from everything
        R = _rot(math.radians(x[len(names)]))
        z = q @ R.T + x[len(names) + 1:]
        g = model.to_shapely()
        d = shapely.distance(g.boundary, shapely.points(z))
        inside = shapely.contains_xy(g, z[:, 0], z[:, 1])
        return np.where(inside, -d, d)

    return fun


def _build(kind: str, names, dims: dict[str, float]):
    from ..section.shapes import make_shape

    kw: dict[str, Any] = {}
    wane: dict[str, float] = {}
    for nm in names:
        if nm.startswith("wane."):
            wane[nm[5:]] = float(dims[nm])
        else:
            kw[nm] = float(dims[nm])
    if wane:
        kw["wane"] = wane
    try:
        return make_shape(kind, chord_angle=_CHORD, **kw)
    except (ShapeError, ValueError):
        return None


def _start(kind: str, names, z: np.ndarray, A: float, nominal) -> dict[str, float]:
    """Starting dimensions: the nominal's, else from the extents of the turned points `z` and the area."""
    if nominal is not None and all(n in nominal for n in names if not n.startswith("wane.")):
        out = {n: float(nominal.get(n, 0.0)) for n in names}
        for n in names:
            if n.startswith("wane.") and n not in nominal:
                out[n] = 0.0
        return out
    b, h = np.ptp(z[:, 0]), np.ptp(z[:, 1])
    if kind == "tube":
        d = 0.5 * (b + h)
        return {"d": d, "t": min(A / (math.pi * d), 0.45 * d)}
    if kind == "rectangle":
        return {"b": b, "h": h, **{n: 0.01 * min(b, h) for n in names if n.startswith("wane.")}}
    if kind == "angle":
        t = A / (h + b)
        return {"h": h, "b": b, "t": t, "r": 0.5 * t, "rt": 0.25 * t}
    if kind == "box":
        t = A / (2 * (h + b))
        return {"h": h, "b": b, "t": t, "ro": 1.5 * t, "ri": t}
    tw = A / (3 * b + h) if kind in ("i-section", "channel") else A / (1.5 * b + h)
    return {"h": h, "b": b, "tw": tw, "tf": 1.5 * tw, "r": tw}


def _bounds(names, size: float) -> tuple[np.ndarray, np.ndarray]:
    lo = [0.0 if (n.startswith("wane.") or n in ("r", "rt", "ro", "ri")) else 1e-3 * size for n in names]
    hi = [20.0 * size] * len(names)
    return np.array(lo + [-np.inf, -np.inf, -np.inf]), np.array(hi + [np.inf, np.inf, np.inf])


def _jacobian(fun, x: np.ndarray, size: float) -> np.ndarray:
    """Central differences of the residuals at x (steps 1e-4 of the size; 1e-4 rad for the angle)."""
    steps = np.full(len(x), 1e-4 * size)
    steps[-3] = math.degrees(1e-4)
    cols = []
    for j, h in enumerate(steps):
        e = np.zeros_like(x)
        e[j] = h
        cols.append((fun(x + e) - fun(x - e)) / (2 * h))
    return np.column_stack(cols)


def _sample(xy: np.ndarray, starts: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Edges and fractions along them of n points spread evenly by length over every ring."""
    nxt = np.arange(1, len(xy) + 1)
    nxt[starts[1:] - 1] = starts[:-1]
    seg = np.hypot(*(xy[nxt] - xy).T)
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    s = (np.arange(n) + 0.5) * cum[-1] / n
    edge = np.clip(np.searchsorted(cum, s, side="right") - 1, 0, len(seg) - 1)
    frac = (s - cum[edge]) / np.where(seg[edge] > 0, seg[edge], 1.0)
    return edge, frac


def _points(xy: np.ndarray, starts: np.ndarray, edges: np.ndarray, frac: np.ndarray) -> np.ndarray:
    nxt = np.arange(1, len(xy) + 1)
    nxt[starts[1:] - 1] = starts[:-1]
    a, b = xy[edges], xy[nxt[edges]]
    return a + frac[:, None] * (b - a)


def _envelope_angle(q: np.ndarray) -> float:
    """Direction [rad] of one side of the smallest rectangle around the points (shapely)."""
    import shapely

    ring = np.asarray(shapely.oriented_envelope(shapely.multipoints(q)).exterior.coords)
    e = ring[1] - ring[0]
    return math.atan2(e[1], e[0])


def _rot(a: float) -> np.ndarray:
    return np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])


def _article(kind: str) -> str:
    from ..section.shapes import article

    return f"{article(kind)} {kind}"


def fit_json(f, measurement: Measurement) -> dict[str, Any]:
    """A :class:`tracer.assess.fit.ShapeFit` as a ``tracer/fit/1`` JSON document: ``kind``, and ``dims``
    mapping each dimension to ``{value, u, unit}``."""
    doc = json_head("tracer/fit/1", measurement)
    doc["kind"] = f.kind
    doc["dims"] = {k: quantity(v, f.u.get(k), "mm") for k, v in f.dims.items()}
    doc["pose"] = {"rotation_deg": f.angle, "mirrored": f.mirrored, "offset": {"x": f.offset[0], "y": f.offset[1]},
                   "meaning": "measured points p map into the shape's frame as R(rotation) (mirror) p + offset"}
    doc["residuals"] = {"robust_rms": quantity(f.residual_rms, None, "mm"), "outliers": f.outliers,
                        "points": f.points,
                        "method": "soft-L1 robust least squares of the signed boundary distance"}
    doc["uncertainty"] = {"k": 1, "draws": f.draws or None,
                          "parts": {part: {k: quantity(v, None, "mm") for k, v in d.items()}
                                    for part, d in f.u_parts.items()}}
    doc["tolerance"] = {"source": f.tolerance_source, "dims": f.tolerance} if f.nominal is not None else None
    doc["warnings"] = list(f.warnings)
    doc["cautions"] = list(ASSESS_CAUTIONS)
    return doc
