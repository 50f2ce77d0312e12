"""The readable table of a :class:`~tracer.result.Result`: property, value, unit, meaning."""

from __future__ import annotations

import math

from .properties import PROPERTY_KEYS, PROPERTY_NAMES
from .result import CAUTION, Result
from .units import from_mm, property_unit

__all__ = ["format_table", "format_value"]


def format_table(result: Result, *, units: str = "mm") -> str:
    """A plain-text table of every property of `result` in `units`, with warnings and caution."""
    m = result.measurement
    src = m.source
    head = [f"{result.name}"]
    where = src.get("path") or "(no file)"
    what = src.get("geometry", src.get("kind", ""))
    if "shape" in src:
        what = f"shape {src['shape'].get('kind')}"
    s = m.section
    head.append(f"  from {src.get('kind', 'input')} {where}: {what}; {s.n_parts} part(s), {s.n_holes} hole(s), "
                f"{s.n_vertices} vertices")
    if "aligned" in src:
        head.append(f"  turned {src['aligned']['rotation_deg']:.6g} deg about the centroid onto its principal axes")
    values = result.properties.values()
    rows = []
    for key in PROPERTY_KEYS:
        v = from_mm(values[key], key, units)
        text = format_value(v)
        if key in result.u:
            text += f" ± {format_value(2.0 * from_mm(result.u[key], key, units))}"
        rows.append((key, text, property_unit(key, units), PROPERTY_NAMES[key]))
    w0 = max(len(r[0]) for r in rows)
    w1 = max(len(r[1]) for r in rows)
    w2 = max(len(r[2]) for r in rows)
    lines = head + [""]
    lines.append(f"  {'property':<{w0}}  {'value':>{w1}}  {'unit':<{w2}}  meaning")
    for k, v, u, name in rows:
        lines.append(f"  {k:<{w0}}  {v:>{w1}}  {u:<{w2}}  {name}")
    lines.append("")
    lines.append("  axes: x right, y up; Ix, Iy, Ixy about the centroid; theta counter-clockwise from +x")
    if result.warnings:
        lines.append("")
        lines += [f"  warning: {w}" for w in result.warnings]
    lines.append("")
    lines.append(f"  {CAUTION}")
    return "\n".join(lines)


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
    exp = 3 * math.floor(math.log10(a) / 3)
    mant = v / 10.0 ** exp
    if abs(float(f"{mant:.5g}")) >= 1000:  # rounding carried into the next power
        exp += 3
        mant /= 1000
    digits = max(0, 4 - int(math.floor(math.log10(abs(mant)))))
    return f"{mant:.{digits}f}e{exp}"
