"""The report for the assessment file: one self-contained HTML page, or the same as PDF.

Both are drawn from one content record (:func:`report_content`), in this order: the title block
(member, date, tool version, input file and its SHA-256), the cautions in short, the section to
true scale, for photos the review picture and the scale reference with its residuals, the
property table (value, u, U = 2u and unit), the uncertainty budget, every warning, and the
cautions of DESIGN.md in full.

The HTML holds its figures as inline SVG (the photo as an embedded JPEG), its CSS inline, and no
address of any kind, so it opens offline and archives as one file; its print rules fit A4 and
Letter alike (the page box of either holds the 180 mm wide column). The PDF is laid out with
matplotlib on A4 pages: the title and the section, the photo (photos only), the properties, then
the budget, warnings and cautions (continued on further pages only when they do not fit).
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import InputError
from ..result import CAUTION, Result
from ..section.properties import PROPERTY_NAMES
from ..units import from_mm, property_unit
from .table import budget_rows, describe_geometry, format_measured, format_value

__all__ = ["REPORT_FORMATS", "CAUTIONS", "report_format", "report_bytes", "report_html", "report_pdf",
           "report_content", "ReportContent", "pdf_page_count"]

#: Suffix -> report format.
REPORT_FORMATS: dict[str, str] = {".html": "html", ".htm": "html", ".pdf": "pdf"}

#: The cautions every report ends with (DESIGN.md, cautions; the README says the same).
CAUTIONS: tuple[str, ...] = (
    CAUTION,
    "Anything that screens capacity or strength is for screening only. Defer to the local building code and "
    "to licensed practice.",
    "A measured section describes the one place it was measured: members vary along their length, and "
    "defects, decay, notches and corrosion elsewhere are not seen.",
)

_PHOTO_SIDE = 1600             # px, longest side of the embedded review picture


@dataclass
class ReportContent:
    """What a report says, ready to lay out (every number already formatted with its unit)."""

    title: str
    head: list[tuple[str, str]]
    property_columns: list[str]
    properties: list[list[str]]
    property_note: str
    budget: dict[str, tuple[str, list[list[str]]]]
    scale: list[tuple[str, str]]
    warnings: list[str]
    cautions: list[str]
    figure_note: str
    footer: str
    extra: dict[str, Any] = field(default_factory=dict)


def report_format(path: str | Path) -> str:
    """``"html"`` or ``"pdf"`` from the suffix of `path`.

    Raises
    ------
    InputError
        Any other suffix; the message names the ones that work.

    Examples
    --------
    >>> report_format("joist.PDF")
    'pdf'
    """
    suffix = Path(path).suffix.lower()
    if suffix not in REPORT_FORMATS:
        raise InputError(f"--report {path}: a report is written as {' or '.join(REPORT_FORMATS)}; "
                         f"{suffix or 'no suffix'} is neither")
    return REPORT_FORMATS[suffix]


def report_bytes(path: str | Path, result: Result, *, units: str = "mm", photo: Any = None,
                 characteristic: bool = False, now: _dt.datetime | None = None) -> bytes:
    """The report for `path`'s suffix (see :func:`report_format`) as bytes, ready to write atomically."""
    if report_format(path) == "pdf":
        return report_pdf(result, units=units, photo=photo, characteristic=characteristic, now=now)
    return report_html(result, units=units, photo=photo, characteristic=characteristic, now=now).encode("utf-8")


