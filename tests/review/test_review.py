"""The review page (tracer review): its server's rules, saving what reproduces a trace, the
command line, a batch's members, and the page itself driven in headless Chromium.

Check values come from outside the page: `tracer measure` run on the saved sidecar (the same
numbers the page showed, DESIGN.md "Photo sidecar"), HTTP status codes of RFC 9110 (403
Forbidden, 404 Not Found, 409 Conflict, 413 Content Too Large, 400 Bad Request), and TOML read
back with the standard library's tomllib.
"""

from __future__ import annotations

import http.client
import json
import os
import shutil
import signal
import subprocess
import sys
import time
import tomllib
from pathlib import Path
from urllib.parse import urlsplit

import pytest

from tracer.review.server import MAX_BODY, start_server
from tracer.review.session import ReviewSession

cv2 = pytest.importorskip("cv2")
pytest.importorskip("flask")

SAMPLES = Path(__file__).resolve().parents[2] / "tracer" / "sample_images"


@pytest.fixture()
def channel(tmp_path) -> Path:
    """The bundled pitted-channel sample (a synthetic photo of an invented member) and its sidecar."""
    for suffix in (".jpg", ".toml"):
        shutil.copy(SAMPLES / f"pitted-channel{suffix}", tmp_path / f"pitted-channel{suffix}")
    return tmp_path / "pitted-channel.jpg"


@pytest.fixture()
def served(channel):
    server = start_server([ReviewSession(channel)]).start()
    yield server, channel
    server.stop()


def _request(server, method: str, target: str, body: bytes | None = None, headers: dict | None = None,
             token: bool = True) -> tuple[int, bytes]:
    """A raw request: the target goes on the wire exactly as written (no client-side clean-up)."""
    conn = http.client.HTTPConnection("127.0.0.1", server.port, timeout=60)
    h = {"Host": f"127.0.0.1:{server.port}", **(headers or {})}
    if token:
        h.setdefault("X-Tracer-Token", server.token)
    if body is not None:
        h.setdefault("Content-Type", "application/json")
    conn.request(method, target, body=body, headers=h)
    r = conn.getresponse()
    data = r.read()
    conn.close()
    return r.status, data


def _post(server, target: str, doc) -> tuple[int, dict]:
    status, data = _request(server, "POST", target, json.dumps(doc).encode())
    return status, json.loads(data)


# -- the server's rules ------------------------------------------------------------------------

def test_listens_on_loopback_only_and_prints_a_tokened_address(served):
    server, _ = served
    host, port = server._server.socket.getsockname()[:2]
    assert host == "127.0.0.1" and port == server.port
    u = urlsplit(server.url)
    assert u.hostname == "127.0.0.1" and u.port == server.port and f"token={server.token}" in u.query
    assert len(server.token) >= 32                       # 24 random bytes, URL-safe base64


def test_every_request_needs_the_token(served):
    server, _ = served
    for target in ("/", "/api/photos", "/api/photos/0/view.jpg", "/assets/review.js"):
        status, body = _request(server, "GET", target, token=False)
        assert status == 403, target
        assert b"token" in body
    status, _ = _request(server, "GET", "/api/photos", headers={"X-Tracer-Token": "x" + server.token[1:]})
    assert status == 403
    status, _ = _request(server, "GET", f"/api/photos?token={server.token}", token=False)
    assert status == 200
    status, page = _request(server, "GET", f"/?token={server.token}", token=False)
    assert status == 200 and b"review.js?token=" in page


def test_requests_for_another_host_are_refused(served):
    # A page of another site resolving its name to 127.0.0.1 sends its own name as Host.
    server, _ = served
    status, _ = _request(server, "GET", "/api/photos", headers={"Host": f"example.com:{server.port}"})
    assert status == 403


def test_serves_only_its_own_photos_and_assets(served):
    server, _ = served
    assert _request(server, "GET", "/api/photos/0/view.jpg")[0] == 200
    for target in ("/api/photos/1/view.jpg", "/api/photos/-1/view.jpg", "/assets/index.html", "/assets/secret.txt",
                   "/pitted-channel.jpg", "/pitted-channel.toml"):
        assert _request(server, "GET", target)[0] == 404, target


