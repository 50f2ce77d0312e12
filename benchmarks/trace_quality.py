"""How the photo path does on site renders and on real photos: measured, flagged, refused, errors.

Three sets, each measured as a user would, unattended:

- the 45 site renders of ``tracer.inputs.photo.renders.sites.site_scenes`` (grounds, finishes, bark, shadows,
  glints, side faces; a 9 x 6 target of 15 mm squares in view), against their true sections;
- the 12 renders of the accuracy test in tests/test_photo.py (the plain look), likewise;
- the real photos in tests/data/real-photos, with ``--dpi 25.4`` (1 px = 1 mm), against their
  reference outlines where they have one (``--under-bark`` for the under-bark references).

For each photo: the outcome (measured, flagged: the trace check asks for review, refused: an
error), the errors of A, I1 and I2, whether the k = 2 interval covers the truth, and whether an
error beyond 3U went out without a flag (the one outcome that must never happen). Prints a table
per set and a summary. Renders are made afresh (about 30 s); the whole run takes a few minutes.

Run:  python benchmarks/trace_quality.py [--set site|plain|real] [--jobs N] [--seed]
      (--seed gives each render's member point as a hint, as a person's click would)
"""

from __future__ import annotations

import argparse
import glob
import os
import sys
import tempfile
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
REAL = ROOT / "tests" / "data" / "real-photos"
KEYS = ("A", "I1", "I2")
VERBOSE = "--verbose" in sys.argv


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--set", choices=("site", "plain", "real", "all"), default="all")
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--seed", action="store_true", help="give the render's member point as --seed")
    ap.add_argument("--only", default=None, help="names containing this text only")
    ap.add_argument("--verbose", action="store_true", help="print each trace check's measures")
    ap.add_argument("--dump", default=None, help="also write every row as JSON lines to this file")
    args = ap.parse_args()
    sets = ("site", "plain", "real") if args.set == "all" else (args.set,)
    with tempfile.TemporaryDirectory() as tmp:
        for which in sets:
            jobs = _jobs(which, Path(tmp), args.seed, args.only)
            t0 = time.perf_counter()
            with ProcessPoolExecutor(max_workers=args.jobs) as pool:
                rows = list(pool.map(_run, jobs))
            _report(which, rows, time.perf_counter() - t0)
            if args.dump:
                import json

                with open(args.dump, "a", encoding="utf-8") as f:
                    for r in rows:
                        f.write(json.dumps({"set": which, "seeded": args.seed, **r}) + "\n")


def _jobs(which: str, tmp: Path, seed: bool, only: str | None) -> list[dict]:
    if which == "real":
        out = []
        for f in sorted(glob.glob(str(REAL / "*.jpg"))):
            name = Path(f).stem
            refs = glob.glob(str(REAL / f"{name}.*.png"))
            ref = refs[0] if refs else None
            kw = {"dpi": 25.4}
            if ref and ref.endswith(".underbark.png"):
                kw["under_bark"] = True
            out.append({"kind": "real", "name": name, "path": f, "ref": ref, "kw": kw})
        return [j for j in out if only is None or only in j["name"]]
    return [{"kind": which, "name": name, "index": i, "tmp": str(tmp), "seed": seed}
            for i, name in enumerate(_scene_names(which)) if only is None or only in name]


def _scene_names(which: str) -> list[str]:
    if which == "site":
        from tracer.inputs.photo.renders.sites import site_scenes

        return [n for n, _ in site_scenes()]
    return [f"plain-{i:02d}-{n}" for i, n in enumerate(["joist", "channel", "tube", "angle"] * 3)]


def _plain_scenes():
    from tracer.inputs.photo.renders.scene import Scene
    from tracer.section.shapes import angle, channel, rectangle, tube

    shapes = {"joist": rectangle(b=47, h=195, wane={"top_left": 16.0}, chord_angle=0.05),
              "channel": channel(h=152, b=76, tw=6.4, tf=9, r=8, chord_angle=0.05),
              "tube": tube(d=114.3, t=6.3, chord_angle=0.05),
              "angle": angle(h=150, b=90, t=10, r=12, rt=6, chord_angle=0.05)}
    rng = np.random.default_rng(1)                      # as tests/test_photo.py draws them
    out = []
    for i, name in enumerate(list(shapes) * 3):
        s = shapes[name]
        x0, y0, _, _ = s.bounds
        out.append(Scene(section=s.translated(90 - x0, -30 - y0), tilt=rng.uniform(0, 12),
                         tilt_axis=rng.uniform(0, 180), blur=rng.uniform(0.5, 2.0), light=rng.uniform(0, 0.3),
                         px_per_mm=5.0, seed=200 + i, member="timber" if name == "joist" else "steel",
                         target=(9, 6, 15.0), target_at=(-150.0, -60.0)))
    return out


