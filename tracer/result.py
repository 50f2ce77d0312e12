"""From a :class:`~tracer.measurement.Measurement` to a :class:`Result`, and the result JSON.

Every output (table, JSON, later reports and exports) starts from one Result. The JSON follows
the fixed schema ``tracer/result/1`` of DESIGN.md; this module adds the ``geometry`` and
``cautions`` records beside the fixed ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ._version import __version__
from .errors import UnitError
from .measurement import Measurement
from .section.properties import PROPERTY_KEYS, Properties, section_properties
from .torsion import TORSION_KEYS, Torsion, TorsionUncertainty
from .uncertainty import DEFAULT_SEED, Uncertainty, evaluate_uncertainty
from .units import OUTPUT_UNITS, from_mm, mm_per, property_unit

__all__ = ["Result", "measure", "result_json", "SCHEMA", "CAUTION"]

SCHEMA = "tracer/result/1"

#: The caution that goes with every set of section properties (DESIGN.md, cautions).
CAUTION = ("Section properties for screening only; this is not a design check. A member for reuse must be "
           "assessed by a qualified engineer under the local building code.")


@dataclass(frozen=True)
class Result:
    """Everything tracer found about one measured section.

    Attributes
    ----------
    measurement : Measurement
        What was measured (geometry in mm and provenance), after any alignment.
    properties : Properties
        Values in mm units and degrees.
    warnings : tuple of str
        What a person must know to trust the numbers.
    uncertainty : Uncertainty, optional
        u of each property (k = 1, same units), how it was found, the budget; None when the
        input stated no uncertainty.
    torsion : Torsion, optional
        J, Cw, xs, ys by finite elements, when asked for.
    torsion_uncertainty : TorsionUncertainty, optional
        Their u and 5th percentiles.
    """

    measurement: Measurement
    properties: Properties
    warnings: tuple[str, ...] = ()
    uncertainty: Uncertainty | None = None
    torsion: Torsion | None = None
    torsion_uncertainty: TorsionUncertainty | None = None

    @property
    def keys(self) -> tuple[str, ...]:
        """The property keys computed, in the order of DESIGN.md."""
        return PROPERTY_KEYS + (TORSION_KEYS if self.torsion is not None else ())

    def values(self) -> dict[str, float]:
        """Every computed property value (mm units, degrees)."""
        out = self.properties.values()
        if self.torsion is not None:
            out.update(self.torsion.values())
        return out

    @property
    def u(self) -> dict[str, float]:
        """Standard uncertainty (k = 1) of each property whose uncertainty is computed."""
        out = dict(self.uncertainty.u) if self.uncertainty is not None else {}
        if self.torsion_uncertainty is not None:
            out.update(self.torsion_uncertainty.u)
        return out

    @property
    def p05(self) -> dict[str, float]:
        """5th-percentile (low characteristic) values, where computed."""
        out = dict(self.uncertainty.p05) if self.uncertainty is not None else {}
        if self.torsion_uncertainty is not None:
            out.update(self.torsion_uncertainty.p05)
        return out

    @property
    def name(self) -> str:
        """The member's name."""
        return self.measurement.name


def measure(measurement: Measurement, *, align: str | None = None, draws: int | None = None,
            seed: int = DEFAULT_SEED, characteristic: bool = False, torsion: bool = False) -> Result:
    """Compute the section properties of a measurement and their uncertainty.

    Parameters
    ----------
    measurement : Measurement
        The input, from a sheet or a photo.
    align : {None, "principal"}
        ``"principal"`` turns the section about its centroid so that its major principal axis
        lies along x before the properties are reported (then Ix = I1, Ixy = 0).
    draws : int, optional
        A fixed number of Monte Carlo draws; by default the adaptive rule of JCGM 101 decides.
    seed : int
        Seed of the Monte Carlo draws (the same seed gives the same numbers).
    characteristic : bool
        Stabilise the 5th-percentile (low characteristic) values for reporting.
    torsion : bool
        Also compute J, the shear centre and Cw by finite elements (and their uncertainty by
        Monte Carlo, `draws` or 200 draws).

    Returns
    -------
    Result
    """
    warnings: list[str] = list(measurement.warnings)
    if align not in (None, "principal"):
        raise ValueError(f"align = {align!r}; use 'principal' or leave it out")
    props = section_properties(measurement.section)
    if align == "principal":
        measurement = measurement.rotated(-props.theta, origin=(props.cx, props.cy))
        props = section_properties(measurement.section)
    if not props.principal_unique:
        warnings.append("I1 = I2: every centroidal axis is principal; theta is reported as 0 deg")
    unc = None
    if measurement.error_model:
        proxy = measurement.mc_proxy or (None, None)
        unc = evaluate_uncertainty(measurement.section, measurement.error_model, props,
                                   mc_section=proxy[0], mc_model=proxy[1], draws=draws, seed=seed,
                                   percentile=characteristic)
        warnings += unc.warnings
        if unc.u.get("Ixy") == 0.0 and unc.u.get("A", 0.0) > 0:
            warnings.append("Ixy and theta have u = 0: the measured shape is symmetric by construction; "
                            "measure an outline to see any asymmetry of the real member")
    else:
        warnings.append("no uncertainty was stated for the readings: no u is reported for any property; "
                        "add an [uncertainty] table to the sheet")
    tor = tor_u = None
    if torsion:
        from .torsion import TORSION_DRAWS, evaluate_torsion

        # Parametric shapes are meshed on their coarser copy (its arcs suit the mesh size).
        t_section, t_model = measurement.mc_proxy or (measurement.section, measurement.error_model)
        n = draws if draws is not None else TORSION_DRAWS
        tor, tor_u = evaluate_torsion(t_section, t_model, draws=n, seed=seed)
        if not tor.converged:
            warnings.append("torsion: the mesh refinement stopped before J and Cw settled to 0.1 %; "
                            "their discretisation error is in the JSON and in u")
        if tor_u is not None:
            warnings.append(f"torsion: u of J, Cw, xs, ys comes from {n} Monte Carlo draws (u itself is known "
                            f"to about {100 / (2 * n) ** 0.5:.0f} %)")
    return Result(measurement=measurement, properties=props, warnings=tuple(warnings), uncertainty=unc,
                  torsion=tor, torsion_uncertainty=tor_u)