@pytest.mark.parametrize("target", [
    "/assets/../../../etc/passwd",
    "/assets/..%2f..%2fetc%2fpasswd",
    "/assets/%2e%2e/%2e%2e/etc/passwd",
    "/assets/%252e%252e/etc/passwd",
    "//etc/passwd",
    "/assets//etc/passwd",
    "/api/photos/0/../../../../etc/passwd",
    "/assets/..\\..\\windows\\win.ini",
])
def test_paths_with_dots_absolute_paths_and_encoded_tricks_are_refused(served, target):
    server, _ = served
    status, body = _request(server, "GET", target)
    assert status in (400, 404), (target, status)
    assert b"root:" not in body and b"Traceback" not in body


def test_request_bodies_are_limited(served):
    server, _ = served
    big = b'{"state": {"seed": [' + b"[1,1]," * (MAX_BODY // 6 + 10) + b'[1,1]]}}'
    status, _ = _request(server, "POST", "/api/photos/0/measure", big)
    assert status == 413


@pytest.mark.parametrize("body,expect", [
    (b"{not json", b"JSON object"),
    (b"[1, 2]", b"JSON object"),
    (b'{"state": {"tagret": "6x4:10mm"}}', b"tagret"),
    (b'{"state": {"seed": "a,b"}}', b"seed"),
    (b'{"state": {"box": [10, 10, 10, 10]}}', b"box"),
    (b'{"state": {}, "full": "yes"}', b"full"),
])
def test_malformed_requests_get_a_400_with_a_message_and_no_traceback(served, body, expect):
    server, _ = served
    status, data = _request(server, "POST", "/api/photos/0/measure", body)
    assert status == 400, data
    doc = json.loads(data)
    assert expect in doc["error"].encode() and b"Traceback" not in data


def test_a_crop_outside_the_photo_is_a_400(served):
    server, _ = served
    assert _request(server, "GET", "/api/photos/0/crop.jpg?x0=5000&y0=5000&x1=6000&y1=6000&side=500")[0] == 400
    assert _request(server, "GET", "/api/photos/0/crop.jpg?x0=a&y0=0&x1=10&y1=10")[0] == 400
    status, data = _request(server, "GET", "/api/photos/0/crop.jpg?x0=100&y0=100&x1=500&y1=400&side=200")
    assert status == 200
    img = cv2.imdecode(__import__("numpy").frombuffer(data, "uint8"), cv2.IMREAD_COLOR)
    assert max(img.shape[:2]) == 200 and img.shape[1] > img.shape[0]


def test_writes_only_the_photos_sidecar_and_outputs(served):
    server, photo = served
    before = set(p.name for p in photo.parent.iterdir())
    status, doc = _post(server, "/api/photos/0/save", {"state": {"target": "6x4:10mm"}})
    assert status == 200, doc
    after = set(p.name for p in photo.parent.iterdir())
    assert after - before == {"pitted-channel.json", "pitted-channel.html"}       # the sidecar was there
    assert sorted(Path(w).name for w in doc["written"]) == ["pitted-channel.html", "pitted-channel.json",
                                                             "pitted-channel.toml"]


def test_a_second_review_does_not_corrupt_the_first_ones_sidecar(channel):
    # Two pages on one photo: each save is whole (atomic), and the later one is warned that the
    # sidecar changed on disk since it read it (409), and overwrites it only when told to.
    first, second = ReviewSession(channel), ReviewSession(channel)
    a = first.save({"target": "6x4:10mm", "seed": [[700, 400]]})
    assert a["ok"]
    b = second.save({"target": "6x4:10mm", "outside": [[100, 100]]})
    assert b["conflict"] and "changed on disk" in b["message"]
    side = tomllib.loads(channel.with_suffix(".toml").read_text())
    assert side["seed"] == [[700, 400]] and "outside" not in side
    c = second.save({"target": "6x4:10mm", "outside": [[100, 100]]}, force=True)
    assert c["ok"]
    side = tomllib.loads(channel.with_suffix(".toml").read_text())
    assert side["outside"] == [[100, 100]] and "seed" not in side
    assert side["truth"]                                  # the sample's own table is kept
    assert not [p for p in channel.parent.iterdir() if p.name.endswith(".tmp")]


# -- measuring and saving -----------------------------------------------------------------------

def _measure_cli(photo: Path, *extra: str) -> tuple[int, dict | str]:
    r = subprocess.run([sys.executable, "-m", "tracer", "measure", str(photo), "--json", "-", *extra],
                       capture_output=True, text=True, timeout=300)
    return r.returncode, (json.loads(r.stdout) if r.returncode == 0 else r.stderr)


def test_saved_sidecar_gives_tracer_measure_the_numbers_the_page_showed(channel):
    session = ReviewSession(channel)
    state = {**session.describe()["state"], "box": [560, 100, 1300, 1000]}
    shown = session.measure(state, full=True)
    assert shown["ok"] and not shown["check"]["needs_review"]
    saved = session.save(state)
    assert saved["ok"] and saved["measured"]["values"] == shown["values"]
    code, doc = _measure_cli(channel)
    assert code == 0, doc
    for k in ("A", "I1", "I2"):
        assert doc["properties"][k]["value"] == pytest.approx(shown["values"][k]["value"], rel=1e-12)
        assert 2 * doc["properties"][k]["u"] == pytest.approx(shown["values"][k]["U"], rel=1e-12)
    assert doc["source"]["trace"]["hints"]["box"] == [560, 100, 1300, 1000]
    written = json.loads(channel.with_suffix(".json").read_text())
    assert written["properties"]["A"] == doc["properties"]["A"]


def test_quick_estimate_while_editing_then_the_full_one(channel):
    session = ReviewSession(channel)
    state = session.describe()["state"]
    quick, full = session.measure(state, full=False), session.measure(state, full=True)
    assert not quick["full"] and full["full"]
    for k in ("A", "I1", "I2"):
        assert quick["values"][k]["value"] == full["values"][k]["value"]        # the same trace
        assert 0.5 < quick["values"][k]["U"] / full["values"][k]["U"] < 2.0     # U only estimated


def test_a_boundary_edited_by_hand_is_measured_as_drawn(channel):
    # A rectangle placed by hand, 400 x 200 px at the target's 10 mm squares: its area follows
    # from the target's scale; compared with the shoelace area of the same points mapped by the
    # plane (here, within the target's scale uncertainty of a square-on photo).
    session = ReviewSession(channel)
    base = session.measure(session.describe()["state"], full=False)
    editable = base["editable"]
    assert 3 <= len(editable["points"]) <= 240
    res = session.measure({**session.describe()["state"], "trace": editable}, full=False)
    assert res["hand_edited"] and not res["check"]["needs_review"]
    # The simplified outline (within 1 px of the trace) keeps A within 1 %.
    assert res["values"]["A"]["value"] == pytest.approx(base["values"]["A"]["value"], rel=0.01)


def test_no_scale_reference_yet_is_a_message_not_a_failure(channel):
    channel.with_suffix(".toml").unlink()
    session = ReviewSession(channel)
    info = session.describe()
    assert info["image"] == [1383, 1188] and info["state"] == {"accept": False}
    res = session.measure(info["state"], full=False)
    assert not res["ok"] and "no scale" in res["message"] and "--target" in res["message"]


def test_a_sidecar_with_an_unknown_key_opens_and_names_it(channel):
    side = channel.with_suffix(".toml")
    side.write_text('target = "6x4:10mm"\ntagret = "9x6:15mm"\n')
    info = ReviewSession(channel).describe()
    assert "tagret" in info["sidecar_error"] and info["image"] is not None


def test_a_photo_that_cannot_be_read_opens_with_a_message(tmp_path):
    bad = tmp_path / "broken.jpg"
    bad.write_bytes(b"not a jpeg at all")
    info = ReviewSession(bad).describe()
    assert info["image"] is None and "broken.jpg" in info["photo_error"]


# -- the command line -----------------------------------------------------------------------------

def _start_cli(*args: str, cwd: Path) -> tuple[subprocess.Popen, str]:
    p = subprocess.Popen([sys.executable, "-m", "tracer", "review", "--no-browser", *args], cwd=cwd,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    first = p.stdout.readline().strip()
    return p, first


def test_cli_prints_the_address_first_and_ends_cleanly_on_ctrl_c(channel):
    p, first = _start_cli(channel.name, cwd=channel.parent)
    try:
        u = urlsplit(first)
        assert (u.scheme, u.hostname) == ("http", "127.0.0.1") and u.query.startswith("token=")
        conn = http.client.HTTPConnection("127.0.0.1", u.port, timeout=30)
        conn.request("GET", f"/api/photos?{u.query}")
        assert json.loads(conn.getresponse().read())[0]["file"] == "pitted-channel.jpg"
        conn.close()
    finally:
        p.send_signal(signal.SIGINT)
        out, err = p.communicate(timeout=30)
    assert p.returncode == 0, err
    assert "stopped" in out and "Traceback" not in err


def test_cli_ends_by_itself_when_idle_and_says_so(channel):
    p, first = _start_cli(channel.name, "--idle", "0.03", cwd=channel.parent)
    out, err = p.communicate(timeout=60)
    assert first.startswith("http://127.0.0.1:")
    assert p.returncode == 0 and "no request from the page" in out, (out, err)


@pytest.mark.parametrize("args,message", [
    (["missing.jpg"], "no such file"),
    (["pitted-channel.toml"], "not a photo"),
    (["pitted-channel.jpg", "--box", "5,5,5,9"], "box"),
    (["pitted-channel.jpg", "--out", "nowhere"], "no such folder"),
])
def test_cli_bad_input_is_exit_2_with_a_message(channel, args, message):
    r = subprocess.run([sys.executable, "-m", "tracer", "review", "--no-browser", *args], cwd=channel.parent,
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 2 and message in r.stderr and "Traceback" not in r.stderr, r.stderr


# -- a batch's members -------------------------------------------------------------------------------

def _site_render(folder: Path, name: str) -> tuple[Path, tuple[float, float], dict]:
    """A site render of tracer.inputs.photo.renders.synth (an invented member on an invented ground) and its truth."""
    from tracer.inputs.photo.renders.sites import site_scenes
    from tracer.inputs.photo.renders.synth import render
    from tracer.section.properties import section_properties

    scene = dict(site_scenes())[name]
    r = render(scene)
    path = folder / f"{name}.jpg"
    cv2.imwrite(str(path), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
    return path, r.member_point, section_properties(r.section).values()


def test_batch_members_that_need_review_are_walked_and_saving_reruns_the_record(tmp_path):
    from tracer.batch import run_batch
    from tracer.review.launch import review_sessions

    photos = tmp_path / "yard"
    photos.mkdir()
    path, member, truth = _site_render(photos, "joist-concrete")
    out = tmp_path / "out"
    summary = run_batch(photos, out, defaults={"target": "9x6:15mm"}, jobs=1, report="none")
    assert summary.failed == 1                        # the trace check asks for review, unattended
    sessions, title = review_sessions([str(out)], {}, None)
    assert [s.path.name for s in sessions] == ["joist-concrete.jpg"] and "needs review" in sessions[0].note
    session = sessions[0]
    state = {**session.describe()["state"], "seed": [[round(member[0]), round(member[1])]]}
    assert state["target"] == "9x6:15mm"                # the lot's default, under the sidecar
    saved = session.save(state)
    assert saved["ok"] and "1 measured" in saved["after"], saved
    side = tomllib.loads(path.with_suffix(".toml").read_text())
    assert side["seed"] == state["seed"] and side["target"] == "9x6:15mm"
    row = next(r for r in (out / "inventory.csv").read_text().splitlines() if "joist-concrete" in r)
    assert ",done," in row or "done" in row.split(",")
    doc = json.loads((out / "joist-concrete.json").read_text())
    assert abs(doc["properties"]["A"]["value"] / truth["A"] - 1) < 0.02         # the render's own section


# -- the page in a real browser ---------------------------------------------------------------------

def _driver(tmp_path):
    chromium = shutil.which("chromium") or shutil.which("chromium-browser")
    driver = shutil.which("chromedriver")
    if (chromium is None or driver is None) and not os.environ.get("CI"):
        pytest.skip("chromium and chromedriver are not installed (CI installs them; .ci/run)")
    assert chromium and driver, "CI must have Debian's chromium and chromium-driver (.ci/run installs them)"
    webdriver = pytest.importorskip("selenium.webdriver")
    from selenium.webdriver.chrome.service import Service

    opts = webdriver.ChromeOptions()
    for a in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
              "--disable-background-networking", "--disable-component-update", "--disable-sync",
              "--disable-dev-shm-usage", "--window-size=1400,900", f"--user-data-dir={tmp_path / 'profile'}"):
        opts.add_argument(a)
    opts.binary_location = chromium
    return webdriver.Chrome(service=Service(driver), options=opts)


def _settled(d, timeout: float = 120.0) -> dict:
    """Wait until the page has the full uncertainty of its latest state; its result."""
    t0 = time.monotonic()
    while time.monotonic() - t0 < timeout:
        res = d.execute_script("return window.tracerReview && !window.tracerReview.busy() && "
                               "window.tracerReview.result()")
        if res:
            return res
        time.sleep(0.2)
    raise AssertionError("the page did not settle")


def _click_at(d, x: float, y: float) -> None:
    from selenium.webdriver.common.action_chains import ActionChains

    sx, sy = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])", x, y)
    svg = d.find_element("id", "canvas")
    r = svg.rect
    ActionChains(d).move_to_element_with_offset(svg, sx - r["x"] - r["width"] / 2,
                                                sy - r["y"] - r["height"] / 2).click().perform()


def _shown(d) -> dict:
    cells = d.find_elements("css selector", "#numbers td.v")
    return {c.get_attribute("data-key"): (float(c.get_attribute("data-value")), float(c.get_attribute("data-u")))
            for c in cells}


def test_the_page_fixes_a_flagged_trace_with_clicks_and_a_drag_then_saves_what_measure_reproduces(tmp_path):
    from selenium.webdriver.common.action_chains import ActionChains

    path, member, truth = _site_render(tmp_path, "joist-concrete")
    server = start_server([ReviewSession(path, options={"target": "9x6:15mm"})]).start()
    d = _driver(tmp_path)
    try:
        d.get(server.url)
        first = _settled(d)
        assert first["ok"] and first["check"]["needs_review"]          # unattended, it asks for review
        assert "needs review" in d.find_element("id", "check").text
        before = _shown(d)
        # A point on the member, one on the ground (the bottom right corner is ground on this render).
        d.find_element("css selector", "[data-mode=seed]").click()
        _click_at(d, *member)
        d.find_element("css selector", "[data-mode=outside]").click()
        W, H = d.execute_script("return window.tracerReview.image()")
        _click_at(d, W - 40, H - 40)
        seeded = _settled(d)
        state = d.execute_script("return window.tracerReview.state()")
        assert len(state["seed"]) == 1 and len(state["outside"]) == 1
        assert abs(state["seed"][0][0] - member[0]) < 3 and abs(state["seed"][0][1] - member[1]) < 3
        after = _shown(d)
        assert after != before
        assert abs(after["A"][0] / truth["A"] - 1) < 0.02
        # Drag a vertex of the boundary 6 px outwards from the centroid: A grows.
        d.find_element("css selector", "[data-mode=edit]").click()
        pts = seeded["editable"]["points"]
        cx = sum(p[0] for p in pts) / len(pts)
        k = max(range(len(pts)), key=lambda i: pts[i][0])                  # the right-most vertex
        vx, vy = pts[k]
        sx, sy = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])", vx, vy)
        tx, ty = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])",
                                  vx + 6 * (1 if vx > cx else -1), vy)
        vertex = next(v for v in d.find_elements("css selector", "circle.vertex")
                      if v.get_attribute("data-ring") == "0" and v.get_attribute("data-v") == str(k))
        ActionChains(d).move_to_element(vertex).click_and_hold().move_by_offset(
            round(tx - sx) // 2, 0).move_by_offset(round(tx - sx) - round(tx - sx) // 2, 0).release().perform()
        dragged = _settled(d)
        # A hand boundary is checked against the photo's edges (it follows the seeded trace's
        # ragged stretch along the wane, the red dashes): its measure is shown with it.
        flagged = dragged["check"]["needs_review"]
        assert dragged["hand_edited"] and "on_the_edge" in dragged["check"]["measures"]
        assert not flagged or "placed by hand" in " ".join(dragged["check"]["reasons"])
        # Against the same simplified boundary undragged, measured apart from the page: the
        # vertex moved about 6 px outwards, and A grew.
        undragged = ReviewSession(path, options={"target": "9x6:15mm"}).measure(
            {"target": "9x6:15mm", "trace": seeded["editable"]}, full=False)
        moved = d.execute_script("return window.tracerReview.state()")["trace"]["points"][k]
        assert abs(abs(moved[0] - vx) - 6) < 1.5 and abs(moved[1] - vy) < 1.5, (moved, vx, vy)
        assert dragged["values"]["A"]["value"] > undragged["values"]["A"]["value"]
        shown = _shown(d)
        # Undo and redo go back and forth over the drag.
        d.find_element("id", "undo").click()
        assert not _settled(d)["hand_edited"]
        d.find_element("id", "redo").click()
        assert _settled(d)["values"]["A"]["value"] == dragged["values"]["A"]["value"]
        if flagged:
            d.find_element("id", "accept").click()        # looked at, and accepted
            accepted = _settled(d)
            assert accepted["accepted"] and _shown(d) == shown      # acceptance changes no number
        d.find_element("id", "save").click()
        t0 = time.monotonic()
        while "wrote" not in d.find_element("id", "saved").text and time.monotonic() - t0 < 120:
            time.sleep(0.2)
        assert "joist-concrete.toml" in d.find_element("id", "saved").text
    finally:
        d.quit()
        server.stop()
    side = tomllib.loads(path.with_suffix(".toml").read_text())
    assert side["target"] == "9x6:15mm" and len(side["trace"]["points"]) == len(pts)
    assert side.get("accept_trace", False) == flagged
    code, doc = _measure_cli(path)
    assert code == 0, doc
    for key in ("A", "I1", "I2"):
        value, U = shown[key]
        assert doc["properties"][key]["value"] == pytest.approx(value, rel=1e-9)
        assert 2 * doc["properties"][key]["u"] == pytest.approx(U, rel=1e-9)


def test_the_page_draws_an_outline_by_clicks_with_the_allowance_of_its_zoom(tmp_path):
    from selenium.webdriver.common.action_chains import ActionChains
    import numpy as np
    import shapely

    path, member, truth = _site_render(tmp_path, "joist-concrete")
    from tracer.inputs.photo.renders.sites import site_scenes
    from tracer.inputs.photo.renders.synth import render

    r = render(dict(site_scenes())["joist-concrete"])
    # The true outline in pixels by the renderer's own homography (a site scene's maps the
    # section's frame), simplified to its corners, as a person clicks them.
    ring = np.asarray(r.section.parts[0].exterior)
    q = np.column_stack([ring, np.ones(len(ring))]) @ r.homography.T
    corners = np.asarray(shapely.LinearRing(q[:, :2] / q[:, 2:]).simplify(1.0).coords)[:-1]
    server = start_server([ReviewSession(path, options={"target": "9x6:15mm"})]).start()
    d = _driver(tmp_path)
    try:
        d.get(server.url)
        _settled(d)
        d.find_element("css selector", "[data-mode=outline]").click()
        for x, y in corners[:-1]:
            _click_at(d, x, y)
        sx, sy = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])", *corners[-1])
        svg = d.find_element("id", "canvas")
        rect = svg.rect
        ActionChains(d).move_to_element_with_offset(svg, sx - rect["x"] - rect["width"] / 2,
                                                    sy - rect["y"] - rect["height"] / 2).double_click().perform()
        res = _settled(d)
        state = d.execute_script("return window.tracerReview.state()")
        per_screen = d.execute_script("const s = document.getElementById('canvas'); "
                                      "return s.viewBox.baseVal.width / s.getBoundingClientRect().width")
    finally:
        d.quit()
        server.stop()
    assert len(state["trace"]["points"]) == len(corners) and not state["trace"]["snap"]
    assert state["trace"]["allowance_px"] == pytest.approx(max(0.5, per_screen), abs=0.01)
    assert res["hand_edited"] and not res["check"]["needs_review"]
    # Clicked at screen pixels (about one image pixel each here): A within 1 % of the render's own
    # section (integrated by tracer.section.properties, itself checked against closed forms), and inside U.
    A, U = res["values"]["A"]["value"], res["values"]["A"]["U"]
    assert abs(A / truth["A"] - 1) < 0.01 and abs(A - truth["A"]) <= U


