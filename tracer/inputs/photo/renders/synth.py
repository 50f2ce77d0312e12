"""Synthetic photos of known sections, for tests, for the bundled demo images and as site-like test sets.

A scene (:class:`tracer.inputs.photo.renders.scene.Scene`) is drawn in the plane of the cut face,
in millimetres: the ground, the member's end face, a printed checkerboard target and, optionally,
a ruler. A camera then looks at the plane through a homography (tilt about a chosen axis,
in-plane turn, scale), with blur, uneven light, noise and JPEG compression. The section's true
geometry in the target's millimetre frame is returned with the image, so that every measurement
of the photo can be compared with the truth.

Two looks share the camera and the exact filling of outlines. With every site field of
:class:`Scene` at its default, the plain look: grey, a mottled floor, the face's rings or speckle
(the existing tests and bundled samples rely on it bit for bit). Setting any site field (a ground,
a finish, bark, checks, marks, a cast shadow, glints, a turned light) gives the
site look (:mod:`tracer.inputs.photo.renders.sitelook`), in colour: grounds of concrete, gravel,
sand, grass, wood chips or decking; end grain with growth rings, radial checks and a pith; bark;
bright, grey, mill-scaled, rusty or painted steel; chalk, crayon and paint marks; side faces
shaded by the light's direction and the member's shadow on the ground (textures in
:mod:`tracer.inputs.photo.renders.grounds` and :mod:`tracer.inputs.photo.renders.scenery`).
Textures are surface only: the truth is the outline.
:func:`tracer.inputs.photo.renders.sites.site_scenes` is a named set of such scenes;
:mod:`tracer.inputs.photo.renders.members` builds irregular members (logs with bark, waney boards,
corroded steel) for them. All scenes and members are of our own invention.
"""

from __future__ import annotations

import math
from dataclasses import fields

import numpy as np

from ....section.geometry import Section
from ..tone import to_levels, to_light
from .scene import Render, Scene, camera_projection
from .sitelook import camera_out, check_site, coverage_exact, site_layers

__all__ = ["render"]

# Sub-pixels per pixel along each axis when filling outlines.
_SUPERSAMPLE = 4

# The fields whose defaults keep the plain look.
_SITE_FIELDS = ("ground", "finish", "under_bark", "checks", "pith", "marks", "shadow", "light_from", "glints")
_SITE_DEFAULTS = {f.name: f.default for f in fields(Scene) if f.name in _SITE_FIELDS}


