"""The readable table of a :class:`~tracer.result.Result`: property, value ± U, unit, meaning."""

from __future__ import annotations

import math

from ..result import CAUTION, Result
from ..section.properties import PROPERTY_NAMES
from ..units import from_mm, property_unit

__all__ = ["format_table", "format_value", "format_measured", "format_uncertainty", "budget_rows",
           "describe_geometry"]

# Inputs listed in a budget before the rest are summed into one line.
_BUDGET_ROWS = 8


def format_table(result: Result, *, units: str = "mm", budget: bool = False, characteristic: bool = False) -> str:
    """A plain-text table of every property of `result` in `units`, with warnings and caution.

    Parameters
    ----------
    result : Result
    units : str
        Length unit of the values.
    budget : bool
        Add the uncertainty budget of A, Ix and Iy.
    characteristic : bool
        Add a column with the 5th-percentile (low characteristic) value.
    """
    m = result.measurement
    src = m.source
    head = [f"{result.name}"]
    where = src.get("path") or "(no file)"
    head.append(f"  from {src.get('kind', 'input')} {where}: {describe_geometry(result)}")
    if "aligned" in src:
        head.append(f"  turned {src['aligned']['rotation_deg']:.6g} deg about the centroid onto its principal axes")
    if "trace" in src:
        head.append(f"  {trace_line(src['trace'])}")
    unc = result.uncertainty
    if unc is not None:
        head.append(f"  values ± U: expanded uncertainty U = 2u (k = 2, about 95 % coverage); "
                    f"Monte Carlo {unc.draws} draws, seed {unc.seed}")
    values = result.values()
    u = result.u
    p05s = result.p05
    rows = []
    for key in result.keys:
        v = from_mm(values[key], key, units)
        if key in u:
            text = format_measured(v, 2.0 * from_mm(u[key], key, units))
        else:
            text = format_value(v)
        row = [key, text]
        if characteristic:
            p05 = p05s.get(key)
            row.append(format_value(from_mm(p05, key, units)) if p05 is not None else "n/a")
        row += [property_unit(key, units), PROPERTY_NAMES[key]]
        rows.append(row)
    titles = ["property", "value ± U" if unc is not None else "value"]
    if characteristic:
        titles.append("5th pct")
    titles += ["unit", "meaning"]
    lines = head + [""] + _columns([titles] + rows, right={1, 2} if characteristic else {1})
    lines.append("")
    lines.append("  axes: x right, y up; Ix, Iy, Ixy about the centroid; theta counter-clockwise from +x")
    if budget:
        lines += [""] + _budget_lines(result, units)
    if result.warnings:
        lines.append("")
        lines += [f"  warning: {w}" for w in result.warnings]
    lines.append("")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines)


def trace_line(trace: dict) -> str:
    """One line on a photo's trace: how it was found, the trace check, and bark.

    >>> trace_line({"confidence": 0.91, "needs_review": False, "reasons": [], "hints": {"seed": [[1, 2]]}})
    'trace: from 1 point on the member; trace check: confidence 0.91, no review needed'
    """
    hints = trace.get("hints", {})
    if hints.get("boundary") == "hand-edited":
        how = "placed by hand"
    else:
        said = [f"{len(hints['seed'])} point{'s' * (len(hints['seed']) > 1)} on the member"] if "seed" in hints else []
        said += [f"{len(hints['outside'])} on the ground"] if "outside" in hints else []
        said += ["a box"] if "box" in hints else []
        how = "from " + ", ".join(said) if said else "found unattended"
    if trace.get("needs_review"):
        check = (f"trace check: confidence {trace['confidence']:.2f}, NEEDS REVIEW, accepted unchecked "
                 f"(--accept-trace): " + "; ".join(trace.get("reasons", [])))
    else:
        check = f"trace check: confidence {trace['confidence']:.2f}, no review needed"
    bark = trace.get("bark")
    if bark and bark.get("seen"):
        check += ("; bark included where seen" if bark.get("traced") == "whole face" else "; traced inside the bark")
    return f"trace: {how}; {check}"


def describe_geometry(result: Result) -> str:
    """What the geometry is and its size, e.g. ``shape rectangle; 1 part(s), 0 hole(s), 92 vertices``."""
    src = result.measurement.source
    what = src.get("geometry", src.get("kind", ""))
    if "shape" in src:
        what = f"shape {src['shape'].get('kind')}"
    s = result.measurement.section
    return f"{what}; {s.n_parts} part(s), {s.n_holes} hole(s), {s.n_vertices} vertices"


