"""Materials for the capacity screen: E, bending strength, density and a partial factor.

The shipped table, ``materials.toml`` beside this module, holds a few structural steel grades
and timber strength classes, recalled from the standards they name and marked so: check them
against your code. A user's own ``FILE.toml`` holds one material with at least ``E`` and
``strength``, each with its unit (``E = "11000MPa"``).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from ..files import read_input
from ..units import parse_density, parse_stress

__all__ = ["Material", "MATERIALS_FILE", "material_names", "load_material"]

#: The shipped materials table.
MATERIALS_FILE = Path(__file__).parent / "materials.toml"

_KEYS = ("name", "description", "E", "strength", "density", "partial_factor", "source")


@dataclass(frozen=True)
class Material:
    """A material for the screen.

    Attributes
    ----------
    name : str
    E : float
        Modulus of elasticity for deflections [MPa].
    strength : float
        Bending strength (fy, fm,k) [MPa].
    density : float or None
        Mean density for the self-weight [kg/m^3]; None leaves the self-weight out.
    partial_factor : float
        Divides the strength (1.0 when the file gives none).
    description, source : str
        What it is and where its numbers come from.
    """

    name: str
    E: float
    strength: float
    density: float | None = None
    partial_factor: float = 1.0
    description: str = ""
    source: str = ""


def material_names() -> tuple[str, ...]:
    """Names of the shipped materials."""
    return tuple(_shipped())


def load_material(spec: str) -> Material:
    """A shipped material by name (``S355``, ``C24``) or the one material in ``FILE.toml``.

    Raises
    ------
    InputError
        For an unknown name, an unreadable file, or a value without its unit.
    """
    if spec.lower().endswith(".toml"):
        raw = read_input(spec, InputError)
        try:
            doc = tomllib.loads(raw.decode("utf-8"))
        except (tomllib.TOMLDecodeError, UnicodeDecodeError) as e:
            raise InputError(f"{spec}: not a valid TOML file ({e})") from None
        return _material(doc, default_name=Path(spec).stem, where=spec)
    table = _shipped()
    if spec not in table:
        raise InputError(f"--material {spec!r} is not a shipped material; use one of {', '.join(table)} "
                         "or a FILE.toml with E and strength")
    return _material(table[spec], default_name=spec, where=f"{MATERIALS_FILE.name} [{spec}]")


def _shipped() -> dict:
    with open(MATERIALS_FILE, "rb") as f:
        return tomllib.load(f)


def _material(doc: dict, *, default_name: str, where: str) -> Material:
    unknown = [k for k in doc if k not in _KEYS]
    if unknown:
        raise InputError(f"{where}: {unknown[0]!r} is not a material key; use {', '.join(_KEYS)}")
    for key in ("E", "strength"):
        if key not in doc:
            raise InputError(f"{where}: {key} is missing; write e.g. E = \"11000MPa\", strength = \"24MPa\"")
    E = parse_stress(_text(doc, "E", where), field=f"{where}: E")
    fk = parse_stress(_text(doc, "strength", where), field=f"{where}: strength")
    rho = parse_density(_text(doc, "density", where), field=f"{where}: density") if "density" in doc else None
    gamma = doc.get("partial_factor", 1.0)
    if not isinstance(gamma, (int, float)) or isinstance(gamma, bool) or not gamma >= 1.0:
        raise InputError(f"{where}: partial_factor = {gamma!r} must be a number of at least 1")
    for label, v in (("E", E), ("strength", fk)) + ((("density", rho),) if rho is not None else ()):
        if not v > 0:
            raise InputError(f"{where}: {label} must be positive")
    return Material(name=str(doc.get("name", default_name)), E=E, strength=fk, density=rho,
                    partial_factor=float(gamma), description=str(doc.get("description", "")),
                    source=str(doc.get("source", where)))


def _text(doc: dict, key: str, where: str) -> str:
    v = doc[key]
    if not isinstance(v, str):
        unit = "kg/m3" if key == "density" else "MPa"
        raise InputError(f"{where}: {key} = {v!r} needs its unit, in quotes: e.g. {key} = \"{v}{unit}\"")
    return v
