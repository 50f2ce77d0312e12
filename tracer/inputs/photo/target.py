"""Printable, true-scale calibration targets: a checkerboard and a 100 mm check bar.

Written as SVG (sizes in mm) or as a one-page vector PDF (sizes in points, 72 per inch), with no
library: the squares are exact rectangles. Print at 100 % ("actual size"), then measure the check
bar: if it is not 100 mm, the printer rescaled the page and the target must not be used.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ...errors import InputError
from ...files import write_atomic_bytes

__all__ = ["TargetSheet", "target_sheet", "write_target", "PAPERS"]

#: Paper sizes, landscape (width, height) [mm].
PAPERS = {"a4": (297.0, 210.0), "letter": (279.4, 215.9)}
_PT = 72.0 / 25.4          # points per mm


@dataclass(frozen=True)
class TargetSheet:
    """Where everything goes on the page, mm from the bottom-left corner (y up)."""

    paper: tuple[float, float]
    squares: list[tuple[float, float, float, float]]   # x, y, w, h of each black square
    bar: tuple[float, float, float, float]             # the 100 mm check bar
    ticks: list[tuple[float, float, float, float]]
    lines: list[str]                                   # text, top to bottom
    text_at: tuple[float, float]


def target_sheet(cols: int, rows: int, square: float, *, paper: str = "a4") -> TargetSheet:
    """Lay out a checkerboard of `cols` x `rows` inner corners and `square` [mm] squares."""
    if paper not in PAPERS:
        raise InputError(f"--paper {paper!r}; use one of {', '.join(PAPERS)}")
    W, H = PAPERS[paper]
    bw, bh = (cols + 1) * square, (rows + 1) * square
    if bw > W - 20 or bh > H - 45:
        raise InputError(f"a {cols}x{rows} board of {square:g} mm squares ({bw:g} x {bh:g} mm) does not fit on "
                         f"{paper.upper()} with its check bar; use smaller squares or fewer corners")
    x0 = (W - bw) / 2
    y0 = H - 10 - bh
    squares = [(x0 + c * square, y0 + (rows - r) * square, square, square)
               for r in range(rows + 1) for c in range(cols + 1) if (r + c) % 2 == 0]
    bar_y = y0 - 14
    bar = (x0, bar_y, 100.0, 2.0)
    ticks = [(x0 + k * 10.0 - 0.15, bar_y - 3.0, 0.3, 3.0) for k in range(11)]
    spec = f"{cols}x{rows}:{square:g}mm"
    lines = [f"tracer target {spec}: {cols} x {rows} inner corners, {square:g} mm squares.",
             "Print at 100 % (actual size). The bar above must measure 100 mm; if not, do not use this print.",
             f"Lay it flat in the plane of the cut face, then: tracer measure PHOTO --target {spec}"]
    return TargetSheet(paper=(W, H), squares=squares, bar=bar, ticks=ticks, lines=lines,
                       text_at=(x0, bar_y - 10))


def write_target(path: str | Path, cols: int, rows: int, square: float, *, paper: str = "a4") -> None:
    """Write the target as ``.svg`` or ``.pdf`` (by the suffix), atomically."""
    sheet = target_sheet(cols, rows, square, paper=paper)
    suffix = Path(path).suffix.lower()
    if suffix == ".svg":
        data = _svg(sheet)
    elif suffix == ".pdf":
        data = _pdf(sheet)
    else:
        raise InputError(f"{path}: write the target as .svg or .pdf")
    write_atomic_bytes(path, data)


def _svg(s: TargetSheet) -> bytes:
    W, H = s.paper

    def rect(x, y, w, h):                     # SVG's y runs down
        return f'<rect x="{x:.3f}" y="{H - y - h:.3f}" width="{w:.3f}" height="{h:.3f}"/>'

    body = [rect(*r) for r in s.squares + [s.bar] + s.ticks]
    tx, ty = s.text_at
    text = [f'<text x="{tx:.3f}" y="{H - ty + 6 * i:.3f}" font-family="Helvetica, Arial, sans-serif" '
            f'font-size="3.5">{_xml(t)}</text>' for i, t in enumerate(s.lines)]
    svg = (f'<?xml version="1.0" encoding="UTF-8"?>\n'
           f'<svg xmlns="http://www.w3.org/2000/svg" width="{W}mm" height="{H}mm" viewBox="0 0 {W} {H}">\n'
           f'<rect width="{W}" height="{H}" fill="white"/>\n<g fill="black">\n' + "\n".join(body + text)
           + "\n</g>\n</svg>\n")
    return svg.encode("utf-8")


def _pdf(s: TargetSheet) -> bytes:
    W, H = s.paper
    ops = ["0 g"]
    for x, y, w, h in s.squares + [s.bar] + s.ticks:
        ops.append(f"{x * _PT:.3f} {y * _PT:.3f} {w * _PT:.3f} {h * _PT:.3f} re f")
    tx, ty = s.text_at
    for i, t in enumerate(s.lines):
        ops.append(f"BT /F1 10 Tf {tx * _PT:.3f} {(ty - 6 * i) * _PT:.3f} Td ({_pdf_text(t)}) Tj ET")
    content = "\n".join(ops).encode("latin-1")
    objects = [
        b"<< /Type /Catalog /Pages 2 0 R >>",
        b"<< /Type /Pages /Kids [3 0 R] /Count 1 >>",
        (f"<< /Type /Page /Parent 2 0 R /MediaBox [0 0 {W * _PT:.3f} {H * _PT:.3f}] "
         f"/Resources << /Font << /F1 5 0 R >> >> /Contents 4 0 R >>").encode(),
        b"<< /Length " + str(len(content)).encode() + b" >>\nstream\n" + content + b"\nendstream",
        b"<< /Type /Font /Subtype /Type1 /BaseFont /Helvetica >>",
    ]
    out = bytearray(b"%PDF-1.4\n")
    offsets = []
    for i, obj in enumerate(objects, start=1):
        offsets.append(len(out))
        out += f"{i} 0 obj\n".encode() + obj + b"\nendobj\n"
    xref = len(out)
    out += f"xref\n0 {len(objects) + 1}\n0000000000 65535 f \n".encode()
    out += b"".join(f"{o:010d} 00000 n \n".encode() for o in offsets)
    out += f"trailer\n<< /Size {len(objects) + 1} /Root 1 0 R >>\nstartxref\n{xref}\n%%EOF\n".encode()
    return bytes(out)


def _xml(t: str) -> str:
    return t.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _pdf_text(t: str) -> str:
    return t.replace("\\", "\\\\").replace("(", "\\(").replace(")", "\\)").encode("latin-1", "replace").decode("latin-1")
