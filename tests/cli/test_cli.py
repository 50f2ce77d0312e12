"""The command line as a user runs it: tables, JSON, units, exit statuses, no half files."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from tracer.section.properties import PROPERTY_KEYS, section_properties
from tracer.section.shapes import i_section

EXAMPLES = Path(__file__).parents[2] / "tracer" / "examples"


def run(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "tracer", *args], capture_output=True, text=True, cwd=cwd)


def write(tmp_path: Path, name: str, text: str) -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


IPE200 = 'units = "mm"\nname = "IPE 200 as rolled"\n[shape]\nkind = "i-section"\nh = 200\nb = 100\ntw = 5.6\ntf = 8.5\nr = 12\n'


def test_help_has_examples():
    top = run("--help")
    assert top.returncode == 0 and "measure" in top.stdout and "examples:" in top.stdout
    sub = run("measure", "--help")
    assert sub.returncode == 0 and "--json" in sub.stdout and "tracer measure joist.toml --units in" in sub.stdout


def test_measure_prints_a_table_with_units_and_the_caution(tmp_path):
    r = run("measure", str(write(tmp_path, "ipe.toml", IPE200)))
    assert r.returncode == 0, r.stderr
    lines = {ln.split()[0]: ln.split() for ln in r.stdout.splitlines() if ln.strip()}
    # IPE 200: A = 28.48 cm^2, Iy = 1943 cm^4 (EN 10365:2017 tables, from memory).
    assert lines["A"][1:3] == ["2848.4", "mm^2"]
    assert lines["Ix"][1:3] == ["19.432e6", "mm^4"]
    assert "not a design check" in r.stdout and "qualified engineer" in r.stdout


def test_json_to_stdout_follows_the_schema(tmp_path):
    r = run("measure", str(write(tmp_path, "ipe.toml", IPE200)), "--json", "-", "--units", "cm")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)        # nothing but JSON on standard output
    assert doc["schema"] == "tracer/result/1"
    assert doc["tool"]["name"] == "tracer" and doc["name"] == "IPE 200 as rolled"
    assert doc["units"] == {"length": "cm"}
    assert list(doc["properties"]) == list(PROPERTY_KEYS)
    assert doc["properties"]["Ix"]["unit"] == "cm^4" and doc["properties"]["theta"]["unit"] == "deg"
    assert doc["properties"]["A"]["value"] == pytest.approx(28.48, abs=0.005)   # EN 10365 (from memory)
    assert doc["source"]["kind"] == "sheet" and len(doc["source"]["sha256"]) == 64
    assert all("u" not in v for v in doc["properties"].values())   # never a silent zero
    assert any("no u is reported" in w for w in doc["warnings"])


@pytest.mark.parametrize("units,factor", [("mm", 1.0), ("cm", 10.0), ("m", 1000.0), ("in", 25.4)])
def test_units_of_the_json(tmp_path, units, factor):
    out = tmp_path / "r.json"
    r = run("measure", str(write(tmp_path, "ipe.toml", IPE200)), "--json", str(out), "--units", units)
    assert r.returncode == 0, r.stderr
    doc = json.loads(out.read_text())
    ref = section_properties(i_section(h=200, b=100, tw=5.6, tf=8.5, r=12))
    assert doc["properties"]["Ix"]["value"] == pytest.approx(ref.Ix / factor**4, rel=1e-12)
    assert doc["properties"]["Zx"]["value"] == pytest.approx(ref.Zx / factor**3, rel=1e-12)
    assert doc["properties"]["theta"]["value"] == pytest.approx(ref.theta, abs=1e-12)
    assert f"wrote {out}" in r.stdout


def test_align_principal_puts_the_major_axis_on_x(tmp_path):
    sheet = write(tmp_path, "angle.toml", 'units = "mm"\n[shape]\nkind = "angle"\nh = 150\nb = 90\nt = 10\nr = 12\n')
    plain = json.loads(run("measure", str(sheet), "--json", "-").stdout)["properties"]
    r = run("measure", str(sheet), "--json", "-", "--align", "principal")
    doc = json.loads(r.stdout)
    p = doc["properties"]
    assert p["Ix"]["value"] == pytest.approx(plain["I1"]["value"], rel=1e-9)
    assert p["Iy"]["value"] == pytest.approx(plain["I2"]["value"], rel=1e-9)
    assert abs(p["Ixy"]["value"]) <= 1e-9 * plain["I1"]["value"] and abs(p["theta"]["value"]) < 1e-7
    assert doc["source"]["aligned"]["rotation_deg"] == pytest.approx(-plain["theta"]["value"])


def test_save_sheet_measures_back_the_same(tmp_path):
    out = tmp_path / "outline.toml"
    r = run("measure", str(EXAMPLES / "waney-joist.toml"), "--save-sheet", str(out), "--json", str(tmp_path / "a.json"))
    assert r.returncode == 0, r.stderr
    r2 = run("measure", str(out), "--json", "-")
    a = json.loads((tmp_path / "a.json").read_text())["properties"]
    b = json.loads(r2.stdout)["properties"]
    for key in PROPERTY_KEYS:
        assert b[key]["value"] == pytest.approx(a[key]["value"], rel=1e-9, abs=1e-9), key


@pytest.mark.parametrize("example", sorted(p.name for p in EXAMPLES.glob("*.toml")))
def test_every_bundled_example_runs(example):
    r = run("measure", str(EXAMPLES / example))
    assert r.returncode == 0, r.stderr
    assert "invented example" in r.stdout


@pytest.mark.parametrize("text,message", [
    ('units = "mm"\n[shape]\nkind = "i-section"\nh = 200\nb = 100\ntw = 120\ntf = 8\n',
     "tw = 120 mm must be less than b = 100 mm"),
    ('units = "mm"\n[shape]\nkind = "box"\nh = 100\nb = 100\n', "shape.t is missing"),
    ('units = "furlong"\n', "is not a length unit"),
    ('units = "mm"\n[outline]\npoints = [[0,0],[10,10],[10,0],[0,10]]\n', "outline crosses itself near point"),
])
def test_bad_sheets_exit_2_with_one_plain_line(tmp_path, text, message):
    out = tmp_path / "r.json"
    r = run("measure", str(write(tmp_path, "bad.toml", text)), "--json", str(out))
    assert r.returncode == 2
    assert message in r.stderr and r.stderr.startswith("tracer: ")
    assert len(r.stderr.strip().splitlines()) <= 2 and "Traceback" not in r.stderr
    assert not out.exists() and list(tmp_path.iterdir()) == [tmp_path / "bad.toml"]   # no half output


def test_usage_errors_exit_2(tmp_path):
    assert run("measure", str(tmp_path / "missing.toml")).returncode == 2
    r = run("measure", str(tmp_path / "photo.jpg"))
    assert r.returncode == 2 and "no such file" in r.stderr
    (tmp_path / "photo.jpg").write_bytes(b"\xff\xd8\xff")
    r = run("measure", str(tmp_path / "photo.jpg"))
    assert r.returncode == 2 and "not a readable image; use a JPEG, PNG" in r.stderr
    r = run("measure", str(EXAMPLES / "waney-joist.toml"), "--units", "furlong")
    assert r.returncode == 2 and "invalid choice" in r.stderr
    r = run("measure", str(EXAMPLES / "waney-joist.toml"), "--json", str(tmp_path / "no" / "dir.json"))
    assert r.returncode == 2 and "folder does not exist" in r.stderr
    assert run().returncode == 2


def test_debug_shows_the_traceback(tmp_path):
    r = run("measure", str(write(tmp_path, "bad.toml", 'units = "mm"\n')), "--debug")
    assert r.returncode != 0 and "Traceback" in r.stderr


UNCERTAIN = IPE200.replace('[shape]', '[uncertainty]\nreading = 0.05\n\n[shape]')


def test_json_has_u_on_every_property_and_a_budget(tmp_path):
    r = run("measure", str(write(tmp_path, "ipe.toml", UNCERTAIN)), "--json", "-")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    for key, entry in doc["properties"].items():
        assert "u" in entry and entry["u"] is not None, key
    assert doc["properties"]["A"]["u"] > 0
    budget = doc["uncertainty"]["budget"]
    assert set(budget) == {"A", "Ix", "Iy"}
    for key, rows in budget.items():
        assert sum(row["share"] for row in rows) == pytest.approx(1.0)
        assert {row["input"] for row in rows} == {"shape.h", "shape.b", "shape.tw", "shape.tf", "shape.r"}
    # Ix of an I-section hangs on its flanges: tf must lead the budget (common practice).
    assert budget["Ix"][0]["input"] == "shape.tf"
    assert doc["uncertainty"]["k"] == 1 and doc["uncertainty"]["monte_carlo"]["converged"] is True
    assert set(doc["uncertainty"]["method"].values()) <= {"linear", "monte carlo"}


def test_table_shows_value_plus_minus_U_and_the_budget(tmp_path):
    r = run("measure", str(write(tmp_path, "ipe.toml", UNCERTAIN)), "--budget")
    assert r.returncode == 0, r.stderr
    assert "U = 2u (k = 2" in r.stdout and "value ± U" in r.stdout
    a_row = next(ln for ln in r.stdout.splitlines() if ln.split()[:1] == ["A"])
    assert "±" in a_row
    assert "uncertainty budget" in r.stdout and "shape.tf" in r.stdout


def test_characteristic_values(tmp_path):
    out = tmp_path / "r.json"
    r = run("measure", str(write(tmp_path, "ipe.toml", UNCERTAIN)), "--characteristic", "--json", str(out))
    assert r.returncode == 0, r.stderr
    assert "5th pct" in r.stdout
    p = json.loads(out.read_text())["properties"]
    for key in ("A", "Ix", "Iy", "Zx"):
        # For a normal-ish distribution the 5th percentile sits 1.645 u below the value.
        assert p[key]["p05"] == pytest.approx(p[key]["value"] - 1.645 * p[key]["u"], abs=0.25 * p[key]["u"])


def test_monte_carlo_options_and_reproducibility(tmp_path):
    sheet = str(write(tmp_path, "ipe.toml", UNCERTAIN))
    a = json.loads(run("measure", sheet, "--json", "-", "--characteristic").stdout)
    b = json.loads(run("measure", sheet, "--json", "-", "--characteristic").stdout)
    assert a == b                                   # a fixed seed: reruns give the same numbers
    c = json.loads(run("measure", sheet, "--json", "-", "--characteristic", "--random-seed", "7").stdout)
    assert c["uncertainty"]["monte_carlo"]["seed"] == 7
    assert c["properties"]["A"]["p05"] != a["properties"]["A"]["p05"]
    d = json.loads(run("measure", sheet, "--json", "-", "--draws", "500").stdout)
    assert d["uncertainty"]["monte_carlo"]["draws"] == 500
    bad = run("measure", sheet, "--draws", "1")
    assert bad.returncode == 2 and "at least 2 draws" in bad.stderr


# -- assessment commands ------------------------------------------------------------------------
IPE200_U = IPE200 + '[uncertainty]\nreading = 0.05\n'


def test_check_table_and_fixed_json_keys(tmp_path):
    sheet = write(tmp_path, "ipe.toml", IPE200_U)
    args = ["check", str(sheet), "--material", "S355", "--span", "5m", "--support", "simple", "--udl", "10kN/m",
            "--point", "20kN", "--draws", "200"]
    r = run(*args)
    assert r.returncode == 0, r.stderr
    assert "utilisation_p95" in r.stdout and "± " in r.stdout
    assert "not a design check" in r.stdout and "qualified engineer" in r.stdout and "buckling" in r.stdout
    out = tmp_path / "check.json"
    r = run(*args, "--json", str(out))
    doc = json.loads(out.read_text())
    for key in ("max_moment", "stress", "utilisation", "utilisation_p95", "deflection", "deflection_limit",
                "max_span"):
        assert set(doc[key]) == {"value", "u", "unit"}, key
    # w L^2 / 8 + P L / 4 with the self-weight of IPE 200 (22.4 kg/m, EN 10365, from memory) added.
    w = 10 + 22.4 * 9.80665e-3
    assert doc["max_moment"]["value"] == pytest.approx(w * 25 / 8 + 20 * 5 / 4, rel=2e-4)
    assert doc["max_moment"]["unit"] == "kN*m" and doc["max_span"]["unit"] == "m"
    assert doc["schema"] == "tracer/check/1" and doc["tool"]["name"] == "tracer" and doc["cautions"]


@pytest.mark.parametrize("extra,message", [
    (["--material", "S999"], "'S999' is not a shipped material"),
    (["--material", "S235", "--point", "12"], "--point = '12' is not a force with a unit"),
    (["--material", "S235", "--udl", "5kN"], "'kN' is not a unit of load per length"),
    (["--material", "S235", "--udl", "5kN/m", "--span", "5"], "--span = '5' is not a length with a unit"),
])
def test_check_bad_input_exits_2_with_a_message(tmp_path, extra, message):
    sheet = write(tmp_path, "ipe.toml", IPE200_U)
    base = ["check", str(sheet), "--span", "5m", "--support", "simple", "--udl", "1kN/m"]
    r = run(*base, *extra)
    assert r.returncode == 2
    assert message in r.stderr and len(r.stderr.strip().splitlines()) <= 2


def test_compare_table_json_and_figure(tmp_path):
    sheet = write(tmp_path, "ipe.toml", IPE200_U.replace("tf = 8.5", "tf = 7.0"))   # both flanges thinned
    fig = tmp_path / "loss.svg"
    out = tmp_path / "loss.json"
    r = run("compare", str(sheet), "i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm", "--figure", str(fig),
            "--json", str(out), "--draws", "100", "--torsion-draws", "10")
    assert r.returncode == 0, r.stderr
    assert "loss beyond rolling tolerance" in r.stdout and "not a design check" in r.stdout
    doc = json.loads(out.read_text())
    assert list(doc["loss"]) == ["A", "Ix", "Iy", "Sx_top", "Zx", "J"]
    # Two flanges 1.5 mm thinner over b - tw = 94.4 mm of their width each (outside the web):
    # 2 x 1.5 x 94.4 = 283.2 mm^2 of A = 2848.4 mm^2 (IPE 200, EN 10365, from memory) is 9.94 %.
    assert doc["loss"]["A"]["value"] == pytest.approx(100 * 283.2 / 2848.4, abs=0.01)
    assert doc["loss"]["A"]["u"] > 0 and doc["schema"] == "tracer/compare/1" and doc["cautions"]
    text = fig.read_text()
    assert text.startswith("<?xml") and "qualified engineer" in text


def test_compare_bad_nominal_exits_2(tmp_path):
    sheet = write(tmp_path, "ipe.toml", IPE200_U)
    r = run("compare", str(sheet), "i-section:h=200,b=100,tw=5.6,tf=8.5")
    assert r.returncode == 2 and "nominal h = '200' is not a length with a unit" in r.stderr
    r = run("compare", str(sheet), "girder:h=200mm")
    assert r.returncode == 2 and "KIND:DIM=LENGTH" in r.stderr


def test_fit_json_keys_and_bad_kind(tmp_path):
    sheet = write(tmp_path, "ipe.toml", IPE200_U)
    r = run("fit", str(sheet), "--kind", "i-section", "--json", "-", "--draws", "20",
            "--nominal", "i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm")
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    assert doc["schema"] == "tracer/fit/1" and doc["kind"] == "i-section"
    assert list(doc["dims"]) == ["h", "b", "tw", "tf", "r"]
    assert doc["dims"]["tw"]["value"] == pytest.approx(5.6, abs=0.01) and doc["dims"]["tw"]["unit"] == "mm"
    assert doc["tolerance"]["dims"]["tw"]["status"] == "within"
    r = run("fit", str(sheet), "--kind", "girder")
    assert r.returncode == 2 and "invalid choice: 'girder'" in r.stderr
    r = run("fit", str(sheet), "--kind", "channel", "--nominal", "i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm")
    assert r.returncode == 2 and "give a channel" in r.stderr
