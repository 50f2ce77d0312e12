"""Printable targets: true scale, a findable checkerboard, valid SVG and PDF."""

from __future__ import annotations

import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from tracer.errors import InputError
from tracer.inputs.photo.target import PAPERS, target_sheet, write_target

cv2 = pytest.importorskip("cv2")


def test_the_layout_is_a_findable_checkerboard_at_true_scale():
    cols, rows, sq = 9, 6, 20.0
    sheet = target_sheet(cols, rows, sq)
    px_per_mm = 4
    W, H = sheet.paper
    img = np.full((int(H * px_per_mm), int(W * px_per_mm)), 255, np.uint8)
    for x, y, w, h in sheet.squares:
        r0, r1 = int(round((H - y - h) * px_per_mm)), int(round((H - y) * px_per_mm))
        c0, c1 = int(round(x * px_per_mm)), int(round((x + w) * px_per_mm))
        img[r0:r1, c0:c1] = 0
    ok, corners = cv2.findChessboardCornersSB(img, (cols, rows))
    assert ok
    steps = np.hypot(*np.diff(corners.reshape(-1, 2)[:cols], axis=0).T) / px_per_mm
    assert steps == pytest.approx(sq, abs=0.3)
    assert sheet.bar[2] == 100.0                     # the check bar is 100 mm long


def test_svg_is_true_scale(tmp_path):
    write_target(tmp_path / "t.svg", 9, 6, 20.0)
    root = ET.parse(tmp_path / "t.svg").getroot()
    assert root.get("width") == f"{PAPERS['a4'][0]}mm" and root.get("height") == f"{PAPERS['a4'][1]}mm"
    rects = root.findall(".//{http://www.w3.org/2000/svg}rect")
    squares = [r for r in rects if r.get("width") == "20.000"]
    assert len(squares) == 35                        # (9 + 1) x (6 + 1) squares, half of them black


def test_pdf_is_valid_and_true_scale(tmp_path):
    write_target(tmp_path / "t.pdf", 9, 6, 20.0, paper="letter")
    data = (tmp_path / "t.pdf").read_bytes()
    assert data.startswith(b"%PDF-1.4") and data.rstrip().endswith(b"%%EOF")
    box = re.search(rb"/MediaBox \[0 0 ([\d.]+) ([\d.]+)\]", data)
    # 1 in = 72 pt = 25.4 mm (PDF 1.4 reference, default user space).
    assert float(box.group(1)) == pytest.approx(279.4 * 72 / 25.4, abs=0.01)
    xref = int(re.search(rb"startxref\n(\d+)", data).group(1))
    offsets = [int(m) for m in re.findall(rb"(\d{10}) 00000 n", data[xref:])]
    assert all(re.match(rb"\d+ 0 obj", data[o:o + 12]) for o in offsets)
    square_pt = f"{20 * 72 / 25.4:.3f}".encode()
    assert data.count(square_pt + b" " + square_pt + b" re f") == 35


def test_a_board_too_big_for_the_paper_is_refused():
    with pytest.raises(InputError, match="does not fit on A4"):
        target_sheet(12, 9, 25.0)


def test_cli_writes_a_target(tmp_path):
    r = subprocess.run([sys.executable, "-m", "tracer", "target", "--out", str(tmp_path / "t.pdf")],
                       capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    assert "--target 9x6:20mm" in r.stdout and (tmp_path / "t.pdf").stat().st_size > 500
    bad = subprocess.run([sys.executable, "-m", "tracer", "target", "--out", str(tmp_path / "t.png")],
                         capture_output=True, text=True)
    assert bad.returncode == 2 and "as .svg or .pdf" in bad.stderr
