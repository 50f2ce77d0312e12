"""The nominal a measured member is held against: a sheet or a parametric shape written
``KIND:DIM=LENGTH,...``; a parametric measurement's kind and dimensions."""

from __future__ import annotations

from ..errors import InputError
from ..measurement import Measurement

__all__ = ["nominal_input", "shape_of", "article_kind"]


def nominal_input(spec: str) -> Measurement:
    """A nominal section: a sheet (``.toml``) or a parametric shape written
    ``KIND:DIM=LENGTH,...``, e.g. ``i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm``.

    >>> nominal_input("tube:d=168.3mm,t=8mm").source["shape"]
    {'kind': 'tube', 'd': 168.3, 't': 8.0}
    """
    from ..section.shapes import SHAPE_KINDS, make_shape
    from ..units import parse_length

    if spec.lower().endswith(".toml"):
        from ..inputs.sheet import read_sheet

        return read_sheet(spec)
    kind, sep, rest = spec.partition(":")
    if not sep or kind not in SHAPE_KINDS:
        raise InputError(f"nominal {spec!r}: give a sheet (.toml) or KIND:DIM=LENGTH,... with KIND one of "
                         f"{', '.join(SHAPE_KINDS)}, e.g. i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm")
    dims: dict[str, float] = {}
    for item in filter(None, rest.split(",")):
        key, eq, value = item.partition("=")
        if not eq:
            raise InputError(f"nominal {spec!r}: {item!r} must be DIM=LENGTH, e.g. h=200mm")
        dims[key.strip()] = parse_length(value, field=f"nominal {key.strip()}")
    section = make_shape(kind, **dims)
    return Measurement(section=section, name=spec, source={"kind": "shape", "shape": {"kind": kind, **dims}},
                       mc_proxy=(make_shape(kind, chord_angle=0.05, **dims), None) if kind != "rectangle" else None)


def shape_of(m: Measurement) -> tuple[str, dict[str, float]] | None:
    """(kind, dimensions [mm]) of a measurement made from a parametric shape, else None."""
    from ..units import LENGTH_UNITS

    rec = m.source.get("shape")
    if not rec:
        return None
    f = LENGTH_UNITS.get(m.source.get("sheet_units", "mm"), 1.0)
    dims = {k: float(v) * f for k, v in rec.items() if k != "kind" and isinstance(v, (int, float))}
    return rec["kind"], dims


def article_kind(kind: str) -> str:
    from ..section.shapes import article

    return f"{article(kind)} {kind}"