def render(scene: Scene) -> Render:
    """Draw `scene` as a camera would see it (see :class:`Scene`).

    Every outline (member, holes, side faces, target squares, ruler) is mapped to the image by
    the camera's homography, which keeps straight lines straight, and filled by pixel-centre
    tests on a 4x finer grid that is then averaged: the rendered area is exact to well under a
    pixel's share. Layers are composited in light (with tone "srgb"), lens distortion where asked
    then moves every pixel as OpenCV's model says, the lens blurs, the light falls off, and the
    camera encodes, adds noise and compresses.

    Raises
    ------
    ValueError
        A site field out of range or not fitting the member (a steel finish on timber, bark on
        steel, an unknown ground), or lens distortion without a sensor.
    """
    import cv2

    site = _is_site(scene)
    if site:
        check_site(scene)
    rng = np.random.default_rng(scene.seed)
    cols, rows, sq = scene.target if scene.target is not None else (0, 0, 0.0)
    tx, ty = scene.target_at if scene.target is not None else (0.0, 0.0)
    paper = (np.array([tx - 1.6 * sq, ty - 1.6 * sq]), np.array([tx + (cols + 0.6) * sq, ty + (rows + 0.6) * sq]))
    if scene.section is not None:
        sx0, sy0, sx1, sy1 = scene.section.bounds
    else:
        sx0, sy0, sx1, sy1 = (*paper[0], *paper[1])
    if scene.target is None:
        paper = (np.array([sx0, sy0]), np.array([sx1, sy1]))
    lo = np.minimum(paper[0], (sx0, sy0)) - scene.margin
    hi = np.maximum(paper[1], (sx1, sy1)) + scene.margin
    ruler = None
    if scene.ruler:
        if scene.ruler_at is None:
            lo[1] -= 40.0
            ruler = (np.array([lo[0] + 10.0, lo[1] + 12.0]), min(scene.ruler_length, hi[0] - lo[0] - 20.0), 0.0)
        else:
            x, y, a = scene.ruler_at
            ruler = (np.array([x, y]), scene.ruler_length, a)
    rulers = [] if ruler is None else [ruler]
    if scene.ruler and scene.second_ruler is not None:
        x, y, a = scene.second_ruler
        rulers.append((np.array([x, y]), scene.ruler_length, a))
    for start, length, a in rulers if scene.ruler_at is not None or len(rulers) > 1 else []:
        ends = _ruler_outline(start, length, a)
        lo = np.minimum(lo, ends.min(axis=0) - 15.0)
        hi = np.maximum(hi, ends.max(axis=0) + 15.0)
    P, K, (W, H) = camera_projection(scene, lo, hi)       # 3-D mm -> image pixels
    Hc = P[:, [0, 1, 3]] / P[2, 3]                        # the face's plane (z = 0)

    # The plain look keeps OpenCV's filling (its renders are relied on bit for bit); the site look
    # takes each pixel's exact share of area, without the fill's steps and bias along edges.
    fill = coverage_exact if site else _coverage

    def cover(polys: list[np.ndarray], signs: list[int] | None = None, *, mapped: bool = False) -> np.ndarray:
        return fill(polys, signs, Hc, (H, W), mapped=mapped)

    # The painted shades are sRGB levels; with tone "srgb" every layer is composited in light
    # (a pixel half covered gets half of each layer's light), and the lens and the light act on
    # light; the camera encodes what it recorded. With "linear" all of it acts on the levels.
    srgb = scene.tone == "srgb"

    def shade(v):
        v = np.asarray(v, dtype=np.float32)
        return to_light(np.clip(v, 0, 255) / 255.0) * 255.0 if srgb else v

    inside = _inside_point(scene.section)
    if site:
        img, m, busy = site_layers(scene, P, Hc, (H, W), cover, srgb, inside)
    else:
        img, m, busy = _plain_layers(scene, rng, Hc, P, (H, W), cover, shade)
    paint = []
    if scene.target is not None:
        paint.append(([_rect(*paper)], (232.0, 236.0, 236.0) if site else 235.0))
        squares = [_rect(np.array([tx + (c - 1) * sq, ty + (r - 1) * sq]), np.array([tx + c * sq, ty + r * sq]))
                   for r in range(rows + 1) for c in range(cols + 1) if (r + c) % 2 == 0]
        paint.append((squares, 25.0))
    for start, length, a in rulers:
        paint.append(([_ruler_outline(start, length, a)], 225.0))
        paint.append((_ruler_ticks(start, length, a, scene.ruler_pitch, scene.ruler_marks), 30.0))
    for polys, value in paint:
        f = cover(polys)
        img = _over(img, f, shade(value))
        busy = np.maximum(busy, f)
    if scene.distortion:
        img = _distort(img.astype(np.float32), K, np.array(scene.distortion, dtype=np.float64))
    if scene.blur > 0:
        img = cv2.GaussianBlur(img.astype(np.float32), (0, 0), scene.blur)
    if site:
        img = camera_out(img, scene, Hc, srgb)
    else:
        gx = np.linspace(-0.5, 0.5, W, dtype=np.float32)[None, :]
        img = img * (1.0 - scene.light * (gx + 0.5))
        if srgb:
            img = to_levels(img / 255.0) * 255.0
        img = img + rng.normal(0.0, scene.noise, img.shape).astype(np.float32)
        img = np.stack([img * 0.92, img, img * 1.05], axis=2)
    bgr = np.clip(img, 0, 255).astype(np.uint8)
    if scene.jpeg is not None:
        ok, buf = cv2.imencode(".jpg", bgr, [cv2.IMWRITE_JPEG_QUALITY, int(scene.jpeg)])
        bgr = cv2.imdecode(buf, cv2.IMREAD_COLOR)
    # Truth in the target's frame: the target's first inner corner at the origin.
    truth = scene.section.translated(-tx, -ty) if scene.section is not None else None
    wood = scene.under_bark.translated(-tx, -ty) if scene.under_bark is not None else None
    T = np.array([[1.0, 0.0, tx], [0.0, 1.0, ty], [0.0, 0.0, 1.0]])
    out = Render(image=bgr, section=truth, homography=Hc @ T, scene=scene, camera_matrix=K, under_bark=wood,
                 coverage=m.astype(np.float32))
    member = None if inside is None else tuple(float(v) for v in out.to_image(inside - (tx, ty))[0])
    ground = _open_point(busy, out.image.shape[:2])
    if ground is not None and scene.distortion:
        ground = None                        # the busy layers are not distorted; no promise there
    object.__setattr__(out, "member_point", member)
    object.__setattr__(out, "ground_point", ground)
    return out


