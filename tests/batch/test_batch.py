"""Batches: a yard of synthetic photos and sheets (invented members), with a corrupt image, a photo
without its target and a bad sheet among them; a manifest; reruns; a batch killed in the middle.

Truths: the rendered sections' areas and second moments by shapely and by the rectangle's closed
form A = b·h, Ix = b·h³/12, Iy = h·b³/12 (any strength-of-materials text).
"""

from __future__ import annotations

import csv
import json
import shutil
import signal
import subprocess
import sys
import time
from html.parser import HTMLParser
from pathlib import Path

import pytest

from tracer.batch import INVENTORY_KEYS, plan_batch, rebuild_inventory, run_batch
from tracer.errors import InputError
from tracer.section.shapes import channel, rectangle

from tests.common import run_tracer

cv2 = pytest.importorskip("cv2")

# An invented plank, measured with calipers: 50 x 150 mm, readings to 0.5 mm.
PLANK = 'units = "mm"\nname = "plank P-2 (invented)"\n[uncertainty]\nreading = 0.5\n[shape]\nkind = "rectangle"\nb = 50\nh = 150\n'
JOIST = rectangle(b=47.0, h=120.0, wane={"top_left": 10.0}, chord_angle=0.05).translated(80.0, -30.0)
CHANNEL = channel(h=100.0, b=50.0, tw=6.0, tf=8.0, r=6.0, chord_angle=0.05).translated(85.0, -25.0)
LOT = {"target": "6x4:10mm"}


def _render(path: Path, section, **scene) -> None:
    from tracer.inputs.photo.renders.scene import Scene
    from tracer.inputs.photo.renders.synth import render

    r = render(Scene(section=section, px_per_mm=3.0, tilt=3.0, **scene))
    cv2.imwrite(str(path), r.image)


def _truth(section):
    """Area (shapely, a reference library) and centroidal Ix of the rendered section, summed over
    shapely's triangulation with the closed form of a triangle's second moment about an axis,
    A/6 (y1² + y2² + y3² + y1 y2 + y2 y3 + y3 y1) for vertex distances y from it (textbook closed form)."""
    import shapely

    g = section.to_shapely()
    a = g.area
    c = g.centroid
    tri = shapely.get_parts(shapely.constrained_delaunay_triangles(g))
    ix = 0.0
    for t in tri:
        (x1, y1), (x2, y2), (x3, y3) = list(t.exterior.coords)[:3]
        ta = abs((x2 - x1) * (y3 - y1) - (x3 - x1) * (y2 - y1)) / 2
        ys = [y1 - c.y, y2 - c.y, y3 - c.y]
        ix += ta / 6 * (ys[0] ** 2 + ys[1] ** 2 + ys[2] ** 2 + ys[0] * ys[1] + ys[1] * ys[2] + ys[0] * ys[2])
    return a, ix


@pytest.fixture(scope="module")
def yard(tmp_path_factory) -> Path:
    """Eight items: four photos (one in a subfolder with the same stem), two sheets, a corrupt image and
    a photo without its target, plus one photo's sidecar."""
    d = tmp_path_factory.mktemp("yard")
    _render(d / "joist.png", JOIST, seed=1)
    _render(d / "channel.png", CHANNEL, target=(5, 3, 12.0), member="steel", seed=2)
    (d / "channel.toml").write_text('# settings of channel.png (an invented member)\nname = "channel C-7"\n'
                                    'target = "5x3:12mm"\n\n[truth]\nnote = "tables are for people"\n')
    _render(d / "no-target.png", JOIST, target=None, seed=3)
    (d / "corrupt.jpg").write_bytes(b"\xff\xd8\xff\xe0 this is not a JPEG at all")
    (d / "plank.toml").write_text(PLANK)
    (d / "bad-sheet.toml").write_text('units = "mm"\nname = "no geometry"\n')
    (d / "sub").mkdir()
    _render(d / "sub" / "joist.png", JOIST, seed=4)
    return d


@pytest.fixture(scope="module")
def batch(yard, tmp_path_factory):
    out = tmp_path_factory.mktemp("out")
    events = []
    summary = run_batch(yard, out, defaults=LOT, jobs=2, report="html", progress=events.append)
    return out, summary, events