def report_content(result: Result, *, units: str = "mm", photo: Any = None, characteristic: bool = False,
                   now: _dt.datetime | None = None) -> ReportContent:
    """Everything a report says about `result`, formatted, in `units`.

    Parameters
    ----------
    result : Result
    units : {"mm", "cm", "m", "in"}
    photo : PhotoMeasurement, optional
        For photos: its review picture and scale reference go into the report.
    characteristic : bool
        Add the 5th-percentile (low characteristic) column.
    now : datetime, optional
        The report's date (default: now, local time).
    """
    now = now or _dt.datetime.now().astimezone()
    m = result.measurement
    src = m.source
    unc = result.uncertainty
    head = [("member", result.name),
            ("date", now.strftime("%Y-%m-%d %H:%M %Z").strip()),
            ("tool", f"tracer {__version__}"),
            ("input", f"{src.get('kind', 'input')} {src.get('path') or '(no file)'}"),
            ("SHA-256", str(src.get("sha256", "(none)"))),
            ("geometry", describe_geometry(result)),
            ("axes", "x right, y up; Ix, Iy, Ixy about the centroid; theta counter-clockwise from +x"
             + (f"; turned {src['aligned']['rotation_deg']:.6g}° onto the principal axes" if "aligned" in src
                else "")),
            ("lengths", units)]
    if unc is not None:
        head.append(("uncertainty", f"u standard uncertainty (k = 1); U = 2u expanded (k = 2, about 95 % "
                                    f"coverage); Monte Carlo {unc.draws} draws, seed {unc.seed} (JCGM 100, JCGM 101)"))
    else:
        head.append(("uncertainty", "none stated for the readings: no u is reported"))
    values, u, p05 = result.values(), result.u, result.p05
    columns = ["property", "meaning", "value", "u (k = 1)", "U (k = 2)", "unit"]
    if characteristic:
        columns.insert(5, "5th pct")
    rows = []
    for key in result.keys:
        v = from_mm(values[key], key, units)
        if key in u:
            uk = from_mm(u[key], key, units)
            value, U = format_measured(v, 2.0 * uk).split(" ± ")
            u_text = format_measured(v, uk).split(" ± ")[1]
        else:
            value, U, u_text = format_value(v), "n/a", "n/a"
        row = [key, PROPERTY_NAMES[key], value, u_text, U, property_unit(key, units)]
        if characteristic:
            row.insert(5, format_value(from_mm(p05[key], key, units)) if key in p05 else "n/a")
        rows.append(row)
    note = ("Each value is rounded to the place of the second significant digit of U (JCGM 100:2008, 7.2.6); "
            "u and U are written in the value's notation.")
    budget: dict[str, tuple[str, list[list[str]]]] = {}
    if unc is not None:
        for key, entries in unc.budget.items():
            unit = property_unit(key, units)
            title = f"{key} (u = {_u_text(result, key, units)} {unit})"
            budget[key] = (title, [[name, f"{100 * share:.1f} %", f"{_u(part, key, units)} {unit}"]
                                   for name, share, part in budget_rows(entries)])
    scale = _scale_rows(src) if src.get("kind") == "photo" else []
    figure_note = ("Drawn to true scale (equal axes) in the input's own coordinates. Dimensions: the overall "
                   "width and depth, and the distances from the centroid to the extreme fibres about x (top, "
                   "bottom) and y (left, right). The principal axes run through the centroid: axis 1 carries "
                   f"I1, axis 2 carries I2; theta = {round(result.properties.theta, 2) + 0.0:.2f}°. Diamonds mark the fibres "
                   "farthest from each principal axis.")
    footer = f"{result.name} · tracer {__version__} · {now.strftime('%Y-%m-%d')}"
    return ReportContent(title=result.name, head=head, property_columns=columns, properties=rows,
                         property_note=note, budget=budget, scale=scale, warnings=list(result.warnings),
                         cautions=list(CAUTIONS), figure_note=figure_note, footer=footer)


