"""Section sheets: a person's caliper or tape readings in TOML (DESIGN.md, section sheet).

A sheet gives its length unit, the member's name, optionally the uncertainty of the readings,
and exactly one geometry: a parametric ``[shape]``, an ``[outline]`` of points (with holes, or
several ``[[outline.parts]]``), or ``[stations]`` (widths measured at heights). Any section can
be written back as an ``[outline]`` sheet, edited by hand and measured again.

Every error names the field, e.g. ``shape.tw``, ``outline.points[3]`` (counting from 1).
"""

from __future__ import annotations

import difflib
import json
import math
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..errors import GeometryError, ShapeError, SheetError
from ..files import read_input, sha256_of, write_atomic
from ..measurement import Measurement
from ..section.geometry import Section
from ..section.shapes import CORNERS, SHAPE_KINDS, article, make_shape
from ..section.stations import stations_jacobian, stations_section
from ..uncertainty import (ErrorModel, PointNoise, Readings, ScaleError, affine_jacobian,
                          resolution_u)
from ..units import LENGTH_UNITS, mm_per

__all__ = ["read_sheet", "parse_sheet", "sheet_text", "write_sheet", "SHEET_GEOMETRIES"]

#: The geometry tables of a sheet; a sheet has exactly one.
SHEET_GEOMETRIES = ("shape", "outline", "stations")
_TOP_KEYS = ("units", "name", "notes", "uncertainty", *SHEET_GEOMETRIES)
_UNCERTAINTY_KEYS = ("reading", "resolution", "scale")
# Chord angle [rad] of the coarser copy of a parametric shape used for Monte Carlo draws.
_MC_CHORD_ANGLE = 0.05


def read_sheet(path: str | Path) -> Measurement:
    """Read a section sheet file.

    Parameters
    ----------
    path : str or Path
        A ``.toml`` file as in DESIGN.md.

    Returns
    -------
    Measurement
        Geometry in mm, the name (the file's stem when the sheet has none) and provenance.

    Raises
    ------
    SheetError
        The file is missing or unreadable, is not TOML, or a field is wrong; the message starts
        with the file name and names the field.
    """
    p = Path(path)
    return parse_sheet(read_input(p, SheetError), path=p)


def parse_sheet(data: bytes | str, *, path: str | Path | None = None) -> Measurement:
    """Read a section sheet from its text; `path` is used for messages and provenance only."""
    label = str(path) if path is not None else "sheet"
    raw = data.encode("utf-8") if isinstance(data, str) else data
    try:
        doc = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise SheetError(f"{label}: not a text file; a section sheet is TOML text") from None
    except tomllib.TOMLDecodeError as e:
        raise SheetError(f"{label}: not valid TOML: {e}") from None
    try:
        return _measurement(doc, raw, path)
    except (SheetError, ShapeError, GeometryError) as e:
        raise type(e)(f"{label}: {e}") from None


def sheet_text(section: Section, *, name: str, units: str = "mm", notes: str | None = None,
               uncertainty: Mapping[str, float] | None = None) -> str:
    """A section sheet with `section` as an ``[outline]``, lengths written in `units`.

    Numbers are written with the shortest repr that reads back to the same float, so a sheet
    written in mm reads back exactly and one in another unit to within one rounding.

    Parameters
    ----------
    section : Section
        The geometry [mm].
    name : str
        The member's name.
    units : str
        Length unit of the sheet (``mm cm m in ft``).
    notes : str, optional
        Free text kept in the sheet.
    uncertainty : mapping, optional
        ``{"reading": u}`` or ``{"resolution": r}`` [mm], and ``{"scale": u_rel}``.
    """
    scale = mm_per(units)

    def ring(r: Any, indent: str) -> str:
        rows = ",\n".join(f"{indent}  [{_num(x / scale)}, {_num(y / scale)}]" for x, y in r)
        return f"[\n{rows},\n{indent}]"

    def part(p: Any) -> str:
        text = f"points = {ring(p.exterior, '')}\n"
        if p.holes:
            holes = ",\n".join(f"  {ring(h, '  ')}" for h in p.holes)
            text += f"holes = [\n{holes},\n]\n"
        return text

    lines = [f"units = {_str(units)}", f"name = {_str(name)}"]
    if notes:
        lines.append(f"notes = {_str(notes)}")
    if uncertainty:
        lines += ["", "[uncertainty]  # a reading or resolution applies to each coordinate of every point"]
        lines += [f"{k} = {_num(v if k == 'scale' else v / scale)}" for k, v in uncertainty.items()]
    lines.append("")
    if section.n_parts == 1:
        lines += ["[outline]", part(section.parts[0])]
    else:
        for p in section.parts:
            lines += ["[[outline.parts]]", part(p)]
    return "\n".join(lines)


