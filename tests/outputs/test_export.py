"""tracer export: each format read back by a library that knows it (xml, ezdxf, csv, tomllib via
tracer's own sheet reader) and checked against shapely's geometry of the sheet as written."""

from __future__ import annotations

import csv
import json
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
import shapely

from tracer.section.properties import PROPERTY_KEYS, section_properties
from tracer.inputs.sheet import read_sheet

from tests.common import run_tracer, sheet_file

EXAMPLES = Path(__file__).parents[2] / "tracer" / "examples"

# An invented test section: a 100 x 60 mm plate with a rectangular and a triangular hole, placed
# off the origin so that a missing offset or y flip shows.
OUTER = [(-20, -10), (80, -10), (80, 50), (-20, 50)]
HOLES = [[(0, 0), (30, 0), (30, 20), (0, 20)], [(45, 25), (60, 25), (52, 40)]]
SHEET = f"""units = "mm"
name = "plate with two holes (invented test section)"
[uncertainty]
reading = 0.1
[outline]
points = {[list(p) for p in OUTER]}
holes = {[[list(p) for p in h] for h in HOLES]}
"""
# Two separate invented parts, one with a hole.
PARTS = """units = "mm"
name = "two flats (invented test section)"
[[outline.parts]]
points = [[0, 0], [10, 0], [10, 100], [0, 100]]
[[outline.parts]]
points = [[30, 0], [70, 0], [70, 8], [30, 8]]
holes = [[[40, 2], [44, 2], [44, 6], [40, 6]]]
"""
# The reference: shapely's polygon of the points as written (closed form: 100*60 - 30*20 - 15*15/2).
REF = shapely.Polygon(OUTER, HOLES)
assert REF.area == 100 * 60 - 30 * 20 - 15 * 15 / 2


run = run_tracer


@pytest.fixture
def sheet(tmp_path) -> Path:
    return sheet_file(tmp_path, "plate.toml", SHEET)


def export(src: Path, out: Path, *extra: str) -> Path:
    r = run("export", str(src), "--to", str(out), *extra)
    assert r.returncode == 0, r.stderr
    assert f"wrote {out}" in r.stdout
    return out


def _svg_polygons(path: Path) -> tuple[ET.Element, list[shapely.Polygon]]:
    root = ET.parse(path).getroot()
    ns = {"s": "http://www.w3.org/2000/svg"}
    height = float(root.get("viewBox").split()[3])
    polys = []
    for el in root.findall("s:path", ns):
        assert el.get("fill-rule") == "evenodd"
        rings = []
        for sub in re.findall(r"M([^Z]+)Z", el.get("d")):
            pts = [tuple(float(v) for v in p.strip().lstrip("L").split(",")) for p in sub.split(" L")]
            rings.append([(x, height - y) for x, y in pts])          # back to y up
        polys.append(shapely.Polygon(rings[0], rings[1:]))
    return root, polys


def test_svg_is_true_scale_in_mm_with_holes(sheet, tmp_path):
    root, polys = _svg_polygons(export(sheet, tmp_path / "plate.svg"))
    x0, y0, x1, y1 = REF.bounds
    assert root.get("width") == f"{x1 - x0:g}mm" and root.get("height") == f"{y1 - y0:g}mm"
    assert [float(v) for v in root.get("viewBox").split()] == [0, 0, x1 - x0, y1 - y0]
    (poly,) = polys
    # Drawn from the top-left corner of the bounding box; y flipped back, the shape is the sheet's.
    moved = shapely.affinity.translate(REF, -x0, -y0)
    assert poly.area == pytest.approx(REF.area, rel=1e-9)
    assert poly.symmetric_difference(moved).area < 1e-9 * REF.area
    assert len(poly.interiors) == 2


def test_svg_stays_in_mm_whatever_the_units(sheet, tmp_path):
    root, _ = _svg_polygons(export(sheet, tmp_path / "plate.svg", "--units", "in"))
    assert root.get("width") == "100mm"


@pytest.mark.parametrize("units,factor,code", [("mm", 1.0, 4), ("cm", 10.0, 5), ("m", 1000.0, 6), ("in", 25.4, 1)])
def test_dxf_reads_back_with_ezdxf_to_the_same_area(sheet, tmp_path, units, factor, code):
    ezdxf = pytest.importorskip("ezdxf")
    doc = ezdxf.readfile(export(sheet, tmp_path / "plate.dxf", "--units", units))
    # $INSUNITS codes from the DXF reference (header section): 1 inches, 4 mm, 5 cm, 6 m.
    assert doc.header["$INSUNITS"] == code
    lines = list(doc.modelspace().query("LWPOLYLINE"))
    assert all(e.closed for e in lines)
    by_layer = {layer: [shapely.Polygon([p[:2] for p in e.get_points("xy")]) for e in lines if e.dxf.layer == layer]
                for layer in ("OUTLINE", "HOLES")}
    assert len(by_layer["OUTLINE"]) == 1 and len(by_layer["HOLES"]) == 2
    area = sum(p.area for p in by_layer["OUTLINE"]) - sum(p.area for p in by_layer["HOLES"])
    assert area * factor**2 == pytest.approx(REF.area, rel=1e-9)
    assert by_layer["OUTLINE"][0].bounds == pytest.approx([v / factor for v in REF.bounds], rel=1e-12)


