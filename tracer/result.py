"""From a :class:`~tracer.measurement.Measurement` to a :class:`Result`, and the result JSON.

Every output (table, JSON, later reports and exports) starts from one Result. The JSON follows
the fixed schema ``tracer/result/1`` of DESIGN.md; this module adds the ``geometry`` and
``cautions`` records beside the fixed ones.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from . import __version__
from .measurement import Measurement
from .properties import PROPERTY_KEYS, Properties, section_properties
from .units import OUTPUT_UNITS, from_mm, mm_per, property_unit
from .errors import UnitError

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
    u : dict
        Standard uncertainty (k = 1) of each property whose uncertainty is computed, same units.
    warnings : tuple of str
        What a person must know to trust the numbers.
    """

    measurement: Measurement
    properties: Properties
    u: dict[str, float] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    @property
    def name(self) -> str:
        """The member's name."""
        return self.measurement.name


def measure(measurement: Measurement, *, align: str | None = None) -> Result:
    """Compute the section properties of a measurement.

    Parameters
    ----------
    measurement : Measurement
        The input, from a sheet or a photo.
    align : {None, "principal"}
        ``"principal"`` turns the section about its centroid so that its major principal axis
        lies along x before the properties are reported (then Ix = I1, Ixy = 0).

    Returns
    -------
    Result
    """
    warnings: list[str] = []
    if align not in (None, "principal"):
        raise ValueError(f"align = {align!r}; use 'principal' or leave it out")
    props = section_properties(measurement.section)
    if align == "principal":
        turn = -props.theta
        section = measurement.section.rotated(turn, origin=(props.cx, props.cy))
        measurement = measurement.with_section(section, aligned={"to": "principal axes", "rotation_deg": turn})
        props = section_properties(section)
    if not props.principal_unique:
        warnings.append("I1 = I2: every centroidal axis is principal; theta is reported as 0 deg")
    if measurement.uncertainty:
        warnings.append("the stated reading uncertainty is recorded but not yet propagated: "
                        "no u is reported for any property")
    else:
        warnings.append("no uncertainty was stated for the readings: no u is reported for any property")
    return Result(measurement=measurement, properties=props, warnings=tuple(warnings))


def result_json(result: Result, *, units: str = "mm") -> dict[str, Any]:
    """The result as a ``tracer/result/1`` JSON document (a dict ready for ``json.dump``).

    Parameters
    ----------
    result : Result
    units : {"mm", "cm", "m", "in"}
        Length unit of every value.
    """
    if units not in OUTPUT_UNITS:
        raise UnitError(f"units = {units!r}; use one of {' | '.join(OUTPUT_UNITS)}")
    values = result.properties.values()
    props: dict[str, Any] = {}
    for key in PROPERTY_KEYS:
        entry: dict[str, Any] = {"value": _finite(from_mm(values[key], key, units))}
        if key in result.u:
            entry["u"] = _finite(from_mm(result.u[key], key, units))
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
        "warnings": list(result.warnings),
        "cautions": [CAUTION],
    }


def _finite(v: float) -> float | None:
    return v if math.isfinite(v) else None