def write_sheet(path: str | Path, section: Section, *, name: str, units: str = "mm", notes: str | None = None,
                uncertainty: Mapping[str, float] | None = None) -> None:
    """Write :func:`sheet_text` to `path` atomically (a stopped run leaves no half file)."""
    write_atomic(path, sheet_text(section, name=name, units=units, notes=notes, uncertainty=uncertainty))


# ---------------------------------------------------------------------------------------------
def _measurement(doc: dict[str, Any], raw: bytes, path: str | Path | None) -> Measurement:
    for key in doc:
        if key not in _TOP_KEYS:
            raise SheetError(f"{_unknown(key, _TOP_KEYS)} at the top of the sheet")
    if "units" not in doc:
        raise SheetError('units is missing; add e.g. units = "mm" (mm | cm | m | in | ft)')
    units = doc["units"]
    if not isinstance(units, str) or units not in LENGTH_UNITS:
        raise SheetError(f"units = {units!r} is not a length unit; use one of {' | '.join(LENGTH_UNITS)}")
    scale = LENGTH_UNITS[units]
    name = doc.get("name", Path(path).stem if path is not None else "unnamed section")
    if not isinstance(name, str):
        raise SheetError(f"name = {name!r} must be text in quotes")
    for key in ("notes",):
        if key in doc and not isinstance(doc[key], str):
            raise SheetError(f"{key} must be text in quotes")

    given = [k for k in SHEET_GEOMETRIES if k in doc]
    if len(given) != 1:
        has = " and ".join(f"[{k}]" for k in given) if given else "none"
        raise SheetError(f"give exactly one of [shape], [outline], [stations]; this sheet has {has}")
    kind = given[0]
    table = doc[kind]
    if not isinstance(table, dict):
        raise SheetError(f"{kind} must be a table: write [{kind}] on a line of its own")
    source: dict[str, Any] = {"kind": "sheet", "path": str(path) if path is not None else None,
                              "sha256": sha256_of(raw), "sheet_units": units, "geometry": kind}
    uncertainty = _uncertainty(doc.get("uncertainty"), scale)
    if kind == "shape":
        section, record, dims = _shape(table, scale)
        source["shape"] = record
        model, proxy = _shape_model(record["kind"], dims, uncertainty, scale)
    elif kind == "outline":
        section = _outline(table, scale)
        model, proxy = _outline_model(section, uncertainty, scale), None
    else:
        section, rows = _stations(table, scale)
        model, proxy = _stations_model(rows, uncertainty, scale), None
    return Measurement(section=section, name=name, source=source, uncertainty=uncertainty,
                       error_model=model, mc_proxy=proxy)


# -- error models of the readings -------------------------------------------------------------
def _reading(uncertainty: dict[str, float]) -> tuple[str, float, str] | None:
    """(field, u [mm], distribution) of the stated reading uncertainty, or None."""
    if "reading" in uncertainty:
        return "reading", uncertainty["reading"], "normal"
    if "resolution" in uncertainty:
        return "resolution", resolution_u(uncertainty["resolution"]), "rectangular"
    return None


