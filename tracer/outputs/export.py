"""The section's geometry, or its result, as files other programs read: SVG, DXF, CSV, TOML, JSON.

The format follows the file's suffix (:func:`export_format`):

- ``.svg``: a true-scale drawing. Its ``width`` and ``height`` are in mm and its ``viewBox`` is
  in mm (one user unit = 1 mm) whatever the length unit asked for, so a viewer or printer at
  100 % shows the section at its real size. y is flipped once, here, for SVG's y-down frame.
  Each part is one path (its holes as sub-paths) filled with ``fill-rule="evenodd"``.
- ``.dxf``: closed LWPOLYLINEs, exteriors on layer ``OUTLINE`` and holes on layer ``HOLES``,
  coordinates in the chosen unit with ``$INSUNITS`` set to it (ezdxf).
- ``.csv``: every vertex as ``ring,x,y`` (``part,ring,x,y`` when there are several parts), in
  the chosen unit; a header comment says how rings are numbered.
- ``.toml``: an ``[outline]`` section sheet (:func:`tracer.inputs.sheet.sheet_text`) that measures back
  to the same properties.
- ``.json``: the result JSON, schema ``tracer/result/1`` (:func:`tracer.result.result_json`).
"""

from __future__ import annotations

import io
import json
from collections.abc import Callable
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..result import Result, result_json
from ..section.geometry import Section
from ..units import OUTPUT_UNITS, mm_per

__all__ = ["EXPORT_FORMATS", "export_format", "export_bytes", "section_svg", "section_dxf", "section_csv",
           "DXF_LAYERS"]

#: Suffix -> what the file holds.
EXPORT_FORMATS: dict[str, str] = {
    ".svg": "true-scale drawing (mm)",
    ".dxf": "closed polylines, layers OUTLINE and HOLES",
    ".csv": "vertices: ring, x, y",
    ".toml": "an [outline] section sheet",
    ".json": "the result JSON (tracer/result/1)",
}

#: DXF layer of the exterior rings and of the holes.
DXF_LAYERS = {"outline": "OUTLINE", "holes": "HOLES"}

# DXF $INSUNITS codes (the DXF reference's header variables: 1 inch, 4 mm, 5 cm, 6 m).
_INSUNITS = {"in": 1, "mm": 4, "cm": 5, "m": 6}


def export_format(path: str | Path) -> str:
    """The export format of `path` from its suffix, e.g. ``"dxf"``.

    Raises
    ------
    InputError
        The suffix is none of :data:`EXPORT_FORMATS`; the message names them.

    Examples
    --------
    >>> export_format("joist.DXF")
    'dxf'
    """
    suffix = Path(path).suffix.lower()
    if suffix not in EXPORT_FORMATS:
        known = " ".join(EXPORT_FORMATS)
        raise InputError(f"{path}: cannot export to {suffix or 'a file without a suffix'}; "
                         f"use one of {known}")
    return suffix[1:]


def export_bytes(fmt: str, result: Result, *, units: str = "mm") -> bytes:
    """The bytes of the export `fmt` (from :func:`export_format`) of `result`.

    Parameters
    ----------
    fmt : {"svg", "dxf", "csv", "toml", "json"}
    result : Result
        Its measurement's section is the geometry written.
    units : {"mm", "cm", "m", "in"}
        Length unit of the DXF, CSV, TOML and JSON (an SVG is always in mm).
    """
    if units not in OUTPUT_UNITS:
        raise InputError(f"units = {units!r}; use one of {' | '.join(OUTPUT_UNITS)}")
    section = result.measurement.section
    writers: dict[str, Callable[[], str | bytes]] = {
        "svg": lambda: section_svg(section, title=result.name),
        "dxf": lambda: section_dxf(section, units=units),
        "csv": lambda: section_csv(section, units=units, title=result.name),
        "toml": lambda: _sheet(result, units),
        "json": lambda: json.dumps(result_json(result, units=units), indent=2, ensure_ascii=False) + "\n",
    }
    if fmt not in writers:
        raise InputError(f"export format {fmt!r}; use one of {', '.join(writers)}")
    data = writers[fmt]()
    return data.encode("utf-8") if isinstance(data, str) else data


