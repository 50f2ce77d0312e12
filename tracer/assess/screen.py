"""Assessing a measured member: a capacity screen, section loss against a nominal, shape fits.

Three jobs, one per public entry point, each carrying the measurement's uncertainty through by
Monte Carlo draws of the measured section (:func:`tracer.uncertainty.propagation.draw_vertices`):

- :func:`screen_capacity` — the bending moment, stress, utilisation and deflection of the member
  used as a single-span beam, the longest span that meets both strength and deflection, and
  which way up it is stiffest.
- :func:`compare_sections` — the measured section registered onto a nominal one, the loss of A,
  Ix, Iy, Sx, Zx and J in per cent, and the local thickness of each plate element against the
  nominal and its rolling tolerance (:mod:`tracer.assess.register`, :mod:`tracer.assess.tolerances`).
- :func:`fit_shape` — the dimensions of a parametric kind fitted to the measured outline
  (:mod:`tracer.assess.fit`).

Every output carries :data:`ASSESS_CAUTIONS`. These are screens, not design checks.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from .._version import __version__
from .beams import SUPPORTS, longest_span, max_deflection, max_moment
from ..errors import InputError
from .materials import Material
from ..measurement import Measurement
from ..section.properties import PROPERTY_KEYS, Properties, section_properties
from ..uncertainty import DEFAULT_SEED

__all__ = [
    "ASSESS_CAUTIONS",
    "CHECK_KEYS",
    "CHECK_UNITS",
    "GRAVITY",
    "Screen",
    "screen_capacity",
    "screen_json",
    "bending_stress_factor",
    "orientation_advice",
    "quantity",
    "section_draws",
    "percentile_with_u",
    "LOSS_KEYS",
    "Comparison",
    "compare_sections",
    "compare_json",
    "nominal_input",
    "shape_of",
    "fit_json",
]

#: The properties whose loss ``tracer compare`` reports (the fixed keys of its JSON ``loss``).
LOSS_KEYS = ("A", "Ix", "Iy", "Sx_top", "Zx", "J")

#: Fixed text shown with every table, JSON and figure of the assessment commands (DESIGN.md, cautions).
ASSESS_CAUTIONS: tuple[str, ...] = (
    "Screening only; this is not a design check.",
    "Lateral-torsional buckling, local buckling, shear, bearing, connections, defects and durability are not "
    "checked; a section measured at one place says nothing of the rest of the member.",
    "A qualified engineer must assess any member for reuse under the local building code.",
)

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
    values = {k: float(v[0]) for k, v in outputs(xy[None, :, 0], xy[None, :, 1], _props_rows(props)).items()}
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
    doc: dict[str, Any] = _head("tracer/check/1", screen.measurement)
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


def quantity(value: float, u: float | None, unit: str) -> dict[str, Any]:
    """``{value, u, unit}`` as in the result JSON; None for a value or u that is not finite or known."""
    return {"value": _finite(value), "u": None if u is None else _finite(u), "unit": unit}


def section_draws(measurement: Measurement, *, draws: int, seed: int = DEFAULT_SEED):
    """Monte Carlo copies of the measured section.

    Returns
    -------
    section : Section
        The geometry drawn from (the measurement's coarse copy for parametric shapes).
    x, y : ndarray (D, N)
        Vertices of the draws [mm].
    rows : dict of ndarray (D,)
        Every property of :data:`PROPERTY_KEYS` of every draw.
    base : dict of ndarray (1,)
        The same of the undisturbed `section`.
    """
    from ..uncertainty.ensemble import ensemble_properties
    from ..uncertainty import draw_vertices

    sec, model = measurement.mc_proxy or (measurement.section, measurement.error_model)
    p = section_properties(sec)
    x, y = draw_vertices(sec, model, draws=draws, seed=seed, props=p)
    table = ensemble_properties(sec, x, y, base=p)
    return sec, x, y, dict(zip(PROPERTY_KEYS, table)), _props_rows(p)


def percentile_with_u(samples: np.ndarray, q: float) -> tuple[float, float]:
    """The `q`-th percentile of Monte Carlo samples and its sampling standard uncertainty.

    The u is half the distance between the order statistics at q ± 100·√(p(1-p)/D), the
    distribution-free interval of a quantile (binomial count of draws below it, normal
    approximation; e.g. W. J. Conover, *Practical Nonparametric Statistics*, 3rd ed., 1999,
    sec. 3.2, from memory).
    """
    s = np.asarray(samples, dtype=float)
    s = s[np.isfinite(s)]
    p = q / 100.0
    d = 100.0 * math.sqrt(p * (1 - p) / max(len(s), 1))
    lo, mid, hi = np.percentile(s, [max(q - d, 0.0), q, min(q + d, 100.0)])
    return float(mid), float(0.5 * (hi - lo))


@dataclass(frozen=True)
class Comparison:
    """A measured section against its nominal.

    Attributes
    ----------
    measurement, nominal : Measurement
    registration : Registration
        The measured section laid onto the nominal (:func:`tracer.assess.register.register`).
    nominal_values, measured_values : dict
        A, Ix, Iy, Sx_top, Zx, J of each, in the nominal's axes [mm units].
    measured_u : dict
        u of the measured values (empty without an error model).
    loss, loss_u : dict
        (nominal - measured) / nominal [%] of each key of :data:`LOSS_KEYS`, positive = lost; u [%].
    missing_area, extra_area : float
        Area of the nominal that the measured section lacks, and of measured material outside
        the nominal [mm^2].
    plates : list of dict
        Per plate element: name, dim, nominal, thinnest and mean measured thickness, the largest
        local loss [mm, %], their u, the tolerance and the verdict.
    warnings : tuple of str
    """

    measurement: Measurement
    nominal: Measurement
    registration: Any
    nominal_values: dict[str, float]
    measured_values: dict[str, float]
    measured_u: dict[str, float]
    loss: dict[str, float]
    loss_u: dict[str, float]
    missing_area: float
    extra_area: float
    plates: list[dict[str, Any]]
    tolerance_source: str
    draws: int
    seed: int
    warnings: tuple[str, ...] = ()


def compare_sections(measurement: Measurement, nominal: Measurement, *, tolerances: dict | None = None,
                     draws: int = 1000, torsion_draws: int = 100, seed: int = DEFAULT_SEED) -> Comparison:
    """Register a measured section onto its nominal and report what it has lost.

    Parameters
    ----------
    measurement : Measurement
        The measured section (sheet or photo) and its error model.
    nominal : Measurement
        The nominal section, exact (a sheet or a parametric shape); plate elements and rolling
        tolerances need a parametric one.
    tolerances : dict, optional
        A tolerance table (:func:`tracer.assess.tolerances.load_tolerances`); the shipped one by default.
    draws : int
        Monte Carlo draws for the u of A, Ix, Iy, Sx_top, Zx and of the plate thicknesses
        (at most 200 of them for the thicknesses).
    torsion_draws : int
        Monte Carlo draws for the u of J (each is a finite-element solve).
    seed : int

    Returns
    -------
    Comparison

    Notes
    -----
    Losses are of the measured section in the nominal's axes, after registration; the nominal is
    exact, so u(loss) = 100 u(measured) / nominal. A plate's largest local loss is the nominal
    thickness less the thinnest of its stations (:mod:`tracer.assess.plates`); where that thinnest
    reading lies within the rolling tolerance of the nominal it is reported as within
    tolerance, not as loss.
    """
    from .plates import plate_elements, plate_thickness
    from .register import register, transform_vertices
    from .tolerances import load_tolerances, tolerance_of
    from ..torsion import torsion_properties

    table = tolerances if tolerances is not None else load_tolerances()
    warnings: list[str] = list(measurement.warnings)
    reg = register(measurement.section, nominal.section)
    if reg.overlap < 0.5:
        warnings.append(f"the measured section covers only {100 * reg.overlap:.0f} % of the nominal after the best "
                        "fit: is it the right nominal?")
    pn = section_properties(nominal.section)
    pm = section_properties(reg.section)
    keys = LOSS_KEYS[:-1]
    nominal_values = {k: pn.values()[k] for k in keys}
    measured_values = {k: pm.values()[k] for k in keys}
    t_nom_section = (nominal.mc_proxy or (nominal.section, None))[0]
    nominal_values["J"] = torsion_properties(t_nom_section).J
    J, u_J = _torsion_constant(measurement, draws=torsion_draws, seed=seed)
    measured_values["J"] = J
    u: dict[str, float] = {}
    shape = shape_of(nominal)
    plates = plate_elements(*shape) if shape is not None else []
    xy_reg, starts = reg.section.vertices()
    base_t = [plate_thickness(xy_reg, starts, p) for p in plates]
    drawn_t: list[np.ndarray] = [np.empty((0, 0)) for _ in plates]
    if measurement.error_model:
        from ..uncertainty.ensemble import ensemble_properties

        sec, x, y, _, _ = section_draws(measurement, draws=draws, seed=seed)
        sec_reg = sec.transformed(reg.matrix, reg.offset)
        X, Y = transform_vertices(sec, x, y, reg)
        ref_p = section_properties(sec_reg)
        reg_rows = dict(zip(PROPERTY_KEYS, ensemble_properties(sec_reg, X, Y, base=ref_p)))
        ref = ref_p.values()
        for k in keys:
            with np.errstate(invalid="ignore"):
                u[k] = float(np.sqrt(np.nanmean((reg_rows[k] - ref[k]) ** 2)))
        u["J"] = u_J
        xy_s, starts_s = sec_reg.vertices()
        for i, p in enumerate(plates):
            own = plate_thickness(xy_s, starts_s, p)
            # each draw's change of thickness, station by station
            drawn_t[i] = np.array([plate_thickness(np.column_stack([X[d], Y[d]]), starts_s, p) - own
                                   for d in range(min(draws, 200))])
    else:
        warnings.append("no uncertainty was stated for the measurement: no u is given")
    loss = {k: 100.0 * (nominal_values[k] - measured_values[k]) / nominal_values[k] for k in LOSS_KEYS}
    loss_u = {k: 100.0 * u[k] / abs(nominal_values[k]) for k in u}
    plate_rows = []
    for i, p in enumerate(plates):
        t = base_t[i]
        j = int(np.argmin(t))
        row: dict[str, Any] = {"name": p.name, "dim": p.dim, "nominal": p.thickness, "thinnest": float(t[j]),
                               "mean": float(np.mean(t)), "local_loss": p.thickness - float(t[j]),
                               "local_loss_percent": 100.0 * (p.thickness - float(t[j])) / p.thickness,
                               "stations": len(t)}
        if drawn_t[i].size:
            dt = drawn_t[i]
            row["u"] = float(np.sqrt(np.mean((dt[:, j]) ** 2)))
            row["mean_u"] = float(np.std(np.mean(dt, axis=1)))
        tol = tolerance_of(table, shape[0], p.dim, p.thickness)
        if tol is not None:
            row["tolerance"] = {"minus": tol.minus, "plus": tol.plus, "source": tol.source}
            row["status"] = {"within": "within rolling tolerance", "below": "loss beyond rolling tolerance",
                             "above": "thicker than the rolling tolerance",
                             "undecided": "cannot tell: the uncertainty crosses the tolerance limit"}[
                tol.status(p.thickness, row["thinnest"], row.get("u"))]
        else:
            row["status"] = "loss" if row["local_loss"] > 0 else "no loss"
            warnings.append(f"no rolling tolerance for {p.dim} of {article_kind(shape[0])}: {p.name} is judged "
                            "against the nominal alone")
        plate_rows.append(row)
    if shape is None:
        warnings.append("the nominal is not a parametric shape: no plate elements and no rolling tolerances")
    nom_geom = nominal.section.to_shapely()
    geom = reg.section.to_shapely()
    return Comparison(measurement=measurement, nominal=nominal, registration=reg, nominal_values=nominal_values,
                      measured_values=measured_values, measured_u=u, loss=loss, loss_u=loss_u,
                      missing_area=float(nom_geom.difference(geom).area),
                      extra_area=float(geom.difference(nom_geom).area), plates=plate_rows,
                      tolerance_source=table.get(shape[0], {}).get("standard", "") if shape else "",
                      draws=draws if u else 0, seed=seed, warnings=tuple(warnings))


def compare_json(c: Comparison) -> dict[str, Any]:
    """The comparison as a ``tracer/compare/1`` JSON document; ``loss`` maps each key of
    :data:`LOSS_KEYS` to ``{value, u, unit: "%"}`` (positive = material lost)."""
    from ..units import property_unit

    doc = _head("tracer/compare/1", c.measurement)
    doc["nominal"] = {"name": c.nominal.name, "source": dict(c.nominal.source)}
    doc["units"] = {"length": "mm"}
    r = c.registration
    doc["registration"] = {"rotation_deg": r.angle, "mirrored": r.mirrored,
                           "offset": {"x": float(r.offset[0]), "y": float(r.offset[1])},
                           "overlap": r.overlap,
                           "method": "centroids and principal axes aligned, then the shared area maximised"}
    doc["loss"] = {k: quantity(c.loss[k], c.loss_u.get(k), "%") for k in LOSS_KEYS}
    doc["properties"] = {k: {"nominal": c.nominal_values[k],
                             "measured": quantity(c.measured_values[k], c.measured_u.get(k), property_unit(k, "mm"))}
                         for k in LOSS_KEYS}
    doc["areas"] = {"missing": quantity(c.missing_area, None, "mm^2"), "extra": quantity(c.extra_area, None, "mm^2")}
    doc["plates"] = c.plates
    doc["uncertainty"] = {"k": 1, "draws": c.draws or None, "seed": c.seed,
                          "covers": "the measured section's error model; the nominal is exact"}
    doc["warnings"] = list(c.warnings)
    doc["cautions"] = list(ASSESS_CAUTIONS)
    return doc


def fit_json(f, measurement: Measurement) -> dict[str, Any]:
    """A :class:`tracer.assess.fit.ShapeFit` as a ``tracer/fit/1`` JSON document: ``kind``, and ``dims``
    mapping each dimension to ``{value, u, unit}``."""
    doc = _head("tracer/fit/1", measurement)
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


def nominal_input(spec: str) -> Measurement:
    """A nominal section: a sheet (``.toml``) or a parametric shape written
    ``KIND:DIM=LENGTH,...``, e.g. ``i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm``.

    >>> nominal_input("tube:d=168.3mm,t=8mm").source["shape"]
    {'kind': 'tube', 'd': 168.3, 't': 8.0}
    """
    from ..section.shapes import SHAPE_KINDS, make_shape
    from ..units import parse_length

    if spec.lower().endswith(".toml"):
        from ..inputs.sheet import read_sheet

        return read_sheet(spec)
    kind, sep, rest = spec.partition(":")
    if not sep or kind not in SHAPE_KINDS:
        raise InputError(f"nominal {spec!r}: give a sheet (.toml) or KIND:DIM=LENGTH,... with KIND one of "
                         f"{', '.join(SHAPE_KINDS)}, e.g. i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm")
    dims: dict[str, float] = {}
    for item in filter(None, rest.split(",")):
        key, eq, value = item.partition("=")
        if not eq:
            raise InputError(f"nominal {spec!r}: {item!r} must be DIM=LENGTH, e.g. h=200mm")
        dims[key.strip()] = parse_length(value, field=f"nominal {key.strip()}")
    section = make_shape(kind, **dims)
    return Measurement(section=section, name=spec, source={"kind": "shape", "shape": {"kind": kind, **dims}},
                       mc_proxy=(make_shape(kind, chord_angle=0.05, **dims), None) if kind != "rectangle" else None)


def shape_of(m: Measurement) -> tuple[str, dict[str, float]] | None:
    """(kind, dimensions [mm]) of a measurement made from a parametric shape, else None."""
    from ..units import LENGTH_UNITS

    rec = m.source.get("shape")
    if not rec:
        return None
    f = LENGTH_UNITS.get(m.source.get("sheet_units", "mm"), 1.0)
    dims = {k: float(v) * f for k, v in rec.items() if k != "kind" and isinstance(v, (int, float))}
    return rec["kind"], dims


def article_kind(kind: str) -> str:
    from ..section.shapes import article

    return f"{article(kind)} {kind}"


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


def _torsion_constant(measurement: Measurement, *, draws: int, seed: int) -> tuple[float, float | None]:
    """J of the measured section and its u (Monte Carlo, discretisation error added as in
    :func:`tracer.torsion.warping.evaluate_torsion`).

    The mesh is built on a copy moved to its centroid, and the draws moved with it: J does not
    depend on where the section lies, but the torsion solver was seen to fail to converge (and
    return a J a hundred times too large) on a section some 250 mm from the origin.
    """
    from ..torsion import TorsionModel
    from ..uncertainty import draw_vertices

    sec, model = measurement.mc_proxy or (measurement.section, measurement.error_model)
    p = section_properties(sec)
    tm = TorsionModel(sec.translated(-p.cx, -p.cy))
    tor = tm.converge()
    if not measurement.error_model:
        return tor.J, None
    x, y = draw_vertices(sec, model, draws=draws, seed=seed, props=p)
    vals = tm.draws(x - p.cx, y - p.cy)[0]                   # row 0 is J (TORSION_KEYS)
    with np.errstate(invalid="ignore"):
        rms = float(np.sqrt(np.nanmean((vals - tor.J) ** 2)))
    return tor.J, math.hypot(rms, tor.error["J"] / math.sqrt(3.0))


def _props_rows(p: Properties) -> dict[str, np.ndarray]:
    return {k: np.array([v]) for k, v in p.values().items()}


def _head(schema: str, measurement: Measurement) -> dict[str, Any]:
    return {"schema": schema, "tool": {"name": "tracer", "version": __version__}, "name": measurement.name,
            "source": dict(measurement.source)}


def _finite(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None
