"""The review page's answer to an edit on a 12-megapixel photo, as a person sees it in the browser.

Renders the 12 MP photo of benchmarks/photo.py, serves it with `tracer review`'s server, opens
the page in headless Chromium (Selenium, Debian's chromedriver) and, five times over, clicks a
point on the member and times from the click to the page drawing the answer with its quick U,
and to the page drawing the full U that follows (about 0.6 s after the last edit, when the page
sends it). The times include the request, the measuring, the answer's transfer and its drawing.
Goal: an edit answered within about 1 s.

Run:  python benchmarks/review_browser.py
"""

from __future__ import annotations

import shutil
import statistics
import tempfile
import time

from timing import twelve_megapixel_photo
from tracer.review.server import start_server
from tracer.review.session import ReviewSession


def main() -> None:
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service
    from selenium.webdriver.common.action_chains import ActionChains

    with twelve_megapixel_photo() as (path, r), tempfile.TemporaryDirectory() as profile:
        h, w = r.image.shape[:2]
        server = start_server([ReviewSession(path, options={"target": "9x6:15mm"})]).start()
        opts = webdriver.ChromeOptions()
        for a in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--disable-dev-shm-usage", "--window-size=1400,900", f"--user-data-dir={profile}"):
            opts.add_argument(a)
        opts.binary_location = shutil.which("chromium") or "/usr/bin/chromium"
        d = webdriver.Chrome(service=Service(shutil.which("chromedriver")), options=opts)
        try:
            t0 = time.perf_counter()
            d.get(server.url)
            _wait(d, "return window.tracerReview && window.tracerReview.shown() > 0")
            opened = time.perf_counter() - t0
            _wait(d, "return !window.tracerReview.busy()")
            d.find_element("css selector", "[data-mode=seed]").click()
            svg = d.find_element("id", "canvas")
            rect = svg.rect
            quick, full = [], []
            for k in range(5):
                x, y = r.member_point[0] + 20 * k, r.member_point[1] + 15 * k
                sx, sy = d.execute_script("return window.tracerReview.toScreen(arguments[0], arguments[1])", x, y)
                before = d.execute_script("return window.tracerReview.shown()")
                t0 = time.perf_counter()
                ActionChains(d).move_to_element_with_offset(svg, sx - rect["x"] - rect["width"] / 2,
                                                            sy - rect["y"] - rect["height"] / 2).click().perform()
                _wait(d, f"return window.tracerReview.shown() > {before}")
                quick.append(time.perf_counter() - t0)
                _wait(d, "return !window.tracerReview.busy()")
                full.append(time.perf_counter() - t0)
        finally:
            d.quit()
            server.stop()
    print(f"photo of {w} x {h} = {w * h / 1e6:.1f} MP, JPEG, in headless Chromium")
    print(f"  page opened, first answer drawn       : {opened:5.2f} s")
    print(f"  an edit, quick answer drawn (median)  : {statistics.median(quick):5.2f} s   "
          f"(max {max(quick):.2f}; goal about 1 s)")
    print(f"  an edit, full U drawn (median)        : {statistics.median(full):5.2f} s   "
          f"(max {max(full):.2f}; includes the page's 0.6 s wait for more edits)")


def _wait(d, script: str, timeout: float = 120.0) -> None:
    t0 = time.monotonic()
    while not d.execute_script(script):
        if time.monotonic() - t0 > timeout:
            raise RuntimeError(f"the page did not answer: {script}")
        time.sleep(0.01)


if __name__ == "__main__":
    main()