def test_the_page_draws_a_tube_with_two_rims_of_five_clicks(tmp_path):
    # A round rim seen at a slant is an ellipse in the photo: five clicks on it fix it exactly.
    import numpy as np
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.actions.wheel_input import ScrollOrigin

    from tracer.inputs.photo.renders.sites import site_scenes
    from tracer.inputs.photo.renders.synth import render

    path, member, truth = _site_render(tmp_path, "tube-sand")
    r = render(dict(site_scenes())["tube-sand"])
    rims = []
    for ring in (r.section.parts[0].exterior, r.section.parts[0].holes[0]):
        q = np.column_stack([np.asarray(ring), np.ones(len(ring))]) @ r.homography.T
        q = q[:, :2] / q[:, 2:]
        rims.append(q[np.linspace(0, len(q), 6)[:-1].astype(int)])       # five points round it
    server = start_server([ReviewSession(path, options={"target": "9x6:15mm"})]).start()
    d = _driver(tmp_path)
    try:
        d.get(server.url)
        _settled(d)
        # Zoomed in on the tube first (the wheel, about 1.8 times): a click is then about an image
        # pixel, and the allowance that follows small (a thin wall wants it).
        svg = d.find_element("id", "canvas")
        sx, sy = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])",
                                  *rims[0].mean(axis=0))
        rect = svg.rect
        dx, dy = int(sx - rect["x"] - rect["width"] / 2), int(sy - rect["y"] - rect["height"] / 2)
        # Dragged to the middle of the view (the pan tool), then the wheel there.
        ActionChains(d).move_to_element_with_offset(svg, dx, dy).click_and_hold().move_by_offset(
            -dx // 2, -dy // 2).move_by_offset(-dx + dx // 2, -dy + dy // 2).release().perform()
        ActionChains(d).scroll_from_origin(ScrollOrigin.from_element(svg, 0, 0), 0, -400).perform()
        d.find_element("css selector", "[data-mode=rim]").click()
        for rim in rims:                               # the outer rim, then the bore's
            for x, y in rim:
                px, py = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])", x, y)
                assert rect["x"] < px < rect["x"] + rect["width"] and rect["y"] < py < rect["y"] + rect["height"]
                _click_at(d, x, y)
            _settled(d)
        res = _settled(d)
        state = d.execute_script("return window.tracerReview.state()")
    finally:
        d.quit()
        server.stop()
    assert len(state["trace"]["holes"]) == 1 and len(state["trace"]["points"]) >= 24
    assert res["hand_edited"] and state["trace"]["allowance_px"] < 1.5
    # Truth: the render's own tube (tracer.section.properties; closed forms in test_properties).
    for key in ("A", "I1", "I2"):
        value, U = res["values"][key]["value"], res["values"][key]["U"]
        assert abs(value / truth[key] - 1) < 0.02 and abs(value - truth[key]) <= U, key