# ---------------------------------------------------------------------------------------------
def _plain_layers(scene: Scene, rng: np.random.Generator, Hc: np.ndarray, P: np.ndarray, size: tuple[int, int],
                  cover, shade) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The plain look in grey: the floor or card, the side faces, the face's rings or speckle.

    Returns the image in light (H, W), the face's coverage and the union of what is not ground.
    """
    H, W = size
    member_light = scene.member == "timber"
    img = shade((45.0 if member_light else 215.0) + _texture(rng, H, W, scale=6 * scene.px_per_mm, amplitude=10.0))
    m = np.zeros((H, W), np.float32)
    busy = m
    if scene.section is not None:
        sx0, sy0, sx1, sy1 = scene.section.bounds
        rings = list(scene.section.rings())
        if scene.member_length > 0:                       # the side faces behind the cut end
            side = cover(_side_faces(P, [r for r, _ in rings], scene.member_length), mapped=True)
            img = img * (1 - side) + shade(150.0 if member_light else 95.0) * side
            busy = side
        m = cover([r for r, _ in rings], [-1 if hole else 1 for _, hole in rings])
        if member_light:
            yy, xx = np.mgrid[0:H, 0:W].astype(np.float64)
            pts = np.column_stack([xx.ravel(), yy.ravel(), np.ones(xx.size)]) @ np.linalg.inv(Hc).T
            mx, my = (pts[:, 0] / pts[:, 2]).reshape(H, W), (pts[:, 1] / pts[:, 2]).reshape(H, W)
            pith = ((sx0 + sx1) / 2, sy0 - 0.3 * (sy1 - sy0))
            grain = 0.5 + 0.5 * np.sin(np.hypot(mx - pith[0], my - pith[1]) / 1.7)
            face = 185.0 + 18.0 * grain + _texture(rng, H, W, scale=1.5 * scene.px_per_mm, amplitude=6.0)
        else:
            face = 120.0 + _texture(rng, H, W, scale=0.8 * scene.px_per_mm, amplitude=8.0)
        img = img * (1 - m) + shade(face) * m
        busy = np.maximum(busy, m)
    return img, m, busy


def _is_site(scene: Scene) -> bool:
    """Whether any site field is away from its default (the site look), else the plain look."""
    return any(getattr(scene, name) != _SITE_DEFAULTS[name] for name in _SITE_DEFAULTS)


def _coverage(polys: list[np.ndarray], signs: list[int] | None, Hc: np.ndarray, size: tuple[int, int], *,
              mapped: bool = False) -> np.ndarray:
    """Share of each pixel inside the union of mapped polygons (holes with sign -1), float32 (H, W):
    OpenCV's filling, as the plain look has always drawn.

    Filled on a 4x finer grid, only over the polygons' bounding box, and averaged exactly (cv2's
    area resize of sub-pixels worth 240 / 16 = 15 each gives 15 n, no rounding). OpenCV fills
    every sub-pixel its boundary touches, whether it paints or erases (a hole); drawing each
    outline shrunk by 0.4 sub-pixel takes most of that back, but an edge that lies within 0.1
    sub-pixel of a row (or column) of sub-pixel centres still takes that row: up to 1/4 px more
    along it (measured: +0.47 % of A for a 150 x 90 x 10 angle at 4.2 px/mm, 0.37 px off the
    grid). `mapped` polygons are in image pixels already. The site look uses
    :func:`tracer.inputs.photo.renders.sitelook.coverage_exact`, which has no such bias.
    """
    import cv2
    import shapely

    H, W = size
    k = _SUPERSAMPLE
    fills = []
    for i, poly in enumerate(polys):
        if mapped:
            q = poly
        else:
            q = np.column_stack([poly, np.ones(len(poly))]) @ Hc.T
            q = q[:, :2] / q[:, 2:]
        q = (q + 0.5) * k - 0.5
        hole = bool(signs) and signs[i] < 0
        g = shapely.Polygon(q).buffer(-0.4, join_style="mitre")
        if g.is_empty:
            continue
        for part in getattr(g, "geoms", [g]):
            fills.append((np.round(np.asarray(part.exterior.coords) * 256).astype(np.int32), hole))
    out = np.zeros((H, W), np.float32)
    if not fills:
        return out
    every = np.concatenate([f for f, _ in fills])
    lo = np.floor(every.min(axis=0) / (256 * k)).astype(int) - 1
    hi = np.ceil(every.max(axis=0) / (256 * k)).astype(int) + 2
    c0, r0 = max(0, lo[0]), max(0, lo[1])
    c1, r1 = min(W, hi[0]), min(H, hi[1])
    if c1 <= c0 or r1 <= r0:
        return out
    acc = np.zeros(((r1 - r0) * k, (c1 - c0) * k), np.uint8)
    shift = np.array([c0 * k * 256, r0 * k * 256], np.int32)
    for pts, hole in fills:
        cv2.fillPoly(acc, [pts - shift], 0 if hole else 240, lineType=cv2.LINE_8, shift=8)
    out[r0:r1, c0:c1] = cv2.resize(acc, (c1 - c0, r1 - r0), interpolation=cv2.INTER_AREA).astype(np.float32) / 240
    return out


def _over(img: np.ndarray, f: np.ndarray, value) -> np.ndarray:
    """`value` laid over `img` where `f` (the share of each pixel) says; grey or colour."""
    if img.ndim == 3:
        f = f[..., None]
    return img * (1 - f) + value * f


def _inside_point(section: Section | None) -> np.ndarray | None:
    """The point deepest inside the section's largest part, off its holes [mm] (1, 2)."""
    if section is None:
        return None
    from shapely.ops import polylabel

    shape = section.to_shapely()
    part = max(getattr(shape, "geoms", [shape]), key=lambda g: g.area)
    p = polylabel(part, tolerance=0.05 * math.sqrt(part.area) / 10)
    return np.array([[p.x, p.y]])