def _scale_component(uncertainty: dict[str, float]) -> list:
    return [ScaleError(uncertainty["scale"])] if "scale" in uncertainty else []


def _too_large(field: str, uncertainty: dict[str, float], what: str, size: float, scale: float) -> None:
    stated = uncertainty[field]
    if stated > size:
        raise SheetError(f"uncertainty.{field} = {_num(stated / scale)} is larger than {what} = "
                         f"{_num(size / scale)}; give the uncertainty of one reading, in the sheet's units")


def _shape_model(kind: str, dims: dict[str, Any], uncertainty: dict[str, float],
                 scale: float) -> tuple[ErrorModel, tuple[Section, ErrorModel] | None]:
    reading = _reading(uncertainty)
    comps: list = []
    proxy_comps: list = []
    params = _shape_parameters(dims)
    proxy_section = None
    if reading is not None and params:
        field, u, dist = reading
        for name, _, value in params:
            _too_large(field, uncertainty, f"shape.{name}", value, scale)
        values = [v for _, _, v in params]
        names = tuple(f"shape.{n}" for n, _, _ in params)

        def builder(chord: float | None):
            return lambda p: make_shape(kind, chord_angle=chord, **_with_values(dims, params, p))

        comps.append(Readings(names, [u] * len(params), affine_jacobian(builder(None), values), dist))
        proxy_section = make_shape(kind, chord_angle=_MC_CHORD_ANGLE, **dims)
        proxy_comps.append(Readings(names, [u] * len(params), affine_jacobian(builder(_MC_CHORD_ANGLE), values), dist))
    comps += _scale_component(uncertainty)
    proxy_comps += _scale_component(uncertainty)
    proxy = None
    if proxy_section is not None and proxy_section.n_vertices < make_shape(kind, **dims).n_vertices:
        proxy = (proxy_section, ErrorModel(tuple(proxy_comps)))
    return ErrorModel(tuple(comps)), proxy


def _shape_parameters(dims: dict[str, Any]) -> list[tuple[str, tuple, float]]:
    """The readings of a shape: (name, path into dims, value [mm]); zero dimensions are exact."""
    out = []
    for key, v in dims.items():
        if key == "wane_form":
            continue
        if key == "wane" and isinstance(v, dict):
            leaves = [(f"wane.{c}", (key, c), w) for c, w in v.items()]
        else:
            leaves = [(key, (key,), v)]
        for label, path, w in leaves:
            if isinstance(w, list):
                out += [(f"{label}[{i + 1}]", path + (i,), float(x)) for i, x in enumerate(w) if x > 0]
            elif w > 0:
                out.append((label, path, float(w)))
    return out


def _with_values(dims: dict[str, Any], params: list[tuple[str, tuple, float]], values: Any) -> dict[str, Any]:
    """A copy of `dims` with the readings replaced by `values`."""
    out = {k: (dict(v) if isinstance(v, dict) else list(v) if isinstance(v, list) else v) for k, v in dims.items()}
    if isinstance(out.get("wane"), dict):
        out["wane"] = {c: list(w) if isinstance(w, list) else w for c, w in out["wane"].items()}
    for (_, path, _), value in zip(params, values):
        target = out
        for step in path[:-1]:
            target = target[step]
        target[path[-1]] = float(value)
    return out


def _outline_model(section: Section, uncertainty: dict[str, float], scale: float) -> ErrorModel:
    comps: list = []
    reading = _reading(uncertainty)
    if reading is not None:
        field, u, dist = reading
        x0, y0, x1, y1 = section.bounds
        _too_large(field, uncertainty, "the outline's smaller extent", min(x1 - x0, y1 - y0), scale)
        comps.append(PointNoise(u, distribution=dist, label="outline points"))
    return ErrorModel(tuple(comps + _scale_component(uncertainty)))