def test_weak_stretches_are_the_outline_off_a_clean_step_over_a_stretch():
    # The trace check's own per-point edge support (trace.profiles[0].clean), evened over 15
    # points: a run of 20 weak points (across the ring's start) is one stretch, lone weak points
    # are none (counted independently here).
    from types import SimpleNamespace

    import numpy as np

    from tracer.review.session import _weak_stretches

    n = 200
    pts = np.column_stack([np.arange(float(n)), np.zeros(n)])
    clean = np.ones(n, bool)
    clean[190:] = clean[:10] = False                   # 20 weak points wrapping round the start
    clean[100] = clean[140] = False                    # lone ones
    runs = _weak_stretches(SimpleNamespace(profiles=[SimpleNamespace(clean=clean, points=pts)]))
    assert len(runs) == 1
    xs = {int(p[0]) for p in runs[0]}
    # Point i is weak where at least 8 of the 15 round it are: at the block's ends 8 of them, so
    # the stretch is the block itself.
    assert xs == set(range(190, 200)) | set(range(10))
    assert _weak_stretches(SimpleNamespace(profiles=[SimpleNamespace(clean=np.ones(n, bool), points=pts)])) == []


def test_the_page_takes_two_scale_points_and_their_distance_when_there_is_no_scale(channel, tmp_path):
    # The bundled sample without its sidecar: no scale reference. Two points on the target's
    # corners five squares apart (50 mm: the sample's 6 x 4 board of 10 mm squares) and their
    # distance typed give the scale. Truth: the sample's [truth] A, the rendered section.
    from selenium.webdriver.common.keys import Keys
    from selenium.webdriver.support.ui import Select

    from tracer.inputs.photo.pipeline import measure_photo

    truth = tomllib.loads(channel.with_suffix(".toml").read_text())["truth"]
    corners = measure_photo(channel, target="6x4:10mm").plane.marks     # row by row, 6 a row
    a, b = corners[0], corners[5]
    channel.with_suffix(".toml").unlink()
    server = start_server([ReviewSession(channel)]).start()
    d = _driver(tmp_path)
    try:
        d.get(server.url)
        first = _settled(d)
        assert not first["ok"] and "No scale reference yet" in d.find_element("id", "check").text
        Select(d.find_element("id", "method")).select_by_value("scale")
        _click_at(d, *a)
        _click_at(d, *b)
        d.find_element("id", "length").send_keys("50mm", Keys.TAB)
        res = _settled(d)
        state = d.execute_script("return window.tracerReview.state()")
    finally:
        d.quit()
        server.stop()
    assert state["scale"].endswith("=50mm") and res["ok"] and res["scale"]["method"] == "two points"
    x1, y1, x2, y2 = map(float, state["scale"].split("=")[0].split(","))
    assert abs(x1 - a[0]) < 2 and abs(y1 - a[1]) < 2 and abs(x2 - b[0]) < 2 and abs(y2 - b[1]) < 2
    A, U = res["values"]["A"]["value"], res["values"]["A"]["U"]
    # Two points fix no perspective (the sample's camera is tilted and off to one side, as its
    # own warning says): A is some per cent off, and the tilt allowance's U covers it.
    assert abs(A / truth["A"] - 1) < 0.08 and abs(A - truth["A"]) <= U


