"""The plain-text tables of the assessment commands (check, compare, fit): value ± U, unit, meaning.

Like :mod:`tracer.outputs.table`, values carry U = 2u (k = 2) to two significant digits, and every table
ends with the assessment cautions.
"""

from __future__ import annotations

import math

from ..outputs.table import _columns, format_measured, format_value
from .beams import SUPPORTS
from .loss import LOSS_KEYS, Comparison
from .screen import CHECK_KEYS, CHECK_UNITS, Screen
from .shared import ASSESS_CAUTIONS

__all__ = ["format_screen", "format_comparison", "format_fit", "cell", "caution_lines"]

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


def format_comparison(c: Comparison) -> str:
    """Section loss against the nominal: properties, plate elements, registration, cautions."""
    from ..units import property_unit

    r = c.registration
    head = [f"{c.measurement.name} against nominal {c.nominal.name}",
            f"  registered: turned {r.angle:.4g} deg" + (" after a mirror" if r.mirrored else "")
            + f"; shares {100 * r.overlap:.2f} % of the nominal area",
            f"  missing {format_value(c.missing_area)} mm^2 of the nominal, extra {format_value(c.extra_area)} mm^2 "
            "outside it"]
    if c.measured_u:
        head.append(f"  values ± U: U = 2u (k = 2); Monte Carlo {c.draws} draws of the measured section; the nominal "
                    "is exact")
    rows = [["property", "nominal", "measured ± U" if c.measured_u else "measured", "unit", "loss ± U"]]
    for k in LOSS_KEYS:
        rows.append([k, format_value(c.nominal_values[k]), cell(c.measured_values[k], c.measured_u.get(k)),
                     property_unit(k, "mm"), cell(c.loss[k], c.loss_u.get(k)) + " %"])
    lines = head + [""] + _columns(rows, right={1, 2, 4}) + ["", "  loss = (nominal - measured) / nominal: positive = "
                                                             "material lost"]
    if c.plates:
        lines += ["", "  plate elements: the thinnest of each element's stations against its nominal thickness"]
        prow = [["element", "nominal", "thinnest ± U", "mean", "local loss", "tolerance", "verdict"]]
        for p in c.plates:
            tol = p.get("tolerance")
            prow.append([f"{p['name']} ({p['dim']})", f"{p['nominal']:.4g} mm", cell(p["thinnest"], p.get("u")) + " mm",
                         f"{p['mean']:.2f} mm", f"{p['local_loss'] + 0.0:.2f} mm ({p['local_loss_percent'] + 0.0:.1f} %)",
                         f"-{tol['minus']:.3g}/+{tol['plus']:.3g} mm" if tol else "none", p["status"]])
        lines += _columns(prow, right={1, 2, 3, 4})
        if c.tolerance_source:
            lines.append(f"  rolling tolerances: {c.tolerance_source}")
    lines += warning_lines(c.warnings)
    return "\n".join(lines + caution_lines())


_STATUS = {"within": "within tolerance", "below": "below tolerance", "above": "above tolerance",
           "undecided": "cannot tell (U crosses a limit)"}


def format_fit(f, name: str) -> str:
    """The fitted dimensions, with the nominal and its tolerance where one was given."""
    head = [f"{name}: fitted {f.kind}",
            f"  pose: turned {f.angle:.4g} deg" + (" after a mirror" if f.mirrored else "")
            + f"; boundary distance robust RMS {f.residual_rms:.3g} mm over {f.points} points, "
              f"{100 * f.outliers:.1f} % farther than 3 RMS (pits, wane)",
            "  values ± U: U = 2u (k = 2)" + (f"; measurement part from {f.draws} Monte Carlo draws" if f.draws else "")]
    titles = ["dimension", "fitted ± U", "unit"]
    if f.nominal is not None:
        titles += ["nominal", "tolerance", "verdict"]
    rows = [titles]
    for k, v in f.dims.items():
        row = [k, cell(v, f.u.get(k)), "mm"]
        if f.nominal is not None:
            t = f.tolerance.get(k, {})
            row += [format_value(t["nominal"]) if "nominal" in t else "",
                    f"-{t['minus']:.3g}/+{t['plus']:.3g}" if "minus" in t else "none",
                    _STATUS.get(t.get("status"), "")]
        rows.append(row)
    lines = head + [""] + _columns(rows, right={1, 3})
    if f.nominal is not None and f.tolerance_source:
        lines.append(f"  rolling tolerances: {f.tolerance_source}")
    lines += warning_lines(f.warnings)
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