def report_html(result: Result, *, units: str = "mm", photo: Any = None, characteristic: bool = False,
                now: _dt.datetime | None = None) -> str:
    """The report as one self-contained HTML page (figures inline, no addresses)."""
    from .plot import budget_figure, figure_svg, section_figure

    c = report_content(result, units=units, photo=photo, characteristic=characteristic, now=now)
    e = html.escape
    parts = [f'<header><p class="kind">Section properties report</p><h1>{e(c.title)}</h1></header>',
             '<table class="head">' + "".join(f"<tr><th>{e(k)}</th><td>{e(v)}</td></tr>" for k, v in c.head)
             + "</table>",
             f'<p class="caution"><strong>Screening only.</strong> {e(c.cautions[0])}</p>']
    fig = section_figure(result.measurement.section, result.properties, units=units)
    parts.append(f'<section><h2>The section</h2><figure class="section">{figure_svg(fig)}'
                 f"<figcaption>{e(c.figure_note)}</figcaption></figure></section>")
    if photo is not None:
        from .overlay import overlay_bytes

        jpg = overlay_bytes(photo, result.properties, result.u, ext=".jpg", max_side=_PHOTO_SIDE)
        parts.append('<section><h2>The photo and the trace</h2><figure class="photo">'
                     f'<img alt="the photo with the traced outline" src="data:image/jpeg;base64,'
                     f'{base64.b64encode(jpg).decode("ascii")}">'
                     "<figcaption>Traced outline green, holes orange, scale reference marks blue, centroid and "
                     "principal axes red (axis 2 dashed).</figcaption></figure>"
                     "<h3>Scale reference</h3>" + _html_pairs(c.scale) + "</section>")
    heads = "".join(f"<th>{e(h)}</th>" for h in c.property_columns)
    body = "".join("<tr>" + "".join(f'<td class="{_cls(i, c.property_columns)}">{e(v)}</td>'
                                    for i, v in enumerate(r)) + "</tr>" for r in c.properties)
    parts.append(f'<section><h2>Properties</h2><table class="properties"><thead><tr>{heads}</tr></thead>'
                 f'<tbody>{body}</tbody></table><p class="note">{e(c.property_note)}</p></section>')
    budget = ['<section><h2>Uncertainty budget</h2>']
    if c.budget:
        budget.append("<p class=\"note\">Each input's share of u² and its own part of u (k = 1).</p>")
        bf = budget_figure(result.uncertainty.budget)
        if bf is not None:
            budget.append(f'<figure class="budget">{figure_svg(bf)}</figure>')
        budget.append('<div class="budgets">')
        for title, rows in c.budget.values():
            budget.append(f'<table class="budget"><caption>{e(title)}</caption><thead><tr><th>input</th>'
                          '<th class="num">share of u²</th><th class="num">part of u</th></tr></thead><tbody>'
                          + "".join(f'<tr><td>{e(a)}</td><td class="num">{e(b)}</td><td class="num">{e(d)}</td></tr>'
                                    for a, b, d in rows) + "</tbody></table>")
        budget.append("</div>")
    else:
        budget.append("<p>No uncertainty was stated, so there is no budget.</p>")
    parts.append("".join(budget) + "</section>")
    warn = "".join(f"<li>{e(w)}</li>" for w in c.warnings) or "<li>none</li>"
    parts.append(f'<section><h2>Warnings</h2><ul class="warnings">{warn}</ul></section>')
    parts.append('<section class="cautions"><h2>Cautions</h2>' + "".join(f"<p>{e(t)}</p>" for t in c.cautions)
                 + "</section>")
    parts.append(f'<footer>{e(c.footer)}</footer>')
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{e(c.title)} · section properties</title>\n<style>{_CSS}</style>\n</head>\n<body>\n<main>\n"
            + "\n".join(parts) + "\n</main>\n</body>\n</html>\n")


def report_pdf(result: Result, *, units: str = "mm", photo: Any = None, characteristic: bool = False,
               now: _dt.datetime | None = None) -> bytes:
    """The report as PDF bytes: A4 pages laid out with matplotlib text, tables and figures."""
    import matplotlib
    from matplotlib.backends.backend_pdf import PdfPages

    from .pages import Pages
    from .plot import STYLE, draw_budget, draw_section

    c = report_content(result, units=units, photo=photo, characteristic=characteristic, now=now)
    with matplotlib.rc_context(STYLE):
        pages = Pages()
        pages.text("Section properties report", size=8, color="#555555")
        pages.text(c.title, size=15, weight="bold", gap=0.12)
        pages.pairs(c.head)
        pages.boxed(f"Screening only. {c.cautions[0]}")
        pages.heading("The section")
        pages.figure(lambda ax: draw_section(ax, result.measurement.section, result.properties, units=units),
                     height=pages.room() - 1.2, legend=0.75)
        pages.text(c.figure_note, size=7.5, color="#444444")
        if photo is not None:
            from .overlay import overlay_image

            pages.new_page()
            pages.heading("The photo and the trace")
            img = overlay_image(photo, result.properties, result.u)[:, :, ::-1]
            h_in = min(pages.width * img.shape[0] / img.shape[1], 5.6)
            pages.figure(lambda ax: (ax.imshow(img, interpolation="antialiased"), ax.set_axis_off()), height=h_in)
            pages.text("Traced outline green, holes orange, scale reference marks blue, centroid and principal axes "
                       "red (axis 2 dashed).", size=7.5, color="#444444")
            pages.heading("Scale reference")
            pages.pairs(c.scale)
        pages.new_page()
        pages.heading("Properties")
        widths = [0.8, 2.55, 0.9, 0.75, 0.75, 0.6] if not characteristic else [0.8, 2.25, 0.85, 0.7, 0.7, 0.75, 0.55]
        aligns = ["left", "left", "right", "right", "right", "left"] if not characteristic else \
            ["left", "left", "right", "right", "right", "right", "left"]
        pages.table(c.property_columns, c.properties, widths, aligns)
        pages.text(c.property_note, size=7.5, color="#444444", gap=0.08)
        pages.new_page()
        pages.heading("Uncertainty budget")
        if c.budget:
            pages.text("Each input's share of u² and its own part of u (k = 1).", size=8)
            pages.figure(lambda ax: draw_budget(ax, result.uncertainty.budget), height=2.4, inset=1.9)
            for title, rows in c.budget.values():
                pages.text(title, size=8.5, weight="bold", gap=0.06)
                pages.table(["input", "share of u²", "part of u"], rows, [3.4, 1.1, 1.5], ["left", "right", "right"])
        else:
            pages.text("No uncertainty was stated, so there is no budget.")
        pages.heading("Warnings")
        for w in c.warnings or ["none"]:
            pages.text(w, bullet=True, size=8.5)
        pages.heading("Cautions")
        for t in c.cautions:
            pages.text(t, size=8.5, gap=0.04)
        return pages.pdf(PdfPages, footer=c.footer, title=c.title)


