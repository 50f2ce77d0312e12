"""The report: HTML read back by the standard library's parser, the PDF's pages counted in its
bytes, the numbers checked against closed forms, and the page rendered by headless Chromium."""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from tracer.section.properties import PROPERTY_KEYS
from tracer.units import property_unit

from tests.common import run_tracer, sheet_file

# An invented test section: a 100 x 200 mm rectangle with a centred 60 x 120 mm rectangular hole.
# Closed forms (any strength-of-materials text): A = BH - bh, Ix = (BH^3 - bh^3)/12, Iy = (HB^3 - hb^3)/12.
SHEET = """units = "mm"
name = "hollow block (invented test section)"
[uncertainty]
reading = 0.2
[outline]
points = [[0, 0], [100, 0], [100, 200], [0, 200]]
holes = [[[20, 40], [80, 40], [80, 160], [20, 160]]]
"""
CLOSED = {"A": 100 * 200 - 60 * 120, "Ix": (100 * 200**3 - 60 * 120**3) / 12, "Iy": (200 * 100**3 - 120 * 60**3) / 12,
          "cx": 50.0, "cy": 100.0}


class _Page(HTMLParser):
    """Collects the rows of every table (by class), all attributes, and the text."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, list[list[str]]] = {}
        self.attrs: list[tuple[str, str, str]] = []
        self.text: list[str] = []
        self._table: str | None = None
        self._row: list[str] | None = None
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        self.attrs += [(tag, k, v or "") for k, v in attrs]
        if tag == "table":
            self._table = dict(attrs).get("class", "")
            self.tables.setdefault(self._table, [])
        elif tag == "tr":
            self._row = []
        elif tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None and self._row is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None and self._table is not None:
            self.tables[self._table].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)


def _num(text: str) -> float:
    return float(text)                   # engineering notation like 27.84e6 is a Python float literal


run = run_tracer


@pytest.fixture
def sheet(tmp_path) -> Path:
    return sheet_file(tmp_path, "block.toml", SHEET)


def _report(sheet: Path, out: Path, *extra: str) -> dict:
    r = run("measure", str(sheet), "--report", str(out), "--json", str(out.with_suffix(".json")), *extra)
    assert r.returncode == 0, r.stderr
    assert f"wrote {out}" in r.stdout
    return json.loads(out.with_suffix(".json").read_text())


@pytest.mark.parametrize("units,factor", [("mm", 1.0), ("in", 25.4)])
def test_html_holds_every_property_with_unit_and_uncertainty(sheet, tmp_path, units, factor):
    out = tmp_path / "block.html"
    doc = _report(sheet, out, "--units", units)
    page = _Page()
    page.feed(out.read_text(encoding="utf-8"))
    page.close()
    rows = page.tables["properties"]
    assert rows[0] == ["property", "meaning", "value", "u (k = 1)", "U (k = 2)", "unit"]
    by_key = {r[0]: r for r in rows[1:]}
    assert list(by_key) == list(PROPERTY_KEYS)
    for key in PROPERTY_KEYS:
        _, meaning, value, u, U, unit = by_key[key]
        assert unit == property_unit(key, units) and meaning, key
        want = doc["properties"][key]
        assert _num(value) == pytest.approx(want["value"], abs=_num(U) / 10 + 1e-12), key
        # U = 2u (k = 2); both carry two significant digits, so they agree to the rounding.
        assert _num(U) == pytest.approx(2 * _num(u), rel=0.1, abs=1e-12), key
        assert _num(u) == pytest.approx(want["u"], rel=0.05, abs=1e-12), key
    for key, ref in CLOSED.items():       # the closed forms, in the report's unit
        power = {"A": 2, "Ix": 4, "Iy": 4, "cx": 1, "cy": 1}[key]
        got, U = _num(by_key[key][2]), _num(by_key[key][4])
        assert abs(got - ref / factor**power) <= U / 10, key
    head = dict(r for r in page.tables["head"] if len(r) == 2)
    assert head["SHA-256"] == hashlib.sha256(sheet.read_bytes()).hexdigest()
    assert head["member"] == "hollow block (invented test section)" and head["tool"].startswith("tracer ")
    assert re.fullmatch(r"\d{4}-\d\d-\d\d \d\d:\d\d.*", head["date"]) and head["lengths"] == units
    text = " ".join(" ".join(page.text).split())
    for w in doc["warnings"]:
        assert " ".join(w.split()) in text
    assert "not a design check" in text and "qualified engineer" in text and "local building code" in text
    budget = page.tables["budget"]
    assert any(r[0] == "outline.points" or r[0].startswith("outline") for r in budget if len(r) == 3)


def test_html_is_self_contained(sheet, tmp_path):
    out = tmp_path / "block.html"
    _report(sheet, out)
    text = out.read_text(encoding="utf-8")
    # No address of any kind; url(#id) is a clip path inside the page itself.
    assert not re.search(r"(?i)(https?|ftp|file):|//[a-z0-9-]+\.[a-z]{2,}|@import|url\((?!#)", text)
    page = _Page()
    page.feed(text)
    for tag, attr, value in page.attrs:
        assert attr not in ("href", "xlink:href") or value.startswith("#"), (tag, attr, value)
        assert attr != "src" or value.startswith("data:"), (tag, attr)
    assert not any(tag in ("link", "script", "iframe") for tag, _, _ in page.attrs)
    assert "<svg" in text and "@page" in text and "@media print" in text


def test_pdf_has_the_expected_pages(sheet, tmp_path):
    out = tmp_path / "block.pdf"
    _report(sheet, out)
    data = out.read_bytes()
    assert data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF")
    # Page objects, counted in the file (ISO 32000-1, 7.7.3.3: a page is a dictionary of /Type /Page).
    pages = re.findall(rb"/Type\s*/Page(?![a-zA-Z])", data)
    assert len(pages) == 3                 # title and section; properties; budget, warnings, cautions
    # A4 is 210 x 297 mm (ISO 216) = 595.28 x 841.89 pt.
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    assert len(boxes) == 3 and all(abs(float(w) - 595.28) < 0.5 and abs(float(h) - 841.89) < 0.5 for w, h in boxes)


def test_a_bad_report_suffix_is_refused_before_anything_is_written(sheet, tmp_path):
    r = run("measure", str(sheet), "--report", str(tmp_path / "block.docx"), "--json", str(tmp_path / "b.json"))
    assert r.returncode == 2 and "a report is written as .html or .htm or .pdf" in r.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["block.toml"]


def test_photo_report_has_the_picture_and_the_scale_reference(tmp_path):
    from tracer.inputs.photo.pipeline import measure_photo
    from tracer.inputs.photo.renders.samples import sample_settings
    from tracer.outputs.report import report_html, report_pdf
    from tracer.result import measure

    path, settings = sample_settings("pitted-channel")
    pm = measure_photo(path, **settings)
    result = measure(pm.measurement, draws=300)
    text = report_html(result, photo=pm)
    page = _Page()
    page.feed(text)
    imgs = [v for tag, a, v in page.attrs if tag == "img" and a == "src"]
    assert len(imgs) == 1 and imgs[0].startswith("data:image/jpeg;base64,")
    head = dict(r for r in page.tables["head"] if len(r) == 2)
    rms = result.measurement.source["scale"]["corner_residual_mm_rms"]
    assert head["corner residual"].startswith(f"{rms:.3g} mm RMS")
    assert head["corners found"] == "24"               # a 6 x 4 board has 24 inner corners
    assert head["SHA-256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    pdf = report_pdf(result, photo=pm)
    assert len(re.findall(rb"/Type\s*/Page(?![a-zA-Z])", pdf)) == 4      # plus the photo page


def _chromium() -> str | None:
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None and not os.environ.get("CI"):
        pytest.skip("chromium is not installed (CI installs it; .ci/run)")
    assert exe is not None, "chromium must be installed in CI (.ci/run installs Debian's chromium)"
    return exe


def _screenshot(exe: str, html: Path, png: Path, profile: Path) -> np.ndarray:
    import cv2

    cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync", "--hide-scrollbars",
           f"--user-data-dir={profile}", "--window-size=1240,1754", f"--screenshot={png}", html.as_uri()]
    r = subprocess.run(cmd, capture_output=True, text=True, timeout=180)
    assert r.returncode == 0 and png.exists(), r.stderr[-2000:]
    img = cv2.imread(str(png), cv2.IMREAD_GRAYSCALE)
    assert img is not None and img.shape == (1754, 1240)
    return img.astype(float)


def test_chromium_renders_the_report_with_its_table(sheet, tmp_path):
    exe = _chromium()
    out = tmp_path / "block.html"
    _report(sheet, out)
    shown = _screenshot(exe, out, tmp_path / "shown.png", tmp_path / "profile")
    assert shown.std() > 20                                  # not a blank page
    # The same page with the property table's text made invisible: what differs is the table.
    hidden = out.read_text(encoding="utf-8").replace(
        "</style>", "table.properties td, table.properties th { color: transparent !important; }</style>")
    (tmp_path / "hidden.html").write_text(hidden, encoding="utf-8")
    blank = _screenshot(exe, tmp_path / "hidden.html", tmp_path / "hidden.png", tmp_path / "profile")
    changed = np.abs(shown - blank) > 60
    assert changed.sum() > 3000, changed.sum()               # many glyphs' worth of pixels
    # ... and they are ink: darker where the text shows, most of them dark (anti-aliased edges aside).
    assert (shown[changed] < blank[changed]).mean() > 0.99 and (shown[changed] < 128).mean() > 0.5
    rows, cols = np.nonzero(changed)
    assert 0 < rows.min() < rows.max() < 1754 and cols.max() - cols.min() > 500   # across the column
