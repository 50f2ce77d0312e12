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
    "FORCE_UNITS",
    "LINE_LOAD_UNITS",
    "STRESS_UNITS",
    "DENSITY_UNITS",
    "parse_force",
    "parse_line_load",
    "parse_stress",
    "parse_density",
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

#: Newtons in one of each force unit. 1 lbf = 4.4482216152605 N exactly (0.45359237 kg x
#: 9.80665 m/s^2, NIST SP 811, 2008, B.8); 1 kip = 1000 lbf.
FORCE_UNITS: dict[str, float] = {"N": 1.0, "kN": 1e3, "MN": 1e6, "lbf": 4.4482216152605, "kip": 4448.2216152605}

#: Stress and modulus units in N/mm^2 (= MPa); 1 psi = 1 lbf/in^2.
STRESS_UNITS: dict[str, float] = {"Pa": 1e-6, "kPa": 1e-3, "MPa": 1.0, "GPa": 1e3, "N/mm2": 1.0, "N/mm^2": 1.0,
                                  "psi": 4.4482216152605 / 25.4 ** 2, "ksi": 4448.2216152605 / 25.4 ** 2}

#: Density units in kg/m^3 (1 lb = 0.45359237 kg, 1 ft = 0.3048 m).
DENSITY_UNITS: dict[str, float] = {"kg/m3": 1.0, "kg/m^3": 1.0, "t/m3": 1e3, "t/m^3": 1e3,
                                   "lb/ft3": 0.45359237 / 0.3048 ** 3, "lb/ft^3": 0.45359237 / 0.3048 ** 3}

#: Line-load units (force per length) in N/mm: every force unit over every length unit, as
#: written ``kN/m``, ``lbf/ft``, ``kip/ft``, ``N/mm``.
LINE_LOAD_UNITS: dict[str, float] = {f"{f}/{l}": fn / ln for f, fn in FORCE_UNITS.items()
                                     for l, ln in LENGTH_UNITS.items()}

_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([a-zA-Z][a-zA-Z0-9/^]*)\s*$")

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


def parse_force(text: str, *, field: str = "force") -> float:
    """Read a force that carries its unit, such as ``12kN`` or ``2.7kip``.

    Parameters
    ----------
    text : str
        A number followed by one of ``N kN MN lbf kip``.
    field : str
        Name shown in the error message.

    Returns
    -------
    float
        The force [N].

    Examples
    --------
    >>> parse_force("12kN")
    12000.0
    >>> round(parse_force("1kip"), 3)
    4448.222
    """
    return _quantity(text, FORCE_UNITS, field=field, what="a force", example="12kN or 2.7kip")


def parse_line_load(text: str, *, field: str = "line load") -> float:
    """Read a load per length that carries its unit, such as ``5kN/m`` or ``300lbf/ft``.

    Returns
    -------
    float
        The load [N/mm] (1 kN/m = 1 N/mm).

    Examples
    --------
    >>> parse_line_load("5kN/m")
    5.0
    >>> round(parse_line_load("300lbf/ft"), 4)
    4.3782
    """
    return _quantity(text, LINE_LOAD_UNITS, field=field, what="a load per length", example="5kN/m or 300lbf/ft")


def parse_stress(text: str, *, field: str = "stress") -> float:
    """Read a stress or modulus that carries its unit, such as ``11000MPa`` or ``29000ksi``.

    Returns
    -------
    float
        The stress [N/mm^2 = MPa].

    Examples
    --------
    >>> parse_stress("210GPa")
    210000.0
    >>> round(parse_stress("29000ksi"))
    199948
    """
    return _quantity(text, STRESS_UNITS, field=field, what="a stress", example="235MPa or 36ksi")


def parse_density(text: str, *, field: str = "density") -> float:
    """Read a density that carries its unit, such as ``7850kg/m3`` or ``490lb/ft3``.

    Returns
    -------
    float
        The density [kg/m^3].

    Examples
    --------
    >>> round(parse_density("490lb/ft3"))
    7849
    """
    return _quantity(text, DENSITY_UNITS, field=field, what="a density", example="7850kg/m3 or 490lb/ft3")


def _quantity(text: str, units: dict[str, float], *, field: str, what: str, example: str) -> float:
    match = _QUANTITY.match(text) if isinstance(text, str) else None
    if match is None:
        raise UnitError(f"{field} = {text!r} is not {what} with a unit; write e.g. {example}")
    unit = match.group(2)
    if unit not in units:
        shown = " ".join(k for k in units if "^" not in k)
        if len(shown) > 120:
            shown = shown[:120].rsplit(" ", 1)[0] + " ..."
        raise UnitError(f"{field} = {text!r}: {unit!r} is not a unit of {what[2:]}; use e.g. {example} "
                        f"(units: {shown})")
    return float(match.group(1)) * units[unit]