def test_csv_has_ring_x_y_in_the_chosen_unit(sheet, tmp_path):
    text = export(sheet, tmp_path / "plate.csv", "--units", "cm").read_text()
    comments = [ln for ln in text.splitlines() if ln.startswith("#")]
    assert any("[cm]" in c for c in comments) and any("ring 1 is the outline" in c for c in comments)
    rows = list(csv.DictReader(ln for ln in text.splitlines() if not ln.startswith("#")))
    assert list(rows[0]) == ["ring", "x", "y"]
    rings = {}
    for r in rows:
        rings.setdefault(int(r["ring"]), []).append((10 * float(r["x"]), 10 * float(r["y"])))
    assert sorted(rings) == [1, 2, 3]
    poly = shapely.Polygon(rings[1], [rings[2], rings[3]])
    assert poly.area == pytest.approx(REF.area, rel=1e-12)
    assert shapely.Polygon(rings[1]).exterior.is_ccw and not shapely.LinearRing(rings[2]).is_ccw


def test_csv_numbers_parts_when_there_are_several(tmp_path):
    src = tmp_path / "parts.toml"
    src.write_text(PARTS)
    text = export(src, tmp_path / "parts.csv").read_text()
    rows = list(csv.DictReader(ln for ln in text.splitlines() if not ln.startswith("#")))
    assert list(rows[0]) == ["part", "ring", "x", "y"]
    assert sorted({(r["part"], r["ring"]) for r in rows}) == [("1", "1"), ("2", "1"), ("2", "2")]
    # Closed form: 10*100 + 40*8 - 4*4.
    rings = {}
    for r in rows:
        rings.setdefault((r["part"], r["ring"]), []).append((float(r["x"]), float(r["y"])))
    total = shapely.Polygon(rings["1", "1"]).area + shapely.Polygon(rings["2", "1"], [rings["2", "2"]]).area
    assert total == pytest.approx(10 * 100 + 40 * 8 - 4 * 4, rel=1e-12)


@pytest.mark.parametrize("example,units", [("waney-joist.toml", "mm"), ("reclaimed-i-beam.toml", "in"),
                                           ("notched-joist-parts.toml", "cm")])
def test_toml_measures_back_to_the_same_properties(tmp_path, example, units):
    out = export(EXAMPLES / example, tmp_path / "back.toml", "--units", units)
    before = section_properties(read_sheet(EXAMPLES / example).section).values()
    back = read_sheet(out)
    after = section_properties(back.section).values()
    assert back.source["sheet_units"] == units
    for key in PROPERTY_KEYS:
        if units == "mm":                      # written with repr: the same floats come back
            assert after[key] == before[key], key
        else:                                  # one rounding of each coordinate in the unit
            assert after[key] == pytest.approx(before[key], rel=1e-12, abs=1e-9), key


def test_json_is_the_result_json_in_the_chosen_unit(sheet, tmp_path):
    doc = json.loads(export(sheet, tmp_path / "plate.json", "--units", "cm").read_text())
    same = json.loads(run("measure", str(sheet), "--json", "-", "--units", "cm").stdout)
    assert doc == same
    assert doc["schema"] == "tracer/result/1" and doc["units"] == {"length": "cm"}
    assert doc["properties"]["A"]["value"] == pytest.approx(REF.area / 100, rel=1e-12)
    assert doc["properties"]["A"]["unit"] == "cm^2" and "u" in doc["properties"]["A"]


def test_unknown_suffix_and_bad_options_exit_2_and_write_nothing(sheet, tmp_path):
    out = tmp_path / "plate.step"
    r = run("export", str(sheet), "--to", str(out))
    assert r.returncode == 2
    assert "cannot export to .step; use one of .svg .dxf .csv .toml .json" in r.stderr
    assert not out.exists()
    r = run("export", str(sheet), "--to", str(tmp_path / "plate.svg"), "--target", "6x4:10mm")
    assert r.returncode == 2 and "--target is a photo option" in r.stderr
    r = run("export", str(sheet), "--to", str(tmp_path / "nowhere" / "plate.svg"))
    assert r.returncode == 2 and "its folder does not exist" in r.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plate.toml"]


def test_export_align_principal_writes_the_turned_section(tmp_path):
    src = tmp_path / "angle.toml"
    src.write_text('units = "mm"\n[shape]\nkind = "angle"\nh = 150\nb = 90\nt = 10\nr = 12\n')
    back = read_sheet(export(src, tmp_path / "turned.toml", "--align", "principal"))
    p = section_properties(back.section)
    # About its principal axes the product moment vanishes (textbook definition of principal axes).
    assert abs(p.Ixy) < 1e-9 * p.I1 and p.Ix == pytest.approx(p.I1, rel=1e-12)
