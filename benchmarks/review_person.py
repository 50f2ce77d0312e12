"""What a person does on the review page to mend each site render, counted in actions.

An idealised person, acting on the 45 site renders of ``tracer.inputs.photo.renders.sites.site_scenes`` (each
with its true section) through the same ``measure_photo`` the page calls:

1. looks at the unattended trace;
2. where it is not right, clicks where it is worst: on the member where the trace missed most of
   it, or on the ground where it took in most (the deepest point of the largest error, as an eye
   picks it), up to three clicks;
3. where still not right and the outline has many corners and is not round, clicks a rough
   outline of at most 20 points, each within 4 px, with snap (the edge found near it);
4. where still not right, draws the boundary: a round rim (an ellipse within 0.5 px in the
   photo: a circle seen at a slant) with the rim tool (five clicks),
   any other ring by clicking the true outline's corners (and its holes'), simplified to within
   1 px, as the page's outline tool takes them; each click placed within 1.5 px (a screen pixel
   of an unzoomed view), with that allowance.

"Right" is what a person would keep: measured, the trace check content, and A, I1 and I2 within
3U of the truth; a trace within 3U that the check still flags is accepted after a look (the
page's tick, one action more). Prints the step at which each render came right and the actions it took, then
the counts. The person knows the truth, which a real one only sees on the page: the counts are
the least a careful person needs, not what everyone will do.

Run:  python benchmarks/review_person.py [--jobs N] [--only TEXT]
"""

from __future__ import annotations

import argparse
import os
import tempfile
from collections import Counter
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

KEYS = ("A", "I1", "I2")
CLICKS = 3
PLACED_PX = 1.5


def main() -> None:
    from tracer.inputs.photo.renders.sites import site_scenes

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--only", default=None, help="names containing this text only")
    args = ap.parse_args()
    idx = [i for i, (n, _) in enumerate(site_scenes()) if args.only is None or args.only in n]
    with ProcessPoolExecutor(max_workers=args.jobs) as pool:
        rows = list(pool.map(_person, idx))
    print(f"{'render':34s} {'came right at':24s} actions  steps")
    for name, when, actions, steps in rows:
        print(f"{name:34s} {when:24s} {actions:7d}  {' '.join(steps)}")
    count = Counter(when for _, when, _, _ in rows)
    print(f"\n{len(rows)} renders: " + ", ".join(f"{k}: {v}" for k, v in sorted(count.items())))
    drawn = [a for _, w, a, _ in rows if w.startswith("drawn")]
    if drawn:
        print(f"drawn by hand: {min(drawn)} to {max(drawn)} actions, median {int(np.median(drawn))} "
              f"(the {CLICKS} clicks before included)")