def section_svg(section: Section, *, title: str | None = None, fill: str = "#9aa5b1") -> str:
    """A true-scale SVG drawing of `section`: size and viewBox in mm, y up as drawn.

    The drawing is the bounding box of the material, without margin, so its ``width`` and
    ``height`` are the section's overall width and depth [mm].

    Examples
    --------
    >>> svg = section_svg(Section([(0, 0), (47, 0), (47, 195), (0, 195)]))
    >>> 'width="47mm"' in svg and 'height="195mm"' in svg and 'viewBox="0 0 47 195"' in svg
    True
    """
    x0, y0, x1, y1 = section.bounds
    w, h = x1 - x0, y1 - y0

    def sub(ring: np.ndarray) -> str:
        # SVG's y runs down: flip about the top of the bounding box, so (x0, y1) is (0, 0).
        pts = np.column_stack([ring[:, 0] - x0, y1 - ring[:, 1]])
        coords = " L".join(f"{_n(x)},{_n(y)}" for x, y in pts)
        return f"M{coords} Z"

    paths = []
    for part in section.parts:
        d = " ".join(sub(r) for r in (part.exterior, *part.holes))
        paths.append(f'  <path fill="{fill}" fill-rule="evenodd" d="{d}"/>')
    head = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{_n(w)}mm" height="{_n(h)}mm" '
            f'viewBox="0 0 {_n(w)} {_n(h)}">')
    lines = ['<?xml version="1.0" encoding="UTF-8"?>', head]
    if title:
        lines.append(f"  <title>{_escape(title)}</title>")
    lines.append(f"  <desc>section at true scale; 1 unit = 1 mm; the origin of the drawing is at x = {_n(x0)} mm, "
                 f"y = {_n(y1)} mm of the section, y flipped</desc>")
    lines += paths
    lines.append("</svg>")
    return "\n".join(lines) + "\n"


def section_dxf(section: Section, *, units: str = "mm") -> bytes:
    """`section` as a DXF drawing: closed LWPOLYLINEs in `units`, exteriors and holes on their layers."""
    import ezdxf

    f = 1.0 / mm_per(units)
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = _INSUNITS[units]
    doc.header["$MEASUREMENT"] = 0 if units == "in" else 1
    doc.layers.add(DXF_LAYERS["outline"], color=7)
    doc.layers.add(DXF_LAYERS["holes"], color=1)
    msp = doc.modelspace()
    for ring, is_hole in section.rings():
        layer = DXF_LAYERS["holes" if is_hole else "outline"]
        msp.add_lwpolyline((ring * f).tolist(), format="xy", close=True, dxfattribs={"layer": layer})
    out = io.StringIO()
    doc.write(out)
    return out.getvalue().encode(doc.output_encoding)


def section_csv(section: Section, *, units: str = "mm", title: str | None = None) -> str:
    """Every vertex of `section` as CSV rows ``ring,x,y`` in `units` (``part,`` first if several parts)."""
    f = 1.0 / mm_per(units)
    several = section.n_parts > 1
    lines = []
    if title:
        lines.append(f"# {title.replace(chr(10), ' ')}")
    lines += [f"# x, y [{units}]; x right, y up",
              "# ring 1 is the outline (counter-clockwise), rings 2, 3, ... its holes (clockwise)"
              + (", counted within each part" if several else ""),
              "# each ring's last vertex joins its first (no point repeated)",
              ("part," if several else "") + "ring,x,y"]
    for p, part in enumerate(section.parts, start=1):
        for r, ring in enumerate((part.exterior, *part.holes), start=1):
            prefix = f"{p},{r}" if several else f"{r}"
            lines += [f"{prefix},{x!r},{y!r}" for x, y in (ring * f).tolist()]
    return "\n".join(lines) + "\n"


def _sheet(result: Result, units: str) -> str:
    from ..inputs.sheet import sheet_text

    m = result.measurement
    src = m.source
    notes = f"exported by tracer from {src.get('kind', 'input')} {src.get('path', '(no file)')}"
    if src.get("sha256"):
        notes += f" (sha256 {src['sha256']})"
    return sheet_text(m.section, name=result.name, units=units, notes=notes,
                      uncertainty=dict(m.uncertainty) or None)


def _n(v: float) -> str:
    """A length for SVG: to 1e-6 mm, without trailing zeros."""
    text = f"{v:.6f}".rstrip("0").rstrip(".")
    return "0" if text in ("", "-0") else text


def _escape(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
