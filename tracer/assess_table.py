"""The plain-text tables of the assessment commands (check, compare, fit): value ± U, unit, meaning.

Like :mod:`tracer.table`, values carry U = 2u (k = 2) to two significant digits, and every table
ends with the assessment cautions.
"""

from __future__ import annotations

import math

from .assess import ASSESS_CAUTIONS, CHECK_KEYS, CHECK_UNITS, Screen
from .beams import SUPPORTS
from .table import _columns, format_measured, format_value

__all__ = ["format_screen", "cell", "caution_lines"]

_CHECK_MEANINGS = {
    "max_moment": "largest bending moment, self-weight included",
    "stress": "largest bending stress (biaxial through the principal axes)",
    "utilisation": "stress x partial factor / strength",
    "utilisation_p95": "95th percentile of the utilisation",
    "deflection": "largest deflection",
    "deflection_limit": "span / N",
    "max_span": "longest span meeting strength and deflection",
    "self_weight": "density x g x A, added to the uniform load",
}


def format_screen(screen: Screen) -> str:
    """The capacity screen as a table with its inputs, orientation advice, warnings and cautions."""
    m = screen.material
    head = [f"{screen.measurement.name}: capacity screen (not a design check)",
            f"  {SUPPORTS[screen.support] if screen.point else SUPPORTS[screen.support].split(',')[0]}, span {screen.span / 1000:.6g} m, uniform load {screen.udl:.6g} kN/m, "
            f"point load {screen.point / 1000:.6g} kN, bending about {screen.axis}",
            f"  material {m.name}: E = {m.E:.6g} MPa, strength = {m.strength:.6g} MPa, partial factor "
            f"{screen.partial_factor:.3g}" + (f", density {m.density:.6g} kg/m^3" if m.density else ""),
            f"    ({m.source})"]
    if screen.u:
        head.append(f"  values ± U: U = 2u (k = 2); Monte Carlo {screen.draws} draws of the measured section, "
                    f"seed {screen.seed}; loads, E and strength as given")
    rows = [["quantity", "value ± U" if screen.u else "value", "unit", "meaning"]]
    for key in CHECK_KEYS + ("self_weight",):
        unit, f = CHECK_UNITS[key]
        rows.append([key, cell(screen.values[key] * f, screen.u.get(key), f), unit, _CHECK_MEANINGS[key]])
    o = screen.orientation
    lines = head + [""] + _columns(rows, right={1}) + [""]
    lines.append(f"  orientation: Ix/Iy = {o['Ix_over_Iy']:.3g}, Sx/Sy = {o['Sx_over_Sy']:.3g}; {o['advice']}")
    lines += warning_lines(screen.warnings)
    return "\n".join(lines + caution_lines())


def cell(value: float, u: float | None, factor: float = 1.0) -> str:
    """``value ± U`` (U = 2u) when u is known, else the value alone."""
    if u is None or not math.isfinite(u):
        return format_value(value)
    return format_measured(value, 2.0 * u * factor)


def warning_lines(warnings) -> list[str]:
    return ([""] + [f"  warning: {w}" for w in warnings]) if warnings else []


def caution_lines() -> list[str]:
    """The assessment cautions, one a line, after a blank line."""
    return [""] + [f"  {c}" for c in ASSESS_CAUTIONS]