def _person(index: int) -> tuple[str, str, int, list[str]]:
    import cv2
    import shapely

    from tracer.errors import TracerError
    from tracer.inputs.photo.pipeline import measure_photo
    from tracer.inputs.photo.renders.sites import site_scenes
    from tracer.inputs.photo.renders.synth import render
    from tracer.section.properties import section_properties
    from tracer.result import measure

    name, scene = site_scenes()[index]
    r = render(scene)
    truth = section_properties(r.section).values()
    h, w = r.image.shape[:2]

    def to_px(ring) -> np.ndarray:
        q = np.column_stack([np.asarray(ring, float), np.ones(len(ring))]) @ r.homography.T
        return q[:, :2] / q[:, 2:]

    true_mask = np.zeros((h, w), np.uint8)
    corners, full_rings = [], []
    for i, part in enumerate(r.section.parts):
        for k, ring in enumerate([part.exterior, *part.holes]):
            px = to_px(ring)
            cv2.fillPoly(true_mask, [np.round(px * 16).astype(np.int32)], 1 if k == 0 else 0, shift=4)
            if i == 0:                                  # the page draws one outline and its holes
                corners.append(np.asarray(shapely.LinearRing(px).simplify(1.0).coords)[:-1])
                full_rings.append(px)
    true_mask = true_mask.astype(bool)
    steps: list[str] = []
    hints: dict[str, list] = {"seed": [], "outside": []}
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / f"{name}.jpg"
        cv2.imwrite(str(path), r.image, [cv2.IMWRITE_JPEG_QUALITY, 92])

        def look(**kw) -> tuple[str, np.ndarray]:
            try:
                pm = measure_photo(path, target="9x6:15mm", accept_trace=True, **kw)
            except TracerError:
                return "refused", np.zeros((h, w), bool)
            res = measure(pm.measurement, draws=300)
            v = res.properties.values()
            within = all(abs(v[k] - truth[k]) <= 3 * res.u[k] for k in KEYS)
            mask = np.zeros((h, w), np.uint8)
            for k, ring in enumerate(pm.trace.rings_px):
                cv2.fillPoly(mask, [np.round(np.asarray(ring) * 16).astype(np.int32)], 1 if k == 0 else 0, shift=4)
            state = ("flagged-" if pm.check.needs_review else "") + ("right" if within else "wrong")
            return state, mask.astype(bool)

        for clicks in range(CLICKS + 1):
            state, mask = look(**{k: v for k, v in hints.items() if v})
            steps.append(state)
            if state == "right":
                return name, ("unattended" if clicks == 0 else f"{clicks} click(s)"), clicks, steps
            if state == "flagged-right":                # the trace is right: seen so, and accepted
                return name, f"{clicks} click(s) + accept", clicks + 1, steps
            if clicks == CLICKS:
                break
            missed = cv2.distanceTransform((true_mask & ~mask).astype(np.uint8), cv2.DIST_L2, 5)
            extra = cv2.distanceTransform((mask & ~true_mask).astype(np.uint8), cv2.DIST_L2, 5)
            worst = missed if missed.max() >= extra.max() else extra
            y, x = np.unravel_index(int(np.argmax(worst)), worst.shape)
            hints["seed" if worst is missed else "outside"].append([float(x), float(y)])
        rng = np.random.default_rng(index)
        # Where the outline has many corners (a log, a pitted flange), first a rough one of at most
        # 20 clicks, each within 4 px, with snap: the edge is found near it.
        if sum(len(c) for c in corners) > 24 and not all(_round(f) for f in full_rings):
            rough = []
            for ring in corners:
                line, tol = shapely.LinearRing(ring), 2.0
                while len(line.simplify(tol).coords) - 1 > 20:
                    tol *= 1.3
                pts = np.asarray(line.simplify(tol).coords)[:-1]
                rough.append(pts + rng.uniform(-4.0, 4.0, pts.shape))
            state, _ = look(trace={"points": rough[0].tolist(), "holes": [c.tolist() for c in rough[1:]],
                                   "snap": True})
            steps.append(f"rough+snap:{state}")
            clicks = CLICKS + sum(len(c) for c in rough)
            if state == "right":
                return name, "rough outline, snapped", clicks, steps
            if state == "flagged-right":
                return name, "rough outline, snapped + accept", clicks + 1, steps
        placed, n = [], 0
        for ring, full in zip(corners, full_rings):
            if _round(full):                            # the rim tool: five clicks on the rim
                five = full[np.linspace(0, len(full), 6)[:-1].astype(int)]
                placed.append(_ellipse_through(five + rng.uniform(-PLACED_PX, PLACED_PX, five.shape)))
                n += 5
            else:                                       # the outline tool: each corner
                placed.append(ring + rng.uniform(-PLACED_PX, PLACED_PX, ring.shape))
                n += len(ring)
        drawn = {"points": placed[0].tolist(), "holes": [c.tolist() for c in placed[1:]], "allowance_px": PLACED_PX}
        state, _ = look(trace=drawn)
        steps.append(f"drawn:{state}")
        if state == "flagged-right":                    # drawn where the edge hardly shows: accepted
            return name, "drawn + accept", CLICKS + n + 1, steps
        return name, ("drawn" if state == "right" else "not mended"), CLICKS + n, steps


def _round(ring: np.ndarray) -> bool:
    """Whether the ring is a round rim in the photo (an ellipse within 0.5 px: a circle seen at a
    slant), so that the page's rim tool draws it from five clicks."""
    if len(ring) < 16:
        return False
    fitted = _ellipse_through(ring[np.linspace(0, len(ring), 6)[:-1].astype(int)])
    if fitted is None:
        return False
    import shapely

    return shapely.LinearRing(fitted).hausdorff_distance(shapely.LinearRing(ring)) < 0.5


def _ellipse_through(p: np.ndarray) -> np.ndarray | None:
    """The ring the page's rim tool makes through five points (review.js, ellipseThrough)."""
    m = p.mean(axis=0)
    sc = float(np.sqrt(((p - m) ** 2).sum(axis=1).mean())) or 1.0
    u, v = ((p - m) / sc).T
    try:
        A, B, C, D, E = np.linalg.solve(np.column_stack([u * u, u * v, v * v, u, v]), np.ones(5))
    except np.linalg.LinAlgError:
        return None
    det = 4 * A * C - B * B
    if det <= 0:
        return None
    u0, v0 = (B * E - 2 * C * D) / det, (B * D - 2 * A * E) / det
    F0 = -1 + (D * u0 + E * v0) / 2
    tr, dif = (A + C) / 2, np.hypot((A - C) / 2, B / 2)
    l1, l2 = tr + dif, tr - dif
    if -F0 / l1 <= 0 or -F0 / l2 <= 0:
        return None
    a1, a2 = np.sqrt(-F0 / l1), np.sqrt(-F0 / l2)
    phi = 0.5 * np.arctan2(B, A - C)
    e1, e2 = np.array([np.cos(phi), np.sin(phi)]), np.array([-np.sin(phi), np.cos(phi)])
    big = max(a1, a2) * sc
    n = max(24, int(np.ceil(np.pi / np.arccos(1 - 0.05 / max(big, 1.0)))))
    t = 2 * np.pi * np.arange(n) / n
    pts = (u0, v0) + np.outer(a1 * np.cos(t), e1) + np.outer(a2 * np.sin(t), e2)
    return m + sc * pts


if __name__ == "__main__":
    main()