def format_value(v: float) -> str:
    """Five significant digits; engineering notation (exponent a multiple of 3) outside 1e-3..1e5.

    >>> format_value(19431700.0), format_value(2848.41), format_value(0.0)
    ('19.432e6', '2848.4', '0')
    """
    if not math.isfinite(v):
        return "n/a"
    if v == 0:
        return "0"
    a = abs(v)
    if 1e-3 <= a < 1e5:
        return f"{v:.5g}"
    exp = _exponent(v)
    mant = v / 10.0 ** exp
    if abs(float(f"{mant:.5g}")) >= 1000:  # rounding carried into the next power
        exp += 3
        mant /= 1000
    digits = max(0, 4 - int(math.floor(math.log10(abs(mant)))))
    return f"{mant:.{digits}f}e{exp}"


def format_measured(v: float, U: float) -> str:
    """``value ± U`` with U to two significant digits and the value to the same decimal place
    (JCGM 100:2008, 7.2.6), in the value's engineering notation.

    >>> format_measured(3425.43, 7.771), format_measured(23731900.0, 49730.0), format_measured(0.0, 0.0)
    ('3425.4 ± 7.8', '23.732e6 ± 0.050e6', '0 ± 0')
    >>> format_measured(69626.0, 3023.0)
    '69600 ± 3000'

    """
    if not (math.isfinite(v) and math.isfinite(U)):
        return f"{format_value(v)} ± n/a"
    if U == 0:
        return f"{format_value(v)} ± 0"
    ref = v if v != 0 else U                          # the notation follows the value
    exp = 0 if 1e-3 <= abs(ref) < 1e5 else _exponent(ref)
    last = math.floor(math.log10(U)) - 1              # place of U's second significant digit
    f = 10.0 ** exp
    tail = f"e{exp}" if exp else ""
    if last > exp:                                    # U's digits lie left of the point: round there
        step = 10.0 ** last
        return f"{round(v / step) * step / f:.0f}{tail} ± {round(U / step) * step / f:.0f}{tail}"
    decimals = exp - last
    return f"{v / f:.{decimals}f}{tail} ± {U / f:.{decimals}f}{tail}"


def format_uncertainty(v: float) -> str:
    """An uncertainty to two significant digits (JCGM 100:2008, 7.2.6).

    >>> format_uncertainty(97.5), format_uncertainty(0.01234), format_uncertainty(46012.0)
    ('98', '0.012', '46000')
    >>> format_uncertainty(381750.0), format_uncertainty(0.0)
    ('380e3', '0')
    """
    if not math.isfinite(v):
        return "n/a"
    if v == 0:
        return "0"
    r = float(f"{v:.2g}")
    exp = 0 if 1e-3 <= abs(r) < 1e5 else _exponent(r)
    m = r / 10.0 ** exp
    digits = max(0, 1 - math.floor(math.log10(abs(m))))
    return f"{m:.{digits}f}" + (f"e{exp}" if exp else "")


def _exponent(v: float) -> int:
    return 3 * math.floor(math.log10(abs(v)) / 3)


def _columns(rows: list[list[str]], right: set[int]) -> list[str]:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    out = []
    for r in rows:
        cells = [c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths))]
        out.append(("  " + "  ".join(cells)).rstrip())
    return out


def budget_rows(entries: list[dict], limit: int = _BUDGET_ROWS) -> list[tuple[str, float, float]]:
    """The first `limit` lines of one property's budget, the rest summed into one line.

    Parameters
    ----------
    entries : list of dict
        ``Uncertainty.budget[key]``: ``input``, ``share`` (of u²) and ``u`` (mm units), largest first.

    Returns
    -------
    list of (input, share, u)
        u in the property's mm units; the summed line's u is the root sum of squares.
    """
    rows = [(str(e["input"]), float(e["share"]), float(e["u"])) for e in entries[:limit]]
    rest = entries[limit:]
    if rest:
        rows.append((f"{len(rest)} other inputs", sum(float(e["share"]) for e in rest),
                     math.sqrt(sum(float(e["u"]) ** 2 for e in rest))))
    return rows


def _budget_lines(result: Result, units: str) -> list[str]:
    unc = result.uncertainty
    if unc is None:
        return ["  uncertainty budget: none (no uncertainty was stated)"]
    lines = ["  uncertainty budget: each input's share of u² and its own part of u (k = 1)"]
    for key, entries in unc.budget.items():
        unit = property_unit(key, units)
        lines.append(f"    {key} (u = {format_uncertainty(from_mm(result.u.get(key, math.nan), key, units))} {unit}):")
        rows = [[name, f"{100 * share:.1f} %", f"{format_uncertainty(from_mm(part, key, units))} {unit}"]
                for name, share, part in budget_rows(entries)]
        lines += ["    " + line for line in _columns(rows, right={1, 2})]
    return lines