def pdf_page_count(data: bytes) -> int:
    """The number of pages of a PDF written by :func:`report_pdf` (its page objects, counted)."""
    import re

    return len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", data))


# ---------------------------------------------------------------------------------------------






def _u(v_mm: float, key: str, units: str) -> str:
    from .table import format_uncertainty

    return format_uncertainty(from_mm(v_mm, key, units))


def _u_text(result: Result, key: str, units: str) -> str:
    return _u(result.u.get(key, float("nan")), key, units)


def _scale_rows(src: Any) -> list[tuple[str, str]]:
    """The scale reference and the edge model of a photo, in words, from ``source``."""
    sc = dict(src.get("scale", {}))
    rows: list[tuple[str, str]] = []
    method = sc.pop("method", "?")
    if method == "target":
        cols, rws = sc.pop("inner_corners", ["?", "?"])
        rows.append(("reference", f"printed checkerboard, {cols} × {rws} inner corners of {sc.pop('square_mm'):g} mm "
                                  "squares, fitted by a homography (perspective removed)"))
        rows.append(("corners found", str(sc.pop("corners_found", "?"))))
        rows.append(("corner residual", f"{sc.pop('corner_residual_mm_rms'):.3g} mm RMS (fit against the printed grid)"))
    elif method == "two points":
        pts = sc.pop("points_px")
        rows.append(("reference", f"two image points {pts[0][0]:g},{pts[0][1]:g} and {pts[1][0]:g},{pts[1][1]:g} px, "
                                  f"{sc.pop('length_mm'):g} mm apart; no perspective correction"))
    elif method == "dpi":
        rows.append(("reference", f"scan at {sc.pop('dpi'):g} dpi (from {sc.pop('from', '?')})"))
    elif method == "known":
        which = "depth" if "depth" in sc else "width"
        rows.append(("reference", f"the member's own {which}, {sc.pop(which):g} mm as read"))
    else:
        rows.append(("reference", str(method)))
    check = sc.pop("known_check", None)
    if check:
        which = "depth" if "depth" in check else "width"
        rows.append(("cross-check", f"traced {which} {check['measured_mm']:.2f} mm against {check[which]:g} mm read: "
                                    f"{check['difference_percent']:+.2f} %"))
    labels = {"mm_per_px": ("scale", "{:.5g} mm per px"), "assumed_max_tilt_deg": ("tilt allowed for", "up to {:g}°"),
              "extent_px": ("traced extent", "{:.1f} px")}
    for k, v in sc.items():
        label, fmt = labels.get(k, (k.replace("_", " "), "{}"))
        rows.append((label, fmt.format(v)))
    edge = src.get("edge", {})
    if edge:
        rows.append(("edge offset", f"{edge.get('offset_mm', float('nan')):.3g} mm (systematic, from light and "
                                    "threshold; u of the whole boundary)"))
        rows.append(("edge scatter", f"{edge.get('scatter_mm', float('nan')):.3g} mm, correlated over "
                                     f"{edge.get('correlation_mm', float('nan')):.3g} mm"))
    if "image_px" in src:
        rows.append(("photo", f"{src['image_px'][0]} × {src['image_px'][1]} px"))
    return rows


