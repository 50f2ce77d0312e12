"""Rolling tolerances of nominal dimensions, from an editable TOML table.

The shipped table ``tolerances.toml`` (beside this module) holds bands recalled from the
product standards it names, marked so; a user's table of the same form replaces it.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from ..files import read_input

__all__ = ["Tolerance", "TOLERANCES_FILE", "load_tolerances", "tolerance_of"]

#: The shipped tolerance table.
TOLERANCES_FILE = Path(__file__).parent / "tolerances.toml"


@dataclass(frozen=True)
class Tolerance:
    """A dimension may be `minus` below and `plus` above its nominal value [mm]."""

    minus: float
    plus: float
    source: str

    def status(self, nominal: float, measured: float, u: float | None = None) -> str:
        """``within``, ``below``, ``above``, or ``undecided`` where the U = 2u interval crosses a limit."""
        lo, hi = nominal - self.minus, nominal + self.plus
        U = 2.0 * u if u is not None and math.isfinite(u) else 0.0
        if lo <= measured - U and measured + U <= hi:
            return "within"
        if measured + U < lo:
            return "below"
        if measured - U > hi:
            return "above"
        return "undecided"


def load_tolerances(path: str | None = None) -> dict:
    """The tolerance table: the shipped one, or the user's file at `path`."""
    if path is None:
        with open(TOLERANCES_FILE, "rb") as f:
            return tomllib.load(f)
    raw = read_input(path, InputError)
    try:
        return tomllib.loads(raw.decode("utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as e:
        raise InputError(f"{path}: not a valid TOML file ({e})") from None


def tolerance_of(table: dict, kind: str, dim: str, nominal: float) -> Tolerance | None:
    """The tolerance of dimension `dim` of a `kind` of nominal value `nominal` [mm], or None.

    Examples
    --------
    >>> t = tolerance_of(load_tolerances(), "i-section", "tw", 5.6)   # IPE 200 web
    >>> round(5.6 - t.minus, 2), round(5.6 + t.plus, 2)
    (4.9, 6.3)
    """
    entry = table.get(kind, {}).get(dim)
    if entry is None:
        return None
    where = f"tolerances [{kind}] {dim}"
    try:
        unit, bands = entry["unit"], entry["bands"]
        for lo, hi, minus, plus in bands:
            if lo <= nominal < hi:
                f = nominal / 100.0 if unit == "%" else 1.0
                if unit not in ("mm", "%"):
                    raise InputError(f"{where}: unit = {unit!r}; use \"mm\" or \"%\"")
                return Tolerance(float(minus) * f, float(plus) * f, str(table[kind].get("standard", "")))
    except (KeyError, TypeError, ValueError) as e:
        if isinstance(e, InputError):
            raise
        raise InputError(f"{where}: write {{ unit = \"mm\", bands = [[from, below, minus, plus], ...] }}") from None
    return None
