"""Response of the review page to one edit on a 12-megapixel photo, against decoding the photo.

Renders the 4000 x 3000 photo of benchmarks/photo.py (an invented member beside a 9 x 6 target),
opens it as the page does (a ReviewSession, the photo read once), then times side by side in
one process: cv2.imread of the file; an edit's quick answer (a point added on the member: the
whole measure_photo path with a quick estimate of U, what the page shows at once); and the full
answer that follows when the person stops editing (the adaptive Monte Carlo of tracer measure).
Also the same quick answer through the server, over HTTP on loopback. Goal: an edit answered
within about 1 s.

Run:  python benchmarks/review.py
"""

from __future__ import annotations

import http.client
import json
import time

import cv2

from timing import best, twelve_megapixel_photo
from tracer.review.server import start_server
from tracer.review.session import ReviewSession


def main() -> None:
    with twelve_megapixel_photo() as (path, r):
        h, w = r.image.shape[:2]
        session = ReviewSession(path, options={"target": "9x6:15mm"})
        t0 = time.perf_counter()
        session.view_jpeg()
        t_open = time.perf_counter() - t0
        seed = [round(r.member_point[0]), round(r.member_point[1])]
        state = {"target": "9x6:15mm", "seed": [seed]}
        t_read, t_quick, t_full = [], [], []
        for _ in range(3):
            t_read.append(best(lambda: cv2.imread(str(path)), 2))
            t_quick.append(best(lambda: session.measure(state, full=False), 2))
            t_full.append(best(lambda: session.measure(state, full=True), 1))
        t_read, t_quick, t_full = min(t_read), min(t_quick), min(t_full)
        server = start_server([session]).start()
        try:
            body = json.dumps({"state": state, "full": False}).encode()
            runs = []
            for _ in range(3):
                conn = http.client.HTTPConnection("127.0.0.1", server.port, timeout=60)
                t0 = time.perf_counter()
                conn.request("POST", "/api/photos/0/measure", body=body,
                             headers={"Host": f"127.0.0.1:{server.port}", "X-Tracer-Token": server.token,
                                      "Content-Type": "application/json"})
                answer = conn.getresponse().read()
                runs.append(time.perf_counter() - t0)
                conn.close()
            assert json.loads(answer)["ok"]
        finally:
            server.stop()
        print(f"photo of {w} x {h} = {w * h / 1e6:.1f} MP, JPEG")
        print(f"  opening: photo read and the reduced view made : {t_open:6.2f} s (once per photo)")
        print(f"  cv2.imread alone                               : {1e3 * t_read:6.0f} ms")
        print(f"  an edit, quick answer, in-process              : {1e3 * t_quick:6.0f} ms"
              f"   ratio to imread {t_quick / t_read:5.2f}")
        print(f"  an edit, quick answer, over HTTP               : {1e3 * min(runs):6.0f} ms   (goal about 1 s)")
        print(f"  the full uncertainty when editing stops        : {1e3 * t_full:6.0f} ms")


if __name__ == "__main__":
    main()