def result_json(result: Result, *, units: str = "mm", characteristic: bool = False) -> dict[str, Any]:
    """The result as a ``tracer/result/1`` JSON document (a dict ready for ``json.dump``).

    Parameters
    ----------
    result : Result
    units : {"mm", "cm", "m", "in"}
        Length unit of every value.
    characteristic : bool
        Add ``p05``, the 5th-percentile (low characteristic) value, to each property.
    """
    if units not in OUTPUT_UNITS:
        raise UnitError(f"units = {units!r}; use one of {' | '.join(OUTPUT_UNITS)}")
    values = result.values()
    unc = result.uncertainty
    u, p05 = result.u, result.p05
    props: dict[str, Any] = {}
    for key in result.keys:
        entry: dict[str, Any] = {"value": _finite(from_mm(values[key], key, units))}
        if key in u:
            entry["u"] = _finite(from_mm(u[key], key, units))
        if characteristic and key in p05:
            entry["p05"] = _finite(from_mm(p05[key], key, units))
        entry["unit"] = property_unit(key, units)
        props[key] = entry
    section = result.measurement.section
    x0, y0, x1, y1 = section.bounds
    f = 1.0 / mm_per(units)
    p = result.properties
    return {
        "schema": SCHEMA,
        "tool": {"name": "tracer", "version": __version__},
        "name": result.name,
        "source": dict(result.measurement.source),
        "units": {"length": units},
        "properties": props,
        "geometry": {
            "parts": section.n_parts,
            "holes": section.n_holes,
            "vertices": section.n_vertices,
            "bounds": {"x_min": x0 * f, "y_min": y0 * f, "x_max": x1 * f, "y_max": y1 * f},
            "plastic_axes": {"y": p.yp * f, "x": p.xp * f},
        },
        "uncertainty": _uncertainty_json(unc, units),
        **({"torsion": _torsion_json(result, units)} if result.torsion is not None else {}),
        "warnings": list(result.warnings),
        "cautions": [CAUTION],
    }


def _torsion_json(result: Result, units: str) -> dict[str, Any]:
    t = result.torsion
    tu = result.torsion_uncertainty
    return {
        "method": "St Venant warping function, quadratic triangles, refined until J and Cw change < 0.1 %",
        "triangles": t.triangles,
        "converged": t.converged,
        "discretisation_error": {k: _finite(from_mm(float(v), k, units)) for k, v in t.error.items()},
        "monte_carlo": None if tu is None else {"draws": tu.draws, "seed": tu.seed},
    }


def _uncertainty_json(unc: Uncertainty | None, units: str) -> dict[str, Any] | None:
    """How u was found, and the budget: each input's share of u^2 and its own u contribution."""
    if unc is None:
        return None
    return {
        "k": 1,
        "expanded_k": 2,
        "meaning": "u is the standard uncertainty (k = 1), the root-mean-square deviation about the value; "
                   "U = 2u is shown to people",
        "method": dict(unc.method),
        "monte_carlo": {"draws": unc.draws, "seed": unc.seed, "converged": unc.converged},
        "budget": {key: [{"input": r["input"], "share": r["share"],
                          "u": _finite(from_mm(float(r["u"]), key, units)), "unit": property_unit(key, units)}
                         for r in rows]
                   for key, rows in unc.budget.items()},
    }


def _finite(v: float) -> float | None:
    return v if math.isfinite(v) else None