def _stations_model(rows: list[list[float]], uncertainty: dict[str, float], scale: float) -> ErrorModel:
    comps: list = []
    reading = _reading(uncertainty)
    if reading is not None:
        field, u, dist = reading
        widths = [r[2] - r[1] for r in rows if r[2] > r[1]]
        _too_large(field, uncertainty, "the narrowest station's width", min(widths), scale)
        names = tuple(f"stations.rows[{i}].{c}" for i in range(1, len(rows) + 1) for c in ("y", "x_left", "x_right"))
        comps.append(Readings(names, [u] * len(names), stations_jacobian(rows), dist))
    return ErrorModel(tuple(comps + _scale_component(uncertainty)))


def _shape(table: dict[str, Any], scale: float) -> tuple[Section, dict[str, Any], dict[str, Any]]:
    if "kind" not in table:
        raise SheetError(f"shape.kind is missing; use one of {', '.join(SHAPE_KINDS)}")
    kind = table["kind"]
    if not isinstance(kind, str) or kind not in SHAPE_KINDS:
        raise SheetError(f"shape.kind = {kind!r} is not a shape; use one of {', '.join(SHAPE_KINDS)}")
    _, required, optional = SHAPE_KINDS[kind]
    dims: dict[str, Any] = {}
    for key, value in table.items():
        if key == "kind":
            continue
        if key not in required + optional:
            raise SheetError(f"{_unknown(key, required + optional, prefix='shape.')} for {article(kind)} {kind}")
        if key == "wane":
            dims[key] = _wane(value, scale)
        elif key == "wane_form":
            if value not in ("round", "bevel"):
                raise SheetError(f"shape.wane_form = {value!r}; use \"round\" or \"bevel\"")
            dims[key] = value
        else:
            dims[key] = _length(f"shape.{key}", value) * scale
    missing = [d for d in required if d not in dims]
    if missing:
        raise SheetError(f"shape.{missing[0]} is missing; {article(kind)} {kind} needs {', '.join(required)}")
    try:
        section = make_shape(kind, **dims)
    except ShapeError as e:
        raise ShapeError(f"shape: {e}") from None
    return section, {k: v for k, v in table.items()}, dims


def _wane(value: Any, scale: float) -> Any:
    def size(label: str, v: Any) -> Any:
        if isinstance(v, list):
            if len(v) != 2:
                raise SheetError(f"{label} = {v!r} must be a size or a pair [x, y] of sizes")
            return [_length(f"{label}[{i + 1}]", w) * scale for i, w in enumerate(v)]
        return _length(label, v) * scale

    if isinstance(value, dict):
        out = {}
        for corner, v in value.items():
            if corner not in CORNERS:
                raise SheetError(_unknown(corner, CORNERS, prefix="shape.wane."))
            out[corner] = size(f"shape.wane.{corner}", v)
        return out
    return size("shape.wane", value)


def _outline(table: dict[str, Any], scale: float) -> Section:
    for key in table:
        if key not in ("points", "holes", "parts"):
            raise SheetError(_unknown(key, ("points", "holes", "parts"), prefix="outline."))
    if "parts" in table:
        if "points" in table or "holes" in table:
            raise SheetError("outline has both parts and points; put every part's points in [[outline.parts]]")
        parts = table["parts"]
        if not isinstance(parts, list) or not parts:
            raise SheetError("outline.parts must be one or more [[outline.parts]] tables")
        built = []
        for i, p in enumerate(parts, start=1):
            if not isinstance(p, dict):
                raise SheetError(f"outline.parts[{i}] must be a table with points (and holes)")
            built.append(_ring_and_holes(p, scale, f"outline.parts[{i}]"))
        return Section.from_parts(built)
    outline, holes = _ring_and_holes(table, scale, "outline")
    return Section(outline, holes)