def _inventory(path: Path) -> list[dict[str, str]]:
    """The inventory's rows, read as any CSV reader reads a file: the first line names the columns."""
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def test_folder_batch_rows_reasons_and_values(yard, batch):
    out, summary, events = batch
    rows = _inventory(out / "inventory.csv")
    by = {r["name"]: r for r in rows}
    assert sorted(by) == sorted(["bad-sheet", "channel", "corrupt", "joist", "no-target", "plank", "joist-2"])
    assert len(rows) == 7                                   # the sidecar channel.toml is settings, not an item
    assert (summary.total, summary.done, summary.failed, summary.skipped) == (7, 4, 3, 0)
    assert by["joist-2"]["path"] == "sub/joist.png"
    assert by["corrupt"]["status"] == "failed" and "not a readable image" in by["corrupt"]["reason"]
    assert by["no-target"]["status"] == "failed" and "no 6x4 checkerboard target found" in by["no-target"]["reason"]
    assert by["bad-sheet"]["status"] == "failed" and "give exactly one of [shape]" in by["bad-sheet"]["reason"]
    for r in rows:
        assert "\n" not in r["reason"]
    # The plank: closed forms of the rectangle, A = b h, Ix = b h^3 / 12, Iy = h b^3 / 12.
    p = by["plank"]
    assert p["status"] == "done" and p["scale_method"] == "readings" and p["member"] == "plank P-2 (invented)"
    assert float(p["A_mm2"]) == pytest.approx(50 * 150, rel=1e-9)
    assert float(p["Ix_mm4"]) == pytest.approx(50 * 150**3 / 12, rel=1e-9)
    assert float(p["Iy_mm4"]) == pytest.approx(150 * 50**3 / 12, rel=1e-9)
    assert float(p["u_A_mm2"]) > 0
    # The photos against the rendered truth (shapely), within three standard uncertainties.
    for name, section, member in (("joist", JOIST, "joist"), ("joist-2", JOIST, "joist"),
                                  ("channel", CHANNEL, "channel C-7")):
        r = by[name]
        assert r["status"] == "done" and r["scale_method"] == "target" and r["member"] == member
        a, ix = _truth(section)
        assert abs(float(r["A_mm2"]) - a) < 3 * float(r["u_A_mm2"]), name
        assert abs(float(r["Ix_mm4"]) - ix) < 3 * float(r["u_Ix_mm4"]), name
    assert f"u_{INVENTORY_KEYS[0]}_mm2" in rows[0]
    # Every done item has its result (with the key), picture and report; a failed one only its record.
    for name in ("joist", "joist-2", "channel"):
        doc = json.loads((out / f"{name}.json").read_text())
        assert doc["schema"] == "tracer/result/1" and len(doc["batch"]["key"]) == 64
        assert (out / f"{name}.png").is_file() and (out / f"{name}.html").is_file()
    assert (out / "plank.html").is_file() and not (out / "plank.png").exists()
    for name in ("corrupt", "no-target", "bad-sheet"):
        assert not (out / f"{name}.json").exists()
        assert json.loads((out / f"{name}.failed.json").read_text())["status"] == "failed"
    # Progress: after the start, one event per measured item, counts rising to the total.
    assert [e.done + e.failed for e in events] == list(range(8))
    assert events[-1].remaining == pytest.approx(0.0) and events[-1].rate > 0


