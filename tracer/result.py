"""From a :class:`~tracer.measurement.Measurement` to a :class:`Result`, and the result JSON.

Every output (table, JSON, later reports and exports) starts from one Result. The JSON follows
the fixed schema ``tracer/result/1`` of DESIGN.md; this module adds the ``geometry`` and
``cautions`` records beside the fixed ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from ._version import __version__
from .errors import UnitError
from .measurement import Measurement
from .properties import PROPERTY_KEYS, Properties, section_properties
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
    """

    measurement: Measurement
    properties: Properties
    warnings: tuple[str, ...] = ()
    uncertainty: Uncertainty | None = None

    @property
    def u(self) -> dict[str, float]:
        """Standard uncertainty (k = 1) of each property whose uncertainty is computed."""
        return dict(self.uncertainty.u) if self.uncertainty is not None else {}

    @property
    def name(self) -> str:
        """The member's name."""
        return self.measurement.name


def measure(measurement: Measurement, *, align: str | None = None, draws: int | None = None,
            seed: int = DEFAULT_SEED, characteristic: bool = False) -> Result:
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

    Returns
    -------
    Result
    """
    warnings: list[str] = []
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
    return Result(measurement=measurement, properties=props, warnings=tuple(warnings), uncertainty=unc)


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
    values = result.properties.values()
    unc = result.uncertainty
    props: dict[str, Any] = {}
    for key in PROPERTY_KEYS:
        entry: dict[str, Any] = {"value": _finite(from_mm(values[key], key, units))}
        if key in result.u:
            entry["u"] = _finite(from_mm(result.u[key], key, units))
        if characteristic and unc is not None and key in unc.p05:
            entry["p05"] = _finite(from_mm(unc.p05[key], key, units))
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
        "warnings": list(result.warnings),
        "cautions": [CAUTION],
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
