"""The capacity screen: the member used as a single-span beam, its bending moment, stress,
utilisation and deflection with u from Monte Carlo draws of the measured section, the longest span
that meets both strength and deflection, and which way up it is stiffest. A screen, not a design
check."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from ..errors import InputError
from ..measurement import Measurement
from ..section.properties import Properties, section_properties
from ..uncertainty import DEFAULT_SEED
from .beams import SUPPORTS, longest_span, max_deflection, max_moment
from .materials import Material
from .shared import ASSESS_CAUTIONS, json_head, percentile_with_u, props_rows, quantity, section_draws

__all__ = ["CHECK_KEYS", "CHECK_UNITS", "GRAVITY", "Screen", "screen_capacity", "screen_json",
           "bending_stress_factor", "orientation_advice"]



#: Standard acceleration of gravity [m/s^2] (3rd CGPM, 1901), for the self-weight.
GRAVITY = 9.80665

#: The fixed keys of ``tracer check --json``, in order.
CHECK_KEYS = ("max_moment", "stress", "utilisation", "utilisation_p95", "deflection", "deflection_limit",
              "max_span")

#: Unit of each screen output and the factor from tracer's internal units (N, mm, MPa) to it.
CHECK_UNITS: dict[str, tuple[str, float]] = {
    "max_moment": ("kN*m", 1e-6), "stress": ("MPa", 1.0), "utilisation": ("1", 1.0),
    "utilisation_p95": ("1", 1.0), "deflection": ("mm", 1.0), "deflection_limit": ("mm", 1.0),
    "max_span": ("m", 1e-3), "self_weight": ("kN/m", 1.0),
}

# Draws per block when stresses are taken over every vertex of every draw (bounds the memory).
_BLOCK_POINTS = 2_000_000
_SCREEN_DRAWS = 1000


@dataclass(frozen=True)
class Screen:
    """The capacity screen of one member.

    Attributes
    ----------
    measurement : Measurement
    material : Material
    support : str
    span : float
        [mm].
    udl, point : float
        The loads as given [N/mm, N] (self-weight is added to the uniform load where the
        material has a density).
    limit : float
        N of the deflection limit span / N.
    axis : {"x", "y"}
        The axis the loads bend the member about (``x``: loads along y).
    partial_factor : float
        Divides the strength.
    values, u : dict
        Each output of :data:`CHECK_KEYS` plus ``self_weight``, in tracer's units (N, mm, MPa);
        ``u`` is empty when the measurement states no uncertainty.
    orientation : dict
        Stiffness and strength ratios of the axes and the advice (:func:`orientation_advice`).
    draws, seed : int
        The Monte Carlo draws behind ``u``.
    warnings : tuple of str
    """

    measurement: Measurement
    material: Material
    support: str
    span: float
    udl: float
    point: float
    limit: float
    axis: str
    partial_factor: float
    values: dict[str, float]
    u: dict[str, float]
    orientation: dict[str, Any]
    draws: int
    seed: int
    warnings: tuple[str, ...] = field(default_factory=tuple)


def screen_capacity(measurement: Measurement, material: Material, *, span: float, support: str,
                    udl: float = 0.0, point: float = 0.0, limit: float = 250.0, axis: str = "x",
                    partial_factor: float | None = None, draws: int = _SCREEN_DRAWS,
                    seed: int = DEFAULT_SEED) -> Screen:
    """Screen a measured member as a single-span beam in bending.

    Parameters
    ----------
    measurement : Measurement
        The measured section and its error model.
    material : Material
        E, strength, density and partial factor.
    span : float
        Span [mm].
    support : {"simple", "cantilever", "fixed"}
        See :data:`tracer.assess.beams.SUPPORTS`.
    udl : float
        Uniform load over the span [N/mm], besides the self-weight.
    point : float
        Point load [N] at midspan (simple, fixed) or the tip (cantilever).
    limit : float
        Deflection limit: the deflection may be at most span / `limit`.
    axis : {"x", "y"}
        Loads along y bend the member about x (``"x"``); loads along x bend it about y.
    partial_factor : float, optional
        Divides the strength; by default the material's.
    draws : int
        Monte Carlo draws of the measured section for the uncertainty.
    seed : int
        Seed of the draws.

    Returns
    -------
    Screen

    Notes
    -----
    Stress. The moment vector M (along x for ``axis="x"``) is resolved onto the principal axes,
    M1 = M·e1 and M2 = M·e2 with e1 = (cos θ, sin θ), e2 = (-sin θ, cos θ), and the largest
    normal stress is max over the section's vertices of |M1·v/I1 - M2·u/I2|, u and v the
    vertex's coordinates from the centroid along e1 and e2 (the beam axis z = e1 × e2; a
    positive moment about an axis puts the fibres on the positive side of the other axis in
    tension). For a section symmetric about x this is M / min(Sx_top, Sx_bot) [1].
    Deflection. The curvatures M1/(E I1) and M2/(E I2) add as vectors; the deflection's size is
    that of a beam of I_eff = 1 / √((m1/I1)² + (m2/I2)²), m the unit moment vector: Ix for a
    section symmetric about x, less for an unsymmetric one, which also deflects out of the
    plane of the load.
    Utilisation = stress · partial factor / strength. Self-weight = density · g · A, added to the
    uniform load. The uncertainty covers the measured section only: loads, E and strength are
    taken as given.

    References
    ----------
    .. [1] A. P. Boresi and R. J. Schmidt, *Advanced Mechanics of Materials*, 6th ed. New York:
           Wiley, 2003, ch. 7, nonsymmetrical bending of straight beams (from memory).
    """
    if support not in SUPPORTS:
        raise InputError(f"--support {support!r}; use one of {', '.join(SUPPORTS)}")
    if axis not in ("x", "y"):
        raise InputError(f"--axis {axis!r}; use x (loads along y) or y (loads along x)")
    if not (math.isfinite(span) and span > 0):
        raise InputError(f"--span must be a positive length; got {span!r} mm")
    if not (math.isfinite(limit) and limit > 0):
        raise InputError(f"--limit {limit!r} must be a positive number N (deflection up to span/N)")
    if udl < 0 or point < 0 or not (math.isfinite(udl) and math.isfinite(point)):
        raise InputError("--udl and --point must be zero or positive (downward loads)")
    gamma = material.partial_factor if partial_factor is None else float(partial_factor)
    if not (math.isfinite(gamma) and gamma >= 1.0):
        raise InputError(f"--partial-factor {partial_factor!r} must be a number of at least 1")
    warnings: list[str] = list(measurement.warnings)
    if udl == 0 and point == 0 and material.density is None:
        raise InputError(f"no load: give --udl or --point (material {material.name} has no density, so there is no "
                         "self-weight)")
    if material.density is None:
        warnings.append(f"material {material.name} has no density: the self-weight is not included")

    def outputs(xy_x, xy_y, p):
        return _screen(xy_x, xy_y, p, material=material, span=span, support=support, udl=udl, point=point,
                       limit=limit, axis=axis, gamma=gamma)

    section = measurement.section
    props = section_properties(section)
    xy, _ = section.vertices()
    values = {k: float(v[0]) for k, v in outputs(xy[None, :, 0], xy[None, :, 1], props_rows(props)).items()}
    u: dict[str, float] = {}
    if measurement.error_model:
        dist, shift = _screen_draws(measurement, outputs, values, draws=draws, seed=seed)
        with np.errstate(invalid="ignore"):
            for key, d in dist.items():
                u[key] = float(np.sqrt(np.nanmean((d - (values[key] - shift[key])) ** 2)))
        util = dist["utilisation"] + shift["utilisation"]
        p95, u_p95 = percentile_with_u(util, 95.0)
        values["utilisation_p95"], u["utilisation_p95"] = p95, u_p95
    else:
        values["utilisation_p95"] = values["utilisation"]
        warnings.append("no uncertainty was stated for the measurement: no u is given and utilisation_p95 is the "
                        "utilisation itself")
    values["deflection_limit"] = span / limit
    if u:
        u["deflection_limit"] = 0.0      # a definition, exact
    orientation = orientation_advice(props)
    weak = (axis == "x") != (orientation["strong_axis"] == "x")
    if weak:
        warnings.append(f"--axis {axis} bends the member about its weaker axis; {orientation['advice']}")
    if values["utilisation"] > 1 or values["deflection"] > values["deflection_limit"]:
        warnings.append("the member does not pass this screen at this span and load")
    return Screen(measurement=measurement, material=material, support=support, span=span, udl=udl, point=point,
                  limit=limit, axis=axis, partial_factor=gamma, values=values, u=u, orientation=orientation,
                  draws=draws if u else 0, seed=seed, warnings=tuple(warnings))


def bending_stress_factor(x: np.ndarray, y: np.ndarray, *, cx, cy, I1, I2, theta, axis: str = "x"
                          ) -> tuple[np.ndarray, np.ndarray]:
    """Largest bending stress per unit moment, and the effective second moment for deflection.

    Parameters
    ----------
    x, y : ndarray, shape (D, N)
        Vertices of D copies of a section [mm].
    cx, cy, I1, I2, theta : ndarray, shape (D,)
        Their centroids [mm], principal second moments [mm^4] and angle [deg].
    axis : {"x", "y"}
        Direction of the moment vector.

    Returns
    -------
    c : ndarray (D,)
        max over vertices of |m1·v/I1 - m2·u/I2| [1/mm^3] (stress = M · c), see
        :func:`screen_capacity`.
    I_eff : ndarray (D,)
        1 / √((m1/I1)² + (m2/I2)²) [mm^4].
    """
    t = np.radians(np.asarray(theta, dtype=float))
    cos, sin = np.cos(t), np.sin(t)
    m1, m2 = (cos, -sin) if axis == "x" else (sin, cos)     # the unit moment vector on e1, e2
    I1 = np.asarray(I1, dtype=float)
    I2 = np.asarray(I2, dtype=float)
    c = np.empty(x.shape[0])
    step = max(1, _BLOCK_POINTS // max(x.shape[1], 1))
    for s in range(0, x.shape[0], step):
        sl = slice(s, s + step)
        dx = x[sl] - np.asarray(cx)[sl, None]
        dy = y[sl] - np.asarray(cy)[sl, None]
        u = dx * cos[sl, None] + dy * sin[sl, None]
        v = -dx * sin[sl, None] + dy * cos[sl, None]
        c[sl] = np.max(np.abs((m1[sl] / I1[sl])[:, None] * v - (m2[sl] / I2[sl])[:, None] * u), axis=1)
    I_eff = 1.0 / np.hypot(m1 / I1, m2 / I2)
    return c, I_eff


def orientation_advice(props: Properties) -> dict[str, Any]:
    """Stiffness and strength ratios of the x and y axes, and which way up is stronger.

    Returns
    -------
    dict
        ``Ix_over_Iy``, ``Sx_over_Sy`` (the smaller modulus of each axis), ``I1_over_I2``,
        ``theta`` [deg], ``strong_axis`` (``"x"`` or ``"y"``) and ``advice`` (text).
    """
    sx = min(props.Sx_top, props.Sx_bot)
    sy = min(props.Sy_left, props.Sy_right)
    ri, rs = props.Ix / props.Iy, sx / sy
    strong = "x" if props.Ix >= props.Iy else "y"
    r_i, r_s = (ri, rs) if strong == "x" else (1 / ri, 1 / rs)
    if abs(r_i - 1) < 0.05:
        advice = "about as stiff either way up (Ix and Iy within 5 %)"
    elif strong == "x":
        advice = (f"stiffest as measured, y vertical (bending about x): {r_i:.3g} times stiffer and {r_s:.3g} times "
                  "stronger than on its side")
    else:
        advice = (f"turn it a quarter turn from the measured position so that the measured x extent is vertical "
                  f"(bending about y): {r_i:.3g} times stiffer and {r_s:.3g} times stronger that way")
    if props.principal_unique and abs(props.I1 - max(props.Ix, props.Iy)) > 0.01 * props.I1:
        advice += (f"; the principal axes lie {props.theta:.3g} deg from x, so a load along x or y also bends it "
                   "sideways unless it is restrained")
    return {"Ix_over_Iy": ri, "Sx_over_Sy": rs, "I1_over_I2": props.I1 / props.I2, "theta": props.theta,
            "strong_axis": strong, "advice": advice}


def screen_json(screen: Screen) -> dict[str, Any]:
    """The screen as a ``tracer/check/1`` JSON document: the fixed keys of :data:`CHECK_KEYS`
    (each ``{value, u, unit}``), ``self_weight``, the inputs, the orientation advice,
    warnings and cautions."""
    m = screen.material
    doc: dict[str, Any] = json_head("tracer/check/1", screen.measurement)
    doc["inputs"] = {
        "material": {"name": m.name, "description": m.description, "E": quantity(m.E, None, "MPa"),
                     "strength": quantity(m.strength, None, "MPa"),
                     "density": None if m.density is None else quantity(m.density, None, "kg/m^3"),
                     "source": m.source},
        "span": quantity(screen.span * 1e-3, None, "m"),
        "support": screen.support, "support_meaning": SUPPORTS[screen.support],
        "udl": quantity(screen.udl, None, "kN/m"), "point": quantity(screen.point * 1e-3, None, "kN"),
        "deflection_limit_N": screen.limit, "axis": screen.axis, "partial_factor": screen.partial_factor,
    }
    for key in CHECK_KEYS + ("self_weight",):
        unit, f = CHECK_UNITS[key]
        u = screen.u.get(key)
        doc[key] = quantity(screen.values[key] * f, None if u is None else u * f, unit)
    doc["orientation"] = screen.orientation
    doc["uncertainty"] = {
        "k": 1, "method": "monte carlo" if screen.u else None, "draws": screen.draws or None, "seed": screen.seed,
        "covers": "the measured section only; loads, E and strength are taken as given",
        "utilisation_p95": "95th percentile of the utilisation over the draws; its u is the sampling uncertainty "
                           "of that percentile",
    }
    doc["warnings"] = list(screen.warnings)
    doc["cautions"] = list(ASSESS_CAUTIONS)
    return doc






















# ---------------------------------------------------------------------------------------------
def _screen(x, y, p: dict[str, np.ndarray], *, material: Material, span, support, udl, point, limit, axis,
            gamma) -> dict[str, np.ndarray]:
    """Every screen output for each copy (rows of `p`, vertices `x`, `y`)."""
    c, I_eff = bending_stress_factor(x, y, cx=p["cx"], cy=p["cy"], I1=p["I1"], I2=p["I2"], theta=p["theta"],
                                     axis=axis)
    rho = material.density or 0.0
    w_self = rho * GRAVITY * p["A"] * 1e-9                    # kg/m^3 · m/s^2 · mm^2 · (m/mm)^3 -> N/mm
    M = max_moment(support, span=span, udl=udl + w_self, point=point)
    stress = M * c
    EI = material.E * I_eff
    return {
        "max_moment": M,
        "stress": stress,
        "utilisation": stress * gamma / material.strength,
        "deflection": max_deflection(support, span=span, EI=EI, udl=udl + w_self, point=point),
        "max_span": longest_span(support, udl=udl, point=point, moment_capacity=material.strength / (gamma * c),
                                 EI=EI, limit=limit, self_weight=w_self),
        "self_weight": w_self,
    }


def _screen_draws(measurement: Measurement, outputs, values: Mapping[str, float], *, draws: int, seed: int):
    """Outputs of every draw, and the shift from the drawn geometry's base values to the measured ones."""
    sec, x, y, rows, base = section_draws(measurement, draws=draws, seed=seed)
    dist = outputs(x, y, rows)
    xy, _ = sec.vertices()
    base_out = outputs(xy[None, :, 0], xy[None, :, 1], base)
    shift = {k: values[k] - float(base_out[k][0]) for k in dist}
    return dist, shift