class _Index(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.rows: list[dict] = []
        self.addresses: list[str] = []
        self.script = False
        self._body = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "tbody":
            self._body = True
        elif tag == "tr" and self._body:
            self.rows.append({"class": a.get("class"), "links": [], "imgs": [], "text": ""})
        elif tag == "a" and self.rows:
            self.rows[-1]["links"].append(a["href"])
        elif tag == "img" and self.rows:
            self.rows[-1]["imgs"].append(a["src"])
        elif tag == "script":
            self.script = True
        for k in ("href", "src"):
            if k in a:
                self.addresses.append(a[k])

    def handle_endtag(self, tag):
        if tag == "tbody":
            self._body = False

    def handle_data(self, data):
        if self._body and self.rows:
            self.rows[-1]["text"] += data


def test_index_is_self_contained_with_one_row_per_item(batch):
    out, _, _ = batch
    page = _Index()
    page.feed((out / "index.html").read_text())
    assert len(page.rows) == 7 and page.script
    done = [r for r in page.rows if r["class"] == "done"]
    failed = [r for r in page.rows if r["class"] == "failed"]
    assert len(done) == 4 and len(failed) == 3
    for r in done:
        assert r["imgs"] and r["imgs"][0].startswith("data:image/jpeg;base64,")
        assert r["links"][0].endswith(".html") and (out / r["links"][0]).is_file()
    assert any("not a readable image" in r["text"] for r in failed)
    # No address leaves the folder: data URIs and the members' own reports only.
    assert all(a.startswith("data:") or (out / a).is_file() for a in page.addresses)
    text = (out / "index.html").read_text()
    assert "not a design check" in text and "qualified engineer" in text and "http" not in text


# What every output that carries section properties says (../shared/DESIGN.md, "Cautions (fixed)"):
# for screening, not a design check, a member for reuse assessed by a qualified engineer under the
# local building code.
DESIGN_CAUTION = ("screening", "not a design check", "qualified engineer", "local building code")


def test_inventory_is_a_plain_csv_whose_first_line_is_the_header(batch):
    out, _, _ = batch
    path = out / "inventory.csv"
    lines = path.read_text(encoding="utf-8").splitlines()
    # RFC 4180, as spreadsheets and data-frame readers take a file without options: the header first,
    # then one record per member, each as wide as the header; no comment lines.
    assert lines[0].split(",")[:10] == ["name", "member", "path", "kind", "status", "reason", "scale_method",
                                        "warnings", "A_mm2", "u_A_mm2"]
    assert not [ln for ln in lines if ln.startswith("#")]
    with open(path, newline="", encoding="utf-8") as f:
        records = list(csv.reader(f))
    assert len(records) == 1 + 7 and {len(r) for r in records} == {len(records[0])}
    assert records[0] == lines[0].split(",")


def test_inventory_opens_in_pandas_without_options(batch):
    pd = pytest.importorskip("pandas")
    out, _, _ = batch
    df = pd.read_csv(out / "inventory.csv")
    assert df.shape == (7, len(_inventory(out / "inventory.csv")[0]))
    plank = df[df["name"] == "plank"].iloc[0]
    assert plank["A_mm2"] == pytest.approx(50 * 150, rel=1e-9)           # A = b h of the 50 x 150 plank
    assert plank["Ix_mm4"] == pytest.approx(50 * 150**3 / 12, rel=1e-9)  # Ix = b h^3 / 12
    assert df["status"].value_counts().to_dict() == {"done": 4, "failed": 3}


class _Cautions(HTMLParser):
    """The text of the page's caution block, and whether it came before the table."""

    def __init__(self) -> None:
        super().__init__()
        self.text, self.before_table, self._in, self._table = "", False, False, False

    def handle_starttag(self, tag, attrs):
        if tag == "section" and dict(attrs).get("class") == "cautions":
            self._in, self.before_table = True, not self._table
        elif tag == "table":
            self._table = True

    def handle_endtag(self, tag):
        if tag == "section":
            self._in = False

    def handle_data(self, data):
        if self._in:
            self.text += data


def test_index_page_shows_every_caution_above_the_table(batch):
    from tracer.outputs.report import CAUTIONS

    out, _, _ = batch
    page = _Cautions()
    page.feed((out / "index.html").read_text(encoding="utf-8"))
    assert page.before_table and page.text.strip().startswith("Screening only.")
    for phrase in DESIGN_CAUTION:
        assert phrase in page.text, phrase
    for c in CAUTIONS:                                         # each one as the reports word it
        assert c in page.text, c


def test_readme_says_what_the_files_are_carries_the_cautions_and_is_rebuilt(batch, tmp_path):
    from tracer.outputs.report import CAUTIONS

    out, _, _ = batch
    text = (out / "README.txt").read_text(encoding="utf-8")
    for phrase in DESIGN_CAUTION:
        assert phrase in text, phrase
    for c in CAUTIONS:
        assert c in text, c
    assert "u (k = 1)" in text                                 # what the inventory's u columns are
    for name in ("inventory.csv", "index.html", "batch.json", "thumbs"):
        assert f"\n{name}" in text and (out / name).exists(), name
    # Rebuilt with the inventory: removed, it comes back, to the same text.
    o2 = tmp_path / "out"
    shutil.copytree(out, o2)
    (o2 / "README.txt").unlink()
    rebuild_inventory(o2)
    assert (o2 / "README.txt").read_text(encoding="utf-8") == text
    assert not [p for p in o2.rglob("*") if p.name.endswith(".tmp")]


def test_rerun_skips_everything_and_a_changed_setting_reruns_that_item(yard, batch, tmp_path):
    out, _, _ = batch
    y2, o2 = tmp_path / "yard", tmp_path / "out"
    shutil.copytree(yard, y2)
    shutil.copytree(out, o2)
    before = {p.name: p.stat().st_mtime_ns for p in o2.glob("*.json")}
    s = run_batch(y2, o2, defaults=LOT, jobs=2, report="html")
    # Everything is there under the same key: the lasting failures (bad input, no target) too.
    assert (s.done, s.failed, s.skipped) == (0, 0, 7)
    assert {p.name: p.stat().st_mtime_ns for p in o2.glob("*.json") if p.name != "batch.json"} == \
        {k: v for k, v in before.items() if k != "batch.json"}
    rows0 = _inventory(out / "inventory.csv")
    rows1 = _inventory(o2 / "inventory.csv")
    assert rows1 == rows0
    # A changed setting in one sidecar: that item alone is measured again, with the new setting.
    side = y2 / "channel.toml"
    side.write_text(side.read_text().replace('target = "5x3:12mm"', 'target = "5x3:12mm"\ntexture = "3mm"'))
    s = run_batch(y2, o2, defaults=LOT, jobs=2, report="none")
    assert (s.done, s.failed, s.skipped) == (1, 0, 6)
    assert json.loads((o2 / "channel.json").read_text())["batch"]["settings"]["texture"] == "3mm"
    assert not (o2 / "channel.html").exists()             # the old report is out of date: removed
    # A changed lot default reruns the photos that use it, not the sheets.
    s = run_batch(y2, o2, defaults={"target": "6x4:10mm", "max_tilt": 4.0}, jobs=2, report="none")
    # Every photo takes it (the channel's own target replaces only the lot's target): three are measured,
    # the corrupt one and the one without a target fail again; the two sheets are skipped.
    assert (s.done, s.failed, s.skipped) == (3, 2, 2)


def test_manifest_with_per_item_settings(tmp_path):
    d = tmp_path / "photos"
    d.mkdir()
    _render(d / "joist.png", JOIST, seed=5)
    _render(d / "channel.png", CHANNEL, target=(5, 3, 12.0), member="steel", seed=6)
    (d / "plank.toml").write_text(PLANK)
    manifest = tmp_path / "members.csv"
    manifest.write_text(
        "path,name,target,scale,known,dpi,seed,max_tilt\n"
        'photos/joist.png,joist J-14 (bay 3),6x4:10mm,,,,,\n'
        'photos/channel.png,channel C-7,5x3:12mm,,,,,\n'
        'photos/joist.png,joist by its depth,,,depth=120mm,,,3\n'
        'photos/plank.toml,,,,,,,\n'
        'photos/missing.png,,6x4:10mm,,,,,\n')
    out = tmp_path / "out"
    s = run_batch(manifest, out, jobs=2, report="none")
    assert (s.total, s.done, s.failed) == (5, 4, 1)
    rows = _inventory(out / "inventory.csv")
    by = {r["name"]: r for r in rows}
    assert list(by) == ["joist-J-14-bay-3", "channel-C-7", "joist-by-its-depth", "plank", "missing"]
    assert by["joist-J-14-bay-3"]["member"] == "joist J-14 (bay 3)"
    assert [by[n]["scale_method"] for n in list(by)[:4]] == ["target", "target", "known", "readings"]
    assert by["missing"]["status"] == "failed" and "no such file" in by["missing"]["reason"]
    a, ix = _truth(JOIST)
    for n in ("joist-J-14-bay-3", "joist-by-its-depth"):
        assert abs(float(by[n]["A_mm2"]) - a) < 3 * float(by[n]["u_A_mm2"]), n
    a, ix = _truth(CHANNEL)
    assert abs(float(by["channel-C-7"]["Ix_mm4"]) - ix) < 3 * float(by["channel-C-7"]["u_Ix_mm4"])
    doc = json.loads((out / "joist-by-its-depth.json").read_text())
    assert doc["batch"]["settings"] == {"known": "depth=120mm", "max_tilt": 3.0}
    # numpy's text reader opens the inventory without options too (no cell here holds a comma: it
    # does not read quoted cells).
    import numpy as np

    table = np.genfromtxt(out / "inventory.csv", delimiter=",", names=True, dtype=None, encoding="utf-8")
    assert table.shape == (5,) and list(table["name"]) == list(by)
    assert table["A_mm2"][3] == pytest.approx(50 * 150, rel=1e-9)          # the plank: A = b h


def test_manifest_and_option_errors(tmp_path):
    m = tmp_path / "m.csv"
    m.write_text("path,name,colour\nx.png,a,red\n")
    with pytest.raises(InputError, match="unknown column 'colour'; the columns are path, name, target"):
        plan_batch(m)
    m.write_text("name,target\na,6x4:10mm\n")
    with pytest.raises(InputError, match="no path column"):
        plan_batch(m)
    m.write_text("path,dpi\nx.png,lots\n")
    assert "dpi = 'lots': write a number" in plan_batch(m)[0].error
    with pytest.raises(InputError, match="no photos .* or sheets"):
        plan_batch(_empty(tmp_path))
    r = run_tracer("batch", str(m), "--out", str(tmp_path / "o"), "--jobs", "0")
    assert r.returncode == 2 and "give at least 1 worker" in r.stderr
    m.write_text("path,size\nx.png,3\n")
    r = run_tracer("batch", str(m), "--out", str(tmp_path / "o"))
    assert r.returncode == 2 and "unknown column 'size'" in r.stderr


def _empty(tmp_path: Path) -> Path:
    d = tmp_path / "empty"
    d.mkdir()
    return d


def test_kill_in_the_middle_then_rerun_matches_an_uninterrupted_run(yard, batch, tmp_path):
    out, _, _ = batch
    k = tmp_path / "killed"
    cmd = [sys.executable, "-m", "tracer", "batch", str(yard), "--out", str(k), "--jobs", "1", "--report", "none",
           "--target", "6x4:10mm"]
    _stop_after_two(cmd, k, signal.SIGKILL)
    records = [p for p in k.glob("*.json") if p.name != "batch.json"]
    assert 2 <= len(records) < 7
    for p in records:
        json.loads(p.read_text())                              # whole, never half a file
    time.sleep(0.5)                                            # the worker dies with its parent
    r = subprocess.run(cmd, capture_output=True, text=True)
    assert r.returncode == 1, r.stderr                         # 1: some items failed
    assert "skipped" in r.stdout
    rows_k = _inventory(k / "inventory.csv")
    rows_u = _inventory(out / "inventory.csv")
    assert len(rows_k) == len(rows_u) == 7
    for a, b in zip(rows_k, rows_u):
        assert a == b                                          # the same rows, value for value
    assert not [p for p in k.rglob("*") if p.name.endswith(".tmp")]
    # The inventory can be rebuilt at any time, to the same text.
    text = (k / "inventory.csv").read_text()
    rebuild_inventory(k)
    assert (k / "inventory.csv").read_text() == text


def _stop_after_two(cmd: list[str], out: Path, sig: int) -> subprocess.CompletedProcess:
    """Run `cmd`, send `sig` once two items have their records in `out`, and wait for it to end."""
    # SIGINT as at a terminal, even where this test runs with it ignored (a background job).
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline and proc.poll() is None:
            if len(list(out.glob("*.json"))) >= 3:             # the plan and two records
                break
            time.sleep(0.02)
        assert proc.poll() is None, "the batch ended before it could be stopped"
        proc.send_signal(sig)
        stdout, stderr = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    return subprocess.CompletedProcess(cmd, proc.returncode, stdout, stderr)


def test_ctrl_c_finishes_the_items_in_hand_and_writes_the_inventory(yard, tmp_path):
    out = tmp_path / "stopped"
    cmd = [sys.executable, "-m", "tracer", "batch", str(yard), "--out", str(out), "--jobs", "1", "--report", "none",
           "--target", "6x4:10mm"]
    r = _stop_after_two(cmd, out, signal.SIGINT)
    assert r.returncode == 130 and "stopped; run the same command again to go on" in r.stderr
    rows = _inventory(out / "inventory.csv")
    assert len(rows) == 7
    n = {s: sum(row["status"] == s for row in rows) for s in ("done", "failed", "not run")}
    assert sum(n.values()) == 7 and n["done"] + n["failed"] >= 2
    # The summary line counts what the records say.
    assert f"{n['done']} measured, 0 skipped (already measured), {n['failed']} failed" in r.stdout
    assert not [p for p in out.rglob("*") if p.name.endswith(".tmp")]


def test_one_batch_at_a_time_per_folder(yard, tmp_path):
    import fcntl

    out = tmp_path / "o"
    out.mkdir()
    with open(out / ".lock", "a+") as f:
        fcntl.flock(f.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        with pytest.raises(InputError, match="another tracer batch is writing into this folder"):
            run_batch(yard, out, defaults=LOT, jobs=1, report="none")


def test_item_names_are_unique_and_safe(tmp_path):
    for n in ("a b.png", "a-b.png", "A_B.png", "index.png", "é!.png"):
        (tmp_path / n).write_bytes(b"x")
    names = [it.name for it in plan_batch(tmp_path)]
    # Sorted by path: "A_B", "a b", "a-b", "index", "é!"; "index" is the folder's own page.
    assert names == ["A_B", "a-b", "a-b-2", "index-2", "e"]
    assert all(n.replace("-", "").replace("_", "").isalnum() and n.isascii() for n in names)