def _open_point(busy: np.ndarray, shape: tuple[int, int]) -> tuple[float, float] | None:
    """The pixel farthest from anything not open ground and from the image border, if 12 px clear."""
    import cv2

    H, W = shape
    f = 4
    small = cv2.resize(busy.astype(np.float32), (max(1, W // f), max(1, H // f)), interpolation=cv2.INTER_AREA)
    free = np.pad((small < 0.02).astype(np.uint8), 1)
    dist = cv2.distanceTransform(free, cv2.DIST_L2, 5)[1:-1, 1:-1]
    i, j = np.unravel_index(int(np.argmax(dist)), dist.shape)
    if dist[i, j] * f < 12:
        return None
    return (float((j + 0.5) * f - 0.5), float((i + 0.5) * f - 0.5))


def _side_faces(P: np.ndarray, rings: list[np.ndarray], length: float) -> list[np.ndarray]:
    """Image quadrilaterals of the member's side faces from the cut end back to `length`."""
    out = []
    for ring in rings:
        a = np.column_stack([ring, np.zeros(len(ring)), np.ones(len(ring))])
        b = a.copy()
        b[:, 2] = length
        qa, qb = a @ P.T, b @ P.T
        qa, qb = qa[:, :2] / qa[:, 2:], qb[:, :2] / qb[:, 2:]
        na, nb = np.roll(qa, -1, axis=0), np.roll(qb, -1, axis=0)
        quads = np.stack([qa, na, nb, qb], axis=1)               # (N, 4, 2)
        area = 0.5 * np.abs(np.sum(quads[..., 0] * np.roll(quads[..., 1], -1, 1)
                                   - np.roll(quads[..., 0], -1, 1) * quads[..., 1], axis=1))
        out += [q for q, s in zip(quads, area) if s > 1e-6]
    return out


def _distort(img: np.ndarray, K: np.ndarray, dist: np.ndarray) -> np.ndarray:
    """The image a lens with `dist` would form: each output pixel looks up its ideal position."""
    import cv2

    from ..lens import undistort_points

    H, W = img.shape[:2]
    yy, xx = np.mgrid[0:H, 0:W].astype(np.float64)
    m = undistort_points(np.column_stack([xx.ravel(), yy.ravel()]), K, dist).reshape(H, W, 2)
    return cv2.remap(img, m[..., 0].astype(np.float32), m[..., 1].astype(np.float32), cv2.INTER_CUBIC,
                     borderMode=cv2.BORDER_REFLECT)


def _texture(rng: np.random.Generator, h: int, w: int, *, scale: float, amplitude: float) -> np.ndarray:
    import cv2

    small = rng.normal(0.0, 1.0, (max(2, int(h / scale) + 2), max(2, int(w / scale) + 2))).astype(np.float32)
    big = cv2.resize(small, (w, h), interpolation=cv2.INTER_CUBIC)
    return amplitude * big / (big.std() + 1e-9)


def _ruler_outline(start: np.ndarray, length: float, angle: float) -> np.ndarray:
    """The ruler's strip, 25 mm wide, 8 mm longer than its graduation at each end [mm]."""
    return _turned(_rect(np.array([-8.0, 0.0]), np.array([length + 8.0, 25.0])), start, angle)


def _ruler_ticks(start: np.ndarray, length: float, angle: float, pitch: float,
                 marks: tuple[int, ...]) -> list[np.ndarray]:
    """Graduation marks 0.2 mm wide along the strip's top edge; every marks[i]-th one longer."""
    ticks = []
    for t in range(int(length / pitch + 1e-9) + 1):
        tall = 3.0                                       # the finest marks; longer ones reach 8 mm
        for level, n in enumerate(marks):
            if t % n == 0:
                tall = 3.0 + 5.0 * (len(marks) - level) / len(marks)
                break
        a = np.array([t * pitch - 0.1, 25.0 - tall])
        ticks.append(_turned(_rect(a, a + (0.2, tall)), start, angle))
    return ticks


def _turned(poly: np.ndarray, start: np.ndarray, angle: float) -> np.ndarray:
    c, s = math.cos(math.radians(angle)), math.sin(math.radians(angle))
    return poly @ np.array([[c, s], [-s, c]]) + start


def _rect(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.array([[a[0], a[1]], [b[0], a[1]], [b[0], b[1]], [a[0], b[1]]], dtype=float)