def test_alt_drag_pulls_a_stretch_of_the_outline(channel, tmp_path):
    # With Alt, the dragged vertex moves as far as the pointer and its neighbours along the ring
    # follow less and less (a smooth bump); without it only the vertex moves (the test above).
    import numpy as np
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.keys import Keys

    server = start_server([ReviewSession(channel)]).start()
    d = _driver(tmp_path)
    try:
        d.get(server.url)
        res = _settled(d)
        pts = np.asarray(res["editable"]["points"])
        k = int(np.argmin(pts[:, 0]))                     # a vertex on the web's outer (left) edge
        d.find_element("css selector", "[data-mode=edit]").click()
        sx, sy = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])", *pts[k])
        tx, _ = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])",
                                 pts[k][0] - 10, pts[k][1])
        svg = d.find_element("id", "canvas")
        rect = svg.rect
        step = round(tx - sx)
        (ActionChains(d).move_to_element_with_offset(svg, sx - rect["x"] - rect["width"] / 2,
                                                     sy - rect["y"] - rect["height"] / 2)
         .key_down(Keys.ALT).click_and_hold().move_by_offset(step // 2, 0).move_by_offset(step - step // 2, 0)
         .release().key_up(Keys.ALT).perform())
        _settled(d)
        moved = np.asarray(d.execute_script("return window.tracerReview.state()")["trace"]["points"])
    finally:
        d.quit()
        server.stop()
    shift = np.hypot(*(moved - pts).T)
    assert shift[k] == pytest.approx(10, abs=1.5)
    assert (shift > 0.5).sum() >= 3 and (shift[np.arange(len(pts)) != k] < shift[k]).all()