def _html_pairs(rows: list[tuple[str, str]]) -> str:
    e = html.escape
    return '<table class="head">' + "".join(f"<tr><th>{e(k)}</th><td>{e(v)}</td></tr>" for k, v in rows) + "</table>"


def _cls(i: int, columns: list[str]) -> str:
    name = columns[i]
    return "key" if i == 0 else ("num" if name not in ("meaning", "unit") else name)


_CSS = """
:root { --ink: #1b1f24; --muted: #5b636d; --rule: #c9ced4; --band: #f3f5f7; --warn: #b07a1e; }
* { box-sizing: border-box; }
html { font-family: "DejaVu Sans", "Liberation Sans", Arial, Helvetica, sans-serif; color: var(--ink);
       font-size: 10.5pt; line-height: 1.4; background: #ffffff; }
body { margin: 0; }
main { max-width: 180mm; margin: 0 auto; padding: 10mm 6mm 14mm; }
header .kind { margin: 0; color: var(--muted); font-size: 9pt; letter-spacing: 0.04em; text-transform: uppercase; }
h1 { font-size: 19pt; margin: 1mm 0 3mm; font-weight: 700; }
h2 { font-size: 13pt; margin: 7mm 0 2mm; padding-bottom: 1mm; border-bottom: 1.5px solid var(--ink);
     break-after: avoid; page-break-after: avoid; }
h3 { font-size: 11pt; margin: 4mm 0 1.5mm; break-after: avoid; }
table { border-collapse: collapse; width: 100%; }
table.head { font-size: 9.5pt; }
table.head th { text-align: left; font-weight: normal; color: var(--muted); width: 28mm; vertical-align: top;
                padding: 0.6mm 3mm 0.6mm 0; }
table.head td { padding: 0.6mm 0; overflow-wrap: anywhere; }
.caution { border: 1px solid var(--warn); background: #fbf3e4; padding: 2.5mm 3.5mm; margin: 4mm 0; font-size: 9.5pt; }
figure { margin: 0; break-inside: avoid; page-break-inside: avoid; }
figure svg { display: block; max-width: 100%; height: auto; margin: 0 auto; }
figure img { display: block; width: 100%; height: auto; }
figure.photo img { max-height: 130mm; object-fit: contain; border: 1px solid var(--rule); }
figcaption { font-size: 8.5pt; color: var(--muted); margin-top: 1.5mm; }
table.properties { font-size: 9.5pt; font-variant-numeric: tabular-nums; }
table.properties th { text-align: left; border-bottom: 1.5px solid var(--ink); padding: 1mm 2mm; white-space: nowrap; }
table.properties td { padding: 0.8mm 2mm; border-bottom: 1px solid var(--rule); }
table.properties tbody tr:nth-child(even) { background: var(--band); }
td.key { font-weight: 700; white-space: nowrap; }
td.num, th.num { text-align: right; white-space: nowrap; }
table.properties th:nth-child(n+3) { text-align: right; }
table.properties th:last-child { text-align: left; }
td.unit { white-space: nowrap; }
.note { font-size: 8.5pt; color: var(--muted); }
.budgets { display: grid; grid-template-columns: repeat(auto-fit, minmax(80mm, 1fr)); gap: 2mm 6mm; }
table.budget { font-size: 9pt; }
table.budget caption { text-align: left; font-weight: 700; padding: 1mm 0; }
table.budget th { text-align: left; border-bottom: 1px solid var(--ink); padding: 0.6mm 2mm; }
table.budget th.num { text-align: right; }
table.budget td { padding: 0.5mm 2mm; border-bottom: 1px solid var(--rule); }
ul.warnings { padding-left: 5mm; font-size: 9.5pt; }
ul.warnings li { margin: 0.8mm 0; }
.cautions p { font-size: 9.5pt; }
footer { margin-top: 8mm; padding-top: 2mm; border-top: 1px solid var(--rule); color: var(--muted); font-size: 8pt; }
thead { display: table-header-group; }
tr, caption { break-inside: avoid; page-break-inside: avoid; }
table.budget { break-inside: avoid; page-break-inside: avoid; }
@page { size: auto; margin: 14mm 15mm 16mm; }
@media print {
  html { font-size: 9.5pt; }
  main { max-width: none; padding: 0; }
  h2 { margin-top: 5mm; }
  section { break-inside: auto; }
  .caution { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  table.properties tbody tr:nth-child(even) { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""
