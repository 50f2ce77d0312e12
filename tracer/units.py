"""Units at the edges: reading lengths in, writing properties out.

Inside tracer every length is a millimetre (DESIGN.md, conventions). This module is the only
place that knows other units.
"""

from __future__ import annotations

import math
import re

from .errors import UnitError

__all__ = [
    "LENGTH_UNITS",
    "OUTPUT_UNITS",
    "PROPERTY_DIMENSIONS",
    "mm_per",
    "parse_length",
    "property_unit",
    "from_mm",
]

#: Millimetres in one of each length unit (exact by definition: 1 in = 25.4 mm).
LENGTH_UNITS: dict[str, float] = {"mm": 1.0, "cm": 10.0, "m": 1000.0, "in": 25.4, "ft": 304.8}

#: Units a result can be reported in (``--units``).
OUTPUT_UNITS: tuple[str, ...] = ("mm", "cm", "m", "in")

#: Power of length of each property; ``None`` marks an angle in degrees.
PROPERTY_DIMENSIONS: dict[str, int | None] = {
    "A": 2, "perimeter": 1, "cx": 1, "cy": 1,
    "Ix": 4, "Iy": 4, "Ixy": 4, "I1": 4, "I2": 4, "theta": None, "Ip": 4,
    "rx": 1, "ry": 1, "r1": 1, "r2": 1,
    "Sx_top": 3, "Sx_bot": 3, "Sy_left": 3, "Sy_right": 3, "S1": 3, "S2": 3,
    "Zx": 3, "Zy": 3, "J": 4, "Cw": 6, "xs": 1, "ys": 1,
}

_LENGTH = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([a-zA-Z]+)\s*$")


def mm_per(unit: str, *, field: str = "units") -> float:
    """Millimetres in one `unit`.

    Parameters
    ----------
    unit : str
        One of ``mm cm m in ft``.
    field : str
        Name shown in the error message.

    Returns
    -------
    float
        The factor [mm per unit].

    Examples
    --------
    >>> mm_per("in")
    25.4
    """
    try:
        return LENGTH_UNITS[unit]
    except (KeyError, TypeError):
        known = " | ".join(LENGTH_UNITS)
        raise UnitError(f"{field} = {unit!r} is not a length unit; use one of {known}") from None


def parse_length(text: str, *, field: str = "length") -> float:
    """Read a length that carries its unit, such as ``100mm`` or ``4in``.

    Parameters
    ----------
    text : str
        A number immediately followed (or followed after spaces) by a unit.
    field : str
        Name shown in the error message.

    Returns
    -------
    float
        The length [mm].

    Examples
    --------
    >>> parse_length("4in")
    101.6
    """
    match = _LENGTH.match(text)
    if match is None:
        raise UnitError(f"{field} = {text!r} is not a length with a unit; write e.g. 100mm or 4in")
    value = float(match.group(1))
    return value * mm_per(match.group(2), field=f"the unit of {field}")


def property_unit(key: str, unit: str) -> str:
    """Unit string of property `key` reported in length `unit`, e.g. ``mm^4`` or ``deg``.

    >>> property_unit("Ix", "cm")
    'cm^4'
    """
    power = PROPERTY_DIMENSIONS[key]
    if power is None:
        return "deg"
    return unit if power == 1 else f"{unit}^{power}"


def from_mm(value: float, key: str, unit: str) -> float:
    """Convert property `key` from millimetre units into `unit`.

    >>> from_mm(1.0e4, "A", "cm")
    100.0
    """
    power = PROPERTY_DIMENSIONS[key]
    if power is None or unit == "mm" or not math.isfinite(value):
        return value
    return value / mm_per(unit) ** power