def _run(job: dict) -> dict:
    import cv2

    from tracer.errors import TracerError
    from tracer.inputs.photo.pipeline import measure_photo
    from tracer.section.properties import section_properties
    from tracer.result import measure

    row = {"name": job["name"], "outcome": "refused", "reason": "", "err": {}, "cov": {}, "U": {}}
    t0 = time.perf_counter()
    if job["kind"] == "real":
        path, kw = job["path"], dict(job["kw"])
        truth = _mask_moments(job["ref"]) if job["ref"] else None
    else:
        from tracer.inputs.photo.renders.sites import site_scenes
        from tracer.inputs.photo.renders.synth import render

        scene = site_scenes()[job["index"]][1] if job["kind"] == "site" else _plain_scenes()[job["index"]]
        r = render(scene)
        path = str(Path(job["tmp"]) / f"{job['name']}.jpg")
        cv2.imwrite(path, r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])
        kw = {"target": "9x6:15mm"}
        if job["seed"] and r.member_point is not None:
            kw["seed"] = f"{r.member_point[0]:.1f},{r.member_point[1]:.1f}"
        truth = section_properties(r.section).values()
    try:
        pm = measure_photo(path, accept_trace=True, **kw)
    except TracerError as e:
        row["reason"] = str(e)[:160]
        row["seconds"] = time.perf_counter() - t0
        return row
    check = pm.check
    row["outcome"] = "flagged" if check.needs_review else "measured"
    row["reason"] = "; ".join(check.reasons)[:160]
    row["confidence"] = check.confidence
    row["measures"] = {k: round(v, 2) for k, v in check.measures.items()}
    res = measure(pm.measurement, draws=300)
    if truth is not None:
        got = res.properties.values()
        for k in KEYS:
            e = got[k] - truth[k]
            row["err"][k] = e / truth[k]
            row["U"][k] = 2 * res.u[k] / truth[k]
            row["cov"][k] = abs(e) <= 2 * res.u[k]
            row.setdefault("beyond3U", False)
            row["beyond3U"] |= abs(e) > 3 * res.u[k]
    row["seconds"] = time.perf_counter() - t0
    return row


def _mask_moments(png: str) -> dict:
    """A, I1, I2 of a reference mask's pixels [px units] (each pixel a unit square)."""
    import cv2

    m = cv2.imread(png, cv2.IMREAD_GRAYSCALE) > 127
    ys, xs = np.nonzero(m)
    a = float(len(xs))
    dx, dy = xs - xs.mean(), ys - ys.mean()
    ix = float((dy ** 2).sum()) + a / 12
    iy = float((dx ** 2).sum()) + a / 12
    ixy = -float((dx * dy).sum())
    c, r = 0.5 * (ix + iy), float(np.hypot(0.5 * (ix - iy), ixy))
    return {"A": a, "I1": c + r, "I2": c - r}


def _report(which: str, rows: list[dict], seconds: float) -> None:
    print(f"\n== {which}: {len(rows)} photos, {seconds:.0f} s")
    print(f"{'name':34s} {'outcome':9s} {'conf':>5s} " + " ".join(f"{k:>14s}" for k in KEYS) + "  note")
    for r in rows:
        errs = " ".join((f"{100 * r['err'][k]:+6.2f}%{'' if r['cov'][k] else '!'}(U{100 * r['U'][k]:.1f})"
                         if k in r["err"] else " " * 14).rjust(14) for k in KEYS)
        conf = f"{r['confidence']:.2f}" if "confidence" in r else "  -  "
        bad = "  BEYOND 3U UNFLAGGED" if r.get("beyond3U") and r["outcome"] == "measured" else ""
        print(f"{r['name'][:34]:34s} {r['outcome']:9s} {conf:>5s} {errs}  {r['reason'][:70]}{bad}")
        if VERBOSE and "measures" in r:
            print(" " * 46 + "  ".join(f"{k} {v}" for k, v in r["measures"].items()))
    n = len(rows)
    measured = [r for r in rows if r["outcome"] == "measured"]
    flagged = [r for r in rows if r["outcome"] == "flagged"]
    refused = [r for r in rows if r["outcome"] == "refused"]
    print(f"   measured {len(measured)}/{n}, flagged {len(flagged)}, refused {len(refused)}")
    with_truth = [r for r in measured + flagged if r["err"]]
    for group, label in ((measured, "measured"), (with_truth, "measured or flagged")):
        g = [r for r in group if r["err"]]
        if g:
            worst = {k: max(abs(r["err"][k]) for r in g) for k in KEYS}
            cov = {k: sum(r["cov"][k] for r in g) / len(g) for k in KEYS}
            print(f"   {label} ({len(g)} with truth): worst |err| " + ", ".join(f"{k} {100 * v:.2f} %" for k, v in worst.items())
                  + "; k = 2 coverage " + ", ".join(f"{k} {100 * v:.0f} %" for k, v in cov.items()))
    silent = [r["name"] for r in measured if r.get("beyond3U")]
    print(f"   beyond 3U without a flag: {len(silent)}" + (f" ({', '.join(silent)})" if silent else ""))
    sec = [r["seconds"] for r in rows]
    print(f"   seconds per photo (render and measure): median {np.median(sec):.2f}, max {max(sec):.2f}")
    sys.stdout.flush()


if __name__ == "__main__":
    main()