def _ring_and_holes(table: dict[str, Any], scale: float, label: str) -> tuple[list, list]:
    for key in table:
        if key not in ("points", "holes"):
            raise SheetError(_unknown(key, ("points", "holes"), prefix=f"{label}."))
    if "points" not in table:
        raise SheetError(f"{label}.points is missing: a list of [x, y] pairs")
    outline = _ring(table["points"], f"{label}.points", scale)
    holes_raw = table.get("holes", [])
    if not isinstance(holes_raw, list):
        raise SheetError(f"{label}.holes must be a list of rings, each a list of [x, y] pairs")
    holes = [_ring(h, f"{label}.holes[{i}]", scale) for i, h in enumerate(holes_raw, start=1)]
    return outline, holes


def _ring(points: Any, label: str, scale: float) -> list[tuple[float, float]]:
    if not isinstance(points, list):
        raise SheetError(f"{label} must be a list of [x, y] pairs")
    out = []
    for i, p in enumerate(points, start=1):
        if not isinstance(p, list) or len(p) != 2:
            raise SheetError(f"{label}[{i}] = {p!r} is not a pair [x, y]")
        x = _coordinate(f"{label}[{i}]", p[0])
        y = _coordinate(f"{label}[{i}]", p[1])
        out.append((x * scale, y * scale))
    if len(out) < 3:
        raise SheetError(f"{label} has {len(out)} point(s); a ring needs at least 3")
    return out


def _stations(table: dict[str, Any], scale: float) -> tuple[Section, list[list[float]]]:
    for key in table:
        if key != "rows":
            raise SheetError(_unknown(key, ("rows",), prefix="stations."))
    rows = table.get("rows")
    if not isinstance(rows, list):
        raise SheetError("stations.rows is missing: a list of [y, x_left, x_right] readings")
    out = []
    for i, row in enumerate(rows, start=1):
        if not isinstance(row, list) or len(row) != 3:
            raise SheetError(f"stations.rows[{i}] = {row!r} must be three numbers [y, x_left, x_right]")
        out.append([_coordinate(f"stations.rows[{i}]", v) * scale for v in row])
    try:
        return stations_section(out), out
    except GeometryError as e:
        raise GeometryError(f"stations: {e}") from None


def _uncertainty(table: Any, scale: float) -> dict[str, float]:
    """The [uncertainty] table: reading or resolution in mm, scale relative."""
    if table is None:
        return {}
    if not isinstance(table, dict):
        raise SheetError("uncertainty must be a table: write [uncertainty] on a line of its own")
    for key in table:
        if key not in _UNCERTAINTY_KEYS:
            raise SheetError(_unknown(key, _UNCERTAINTY_KEYS, prefix="uncertainty."))
    if "reading" in table and "resolution" in table:
        raise SheetError("uncertainty has both reading and resolution; give one of them")
    out = {}
    for key, value in table.items():
        v = _length(f"uncertainty.{key}", value)
        if v == 0:
            raise SheetError(f"uncertainty.{key} = 0 must be greater than zero (no reading is exact)")
        if key == "scale":
            if v >= 0.5:
                raise SheetError(f"uncertainty.scale = {value!r} is a relative uncertainty (0.001 means 0.1 %); "
                                 "it must be below 0.5")
            out[key] = v
        else:
            out[key] = v * scale
    return out


def _length(label: str, value: Any) -> float:
    """A non-negative finite number."""
    v = _coordinate(label, value)
    if v < 0:
        raise SheetError(f"{label} = {value!r} must not be negative")
    return v


def _coordinate(label: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise SheetError(f"{label} = {value!r} is not a number")
    v = float(value)
    if not math.isfinite(v):
        raise SheetError(f"{label} = {value!r} must be a finite number")
    return v


def _unknown(key: str, allowed: tuple[str, ...], prefix: str = "") -> str:
    close = difflib.get_close_matches(key, allowed, n=1)
    hint = f"did you mean {prefix}{close[0]}?" if close else f"expected one of {', '.join(prefix + a for a in allowed)}"
    return f"unknown field {prefix}{key} ({hint})"


def _num(v: float) -> str:
    r = repr(float(v))
    return r if ("." in r or "e" in r or "inf" in r or "nan" in r) else r + ".0"


def _str(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)
