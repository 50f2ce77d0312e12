"""Section loss: the measured section registered onto its nominal, the loss of A, Ix, Iy, Sx, Zx
and J in per cent with u, and each plate element's thinnest reading against its rolling tolerance
(:mod:`.register`, :mod:`.plates`, :mod:`.tolerances`). A screen, not a design check."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..measurement import Measurement
from ..section.properties import PROPERTY_KEYS, section_properties
from ..uncertainty import DEFAULT_SEED
from .nominal import article_kind, shape_of
from .shared import ASSESS_CAUTIONS, json_head, quantity, section_draws

__all__ = ["LOSS_KEYS", "Comparison", "compare_sections", "compare_json"]

#: The properties whose loss ``tracer compare`` reports (the fixed keys of its JSON ``loss``).
LOSS_KEYS = ("A", "Ix", "Iy", "Sx_top", "Zx", "J")


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

    doc = json_head("tracer/compare/1", c.measurement)
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
