"""The site look of :func:`tracer.inputs.photo.renders.synth.render`: colour layers composited in light.

The ground (a raster of the face's plane, a little out of focus, seen through the camera's
homography), the member's cast shadow and glints on it, the side faces the camera sees (shaded by
the light's direction, streaked along the member), the face (end grain with checks and pith, or
steel), the bark, marks and glints on the face; then the light's fall-off, the sRGB encoding and
a colour camera's noise. Textures come from :mod:`tracer.inputs.photo.renders.grounds` and
:mod:`tracer.inputs.photo.renders.scenery`; what is filled exactly (coverage of the face, the side
faces, the bark's wood) comes from the renderer's `cover`, which in the site look is
:func:`coverage_exact`, each pixel's exact share of area. Also the checks of the site fields.
Private to the renderer: no public names.
"""

from __future__ import annotations

import math
import zlib

import numpy as np

from ....section.geometry import Section
from ..tone import to_levels, to_light
from .scene import Scene

__all__: list[str] = []

# Share of the light a cast shadow takes from the ground, per channel (B, G, R): the blue sky
# still lights a shadow, so shadows come out a little blue (common practice in photography).
_SHADOW_DEPTH = 0.6
_SHADOW_TINT = np.array([0.85, 0.95, 1.0], dtype=np.float32)
# Share of the light taken from the ground seen through a hollow member (its inside is in shade).
_HOLLOW_SHADE = 0.6
# sRGB levels <-> light x 255 as tables (the site look's textures are many pixels deep).
_LIGHT_TABLE = (to_light(np.arange(4097, dtype=np.float32) / 4096) * 255.0).astype(np.float32)
_LEVELS_TABLE = (to_levels(np.arange(65536, dtype=np.float32) / 65535) * 255.0).astype(np.float32)


def check_site(scene: Scene) -> None:
    """Refuse site fields out of range or not fitting the member, with what to give instead."""
    from .grounds import GROUNDS
    from .scenery import MARKS, STEEL_FINISHES, WOOD_FINISHES

    if scene.member not in ("timber", "steel"):
        raise ValueError(f"member = {scene.member!r}; use 'timber' or 'steel'")
    timber = scene.member == "timber"
    if scene.ground is not None and scene.ground not in GROUNDS:
        raise ValueError(f"ground = {scene.ground!r} is not a ground; use one of {', '.join(GROUNDS)}")
    finishes = WOOD_FINISHES if timber else STEEL_FINISHES
    if scene.finish is not None and scene.finish not in finishes:
        raise ValueError(f"finish = {scene.finish!r} does not suit a {scene.member} member; "
                         f"use one of {', '.join(finishes)}")
    bad = [m for m in scene.marks if m not in MARKS]
    if bad:
        raise ValueError(f"mark {bad[0]!r} is not a mark; use one of {', '.join(MARKS)}")
    for name in ("checks", "glints"):
        v = getattr(scene, name)
        if not isinstance(v, (int, np.integer)) or v < 0:
            raise ValueError(f"{name} = {v!r}; give a count of 0 or more")
    if not (math.isfinite(scene.shadow) and scene.shadow >= 0):
        raise ValueError(f"shadow = {scene.shadow!r}; give a reach of 0 mm or more")
    if not timber:
        for name in ("under_bark", "pith"):
            if getattr(scene, name) is not None:
                raise ValueError(f"{name} is for timber; this member is steel")
        if scene.checks:
            raise ValueError("checks are for timber; this member is steel")
    if scene.under_bark is not None:
        if scene.section is None:
            raise ValueError("under_bark needs the member's section as well")
        if not scene.section.to_shapely().buffer(1e-6).covers(scene.under_bark.to_shapely()):
            raise ValueError("under_bark must lie inside the section (the bark is the part outside it)")


def coverage_exact(polys: list[np.ndarray], signs: list[int] | None, Hc: np.ndarray, size: tuple[int, int], *,
                    mapped: bool = False) -> np.ndarray:
    """Share of each pixel's area inside the union of mapped polygons (holes with sign -1),
    float32 (H, W), exact.

    Each edge is cut where it crosses a pixel's side; a piece inside a pixel adds to that pixel
    the signed area between it and the pixel's right side, and its whole height to the pixel on
    the right; a running sum along each row then gives the area of every pixel inside (the
    accumulation of signed areas that font rasterisers use). Exteriors run one way round and
    holes the other, so holes take their area back; where polygons overlap (side faces) the sum
    is capped at 1. Every array operation runs over all pieces of all edges at once; unlike a
    fill on a finer grid there is no step of 1/4 px in where an edge may fall, so the share
    summed over the image is the polygon's area to rounding.
    """
    H, W = size
    starts, ends = [], []
    for i, poly in enumerate(polys):
        q = np.asarray(poly, dtype=np.float64)
        if not mapped:
            q = np.column_stack([q, np.ones(len(q))]) @ Hc.T
            q = q[:, :2] / q[:, 2:]
        q = q + 0.5                                              # pixel j covers [j, j + 1)
        nxt = np.roll(q, -1, axis=0)
        twice = float(np.sum(q[:, 0] * nxt[:, 1] - nxt[:, 0] * q[:, 1]))
        if twice == 0.0:
            continue
        if (twice > 0) != bool(signs and signs[i] < 0):          # exteriors one way, holes the other
            q = q[::-1]
            nxt = np.roll(q, -1, axis=0)
        starts.append(q)
        ends.append(nxt)
    out = np.zeros((H, W), np.float32)
    if not starts:
        return out
    a, b = np.concatenate(starts), np.concatenate(ends)
    # The parameters t in [0, 1] along each edge where it crosses x or y = an integer.
    cuts = [np.arange(len(a)), np.arange(len(a))]
    ts = [np.zeros(len(a)), np.ones(len(a))]
    for axis in (0, 1):
        lo = np.ceil(np.minimum(a[:, axis], b[:, axis]))
        n = np.maximum(np.floor(np.maximum(a[:, axis], b[:, axis])) - lo + 1, 0).astype(np.int64)
        n[a[:, axis] == b[:, axis]] = 0
        edge = np.repeat(np.arange(len(a)), n)
        at = np.repeat(lo, n) + (np.arange(int(n.sum())) - np.repeat(np.cumsum(n) - n, n))
        cuts.append(edge)
        ts.append((at - a[edge, axis]) / (b[edge, axis] - a[edge, axis]))
    edge, t = np.concatenate(cuts), np.clip(np.concatenate(ts), 0.0, 1.0)
    order = np.lexsort((t, edge))
    edge, t = edge[order], t[order]
    same = edge[1:] == edge[:-1]
    e, t0, t1 = edge[:-1][same], t[:-1][same], t[1:][same]
    d = b[e] - a[e]
    p0 = a[e] + t0[:, None] * d
    p1 = a[e] + t1[:, None] * d
    dy = p1[:, 1] - p0[:, 1]
    mid = 0.5 * (p0 + p1)
    col, row = np.floor(mid[:, 0]).astype(np.int64), np.floor(mid[:, 1]).astype(np.int64)
    keep = (dy != 0) & (row >= 0) & (row < H) & (col < W)
    col, row, dy, xm = col[keep], row[keep], dy[keep], mid[keep, 0]
    if len(row) == 0:
        return out
    r0, r1 = int(row.min()), int(row.max()) + 1
    c0 = max(0, int(col.min()))
    c1 = min(W, int(col.max()) + 1)
    width = c1 - c0 + 1
    left = col < c0                                              # wholly left of the box: all to the right
    here = np.where(left, 0.0, dy * (col + 1 - xm))
    right = np.where(left, dy, dy * (xm - col))
    cc = np.clip(col - c0, 0, None)
    flat = (row - r0) * width
    acc = np.bincount(flat + cc, here, minlength=(r1 - r0) * width) \
        + np.bincount(flat + np.where(left, 0, np.minimum(cc + 1, width - 1)), right, minlength=(r1 - r0) * width)
    share = np.cumsum(acc.reshape(r1 - r0, width), axis=1)[:, : c1 - c0]
    share[np.abs(share) < 1e-9] = 0.0                                # the running sum's rounding
    out[r0:r1, c0:c1] = np.clip(share, 0.0, 1.0)
    return out


def site_layers(scene: Scene, P: np.ndarray, Hc: np.ndarray, size: tuple[int, int], cover, srgb: bool,
                inside: np.ndarray | None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The site look in colour: ground, its shadow and glints, side faces, face, bark.

    `cover(polys, signs, mapped=False)` is the renderer's exact coverage of outlines; `inside`
    a point [mm] deep inside the section (where marks gather). Returns the image in light
    (H, W, 3), the face's coverage and the union of what is not open ground (member, side
    faces, shadow).
    """
    from . import grounds, scenery

    H, W = size
    timber = scene.member == "timber"
    light = _light_of if srgb else (lambda v: v)
    sec = scene.section
    ppm = _image_scale(Hc, size)
    gplane = scenery.Plane.over(*_footprint(Hc, size), 0.75 * ppm)   # the ground lies a little out of focus
    ground = scene.ground or ("dark floor" if timber else "light card")
    glight = light(grounds.ground_levels(ground, gplane, _stream(scene.seed, "ground"), light_from=scene.light_from))
    busy = np.zeros((H, W), np.float32)
    ground_map = Hc @ gplane.matrix()
    if sec is not None and scene.shadow > 0:
        share = scenery.shadow_share(gplane, [p.exterior for p in sec.parts], towards=scene.light_from + 180.0,
                                     reach=scene.shadow)
        glight *= 1.0 - _SHADOW_DEPTH * share[..., None] * _SHADOW_TINT
        busy = np.maximum(busy, _warp(share, ground_map, size))
    on_face = 0 if (timber or sec is None) else (2 * scene.glints + 2) // 3
    if scene.glints > on_face:
        rng = _stream(scene.seed, "ground glints")
        px = rng.uniform((0.0, 0.0), (gplane.width, gplane.height), (4 * scene.glints, 2))
        spots = (np.column_stack([px, np.ones(len(px))]) @ gplane.matrix().T)[:, :2]
        if sec is not None:
            import shapely

            spots = spots[~shapely.contains_xy(sec.to_shapely().buffer(5.0), spots[:, 0], spots[:, 1])]
        glight += 255.0 * scenery.glint_light(gplane, rng, spots[: scene.glints - on_face])[..., None]
    img = _warp(glight, ground_map, size)
    m = np.zeros((H, W), np.float32)
    if sec is None:
        return img, m, busy
    rings = list(sec.rings())
    finish = scene.finish or ("end grain" if timber else "grey")
    if scene.member_length > 0:
        quads, lit = _side_quads(P, [r for r, _ in rings], scene.member_length, scene.light_from)
        if len(quads):
            side = cover(list(quads), mapped=True)
            material = ("bark" if scene.under_bark is not None else "wood") if timber else finish
            levels = scenery.side_levels(material, size, _stream(scene.seed, "side"),
                                         along=_length_direction(P, sec, scene.member_length), px_per_mm=ppm)
            f = side[..., None]
            img = img * (1 - f) + light(levels) * _side_shading(quads, lit, size)[..., None] * f
            busy = np.maximum(busy, side)
    holes = [r for r, hole in rings if hole]
    if holes:                                                 # a hollow member's inside is in its own shade
        img *= (1.0 - _HOLLOW_SHADE * cover(holes))[..., None]
    m = cover([r for r, _ in rings], [-1 if hole else 1 for _, hole in rings])
    busy = np.maximum(busy, m)
    box, face, bark = _face_light(scene, Hc, size, light, finish, on_face, inside)
    f = m[box][..., None]
    if bark is None:
        img[box] = img[box] * (1 - f) + face * f
    else:
        wood = cover([r for r, _ in scene.under_bark.rings()],
                     [-1 if hole else 1 for _, hole in scene.under_bark.rings()])[box][..., None]
        img[box] = img[box] * (1 - f) + bark * (f - wood) + face * wood
    return img, m, busy


def _face_light(scene: Scene, Hc: np.ndarray, size: tuple[int, int], light, finish: str, glints: int,
                inside: np.ndarray) -> tuple[tuple[slice, slice], np.ndarray, np.ndarray | None]:
    """The face's (and bark's) light over the image box round the section: (box, face, bark)."""
    import shapely

    from . import scenery

    H, W = size
    sec = scene.section
    x0, y0, x1, y1 = sec.bounds
    corners = np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]])
    q = np.column_stack([corners, np.ones(4)]) @ Hc.T
    q = q[:, :2] / q[:, 2:]
    c0, r0 = (max(0, int(v) - 3) for v in q.min(axis=0))
    c1, r1 = min(W, int(q[:, 0].max()) + 4), min(H, int(q[:, 1].max()) + 4)
    box = (slice(r0, r1), slice(c0, c1))
    scale = 1.1 * _image_scale(Hc, size, at=((x0 + x1) / 2, (y0 + y1) / 2))
    plane = scenery.Plane.over(np.array([x0 - 2.0, y0 - 2.0]), np.array([x1 + 2.0, y1 + 2.0]), scale)
    to_box = np.array([[1.0, 0.0, -c0], [0.0, 1.0, -r0], [0.0, 0.0, 1.0]]) @ Hc @ plane.matrix()
    rng = _stream(scene.seed, "face")
    shape = sec.to_shapely()
    if scene.member == "timber":
        wood = scene.under_bark if scene.under_bark is not None else sec
        pith = scene.pith if scene.pith is not None else _default_pith(wood, sec, scene.under_bark is not None, rng)
        outline = np.concatenate([p.exterior for p in wood.parts])
        reach = float(np.max(np.hypot(*(outline - pith).T)))
        levels = scenery.wood_levels(plane, rng, finish=finish, pith=pith, reach=reach,
                                     checks=_check_cracks(rng, outline, pith, scene.checks))
    else:
        levels = scenery.steel_levels(plane, rng, finish=finish)
    if scene.marks:
        levels = scenery.paint_marks(levels, plane, _stream(scene.seed, "marks"), kinds=tuple(scene.marks),
                                     centre=tuple(inside[0]), size=max(x1 - x0, y1 - y0))
    face = light(levels)
    if glints:
        g = _stream(scene.seed, "face glints")
        pts = g.uniform((x0, y0), (x1, y1), (20 * glints, 2))
        pts = pts[shapely.contains_xy(shape.buffer(-1.0), pts[:, 0], pts[:, 1])][:glints]
        face += 255.0 * scenery.glint_light(plane, g, pts)[..., None]
    out = _warp(face, to_box, (r1 - r0, c1 - c0))
    if scene.under_bark is None:
        return box, out, None
    wood = scene.under_bark.to_shapely()
    thick = (shape.area - wood.area) / max(wood.length, 1e-9)          # mean thickness [mm]
    c = wood.centroid
    bark = scenery.bark_levels(plane, _stream(scene.seed, "bark"), centre=(c.x, c.y),
                               wood=[p.exterior for p in scene.under_bark.parts], thickness=thick)
    return box, out, _warp(light(bark), to_box, (r1 - r0, c1 - c0))


def _default_pith(wood: Section, whole: Section, barked: bool, rng: np.random.Generator) -> tuple[float, float]:
    """Where the pith lies when not given.

    With bark: the centre of the circle that best fits the wood's outline under the bark (the
    stem's round: all of a log's outline, a waney board's wane), by the algebraic least-squares
    fit of Kasa [1], a little off as piths are. Without: below the member, as in the plain look.

    .. [1] I. Kasa, "A circle fitting procedure and its error analysis," *IEEE Trans. Instrum.
           Meas.*, vol. IM-25, no. 1, pp. 8-14, 1976, doi: 10.1109/TIM.1976.6312298.
    """
    import shapely

    x0, y0, x1, y1 = wood.bounds
    if barked:
        pts = np.concatenate([p.exterior for p in wood.parts])
        under = shapely.distance(whole.to_shapely().exterior, shapely.points(pts)) > 1e-6
        if under.sum() >= 8:
            x, y = pts[under, 0], pts[under, 1]
            A = np.column_stack([x, y, np.ones(len(x))])
            (cx2, cy2, _), *_ = np.linalg.lstsq(A, x * x + y * y, rcond=None)    # x^2 + y^2 = 2 a x + 2 b y + c
            r = math.sqrt(max((x1 - x0) * (y1 - y0), 1.0))
            return (cx2 / 2 + rng.normal(0.0, 0.03) * r, cy2 / 2 + rng.normal(0.0, 0.03) * r)
    return ((x0 + x1) / 2, y0 - 0.3 * (y1 - y0))


def _check_cracks(rng: np.random.Generator, outline: np.ndarray, pith: tuple[float, float], count: int) -> np.ndarray:
    """Radial checks towards points spread evenly along the outline: angle, inner and outer
    radius [mm] and width at the surface [mm]; each runs in from the surface a fifth to a half of
    the wood's size, or to near the pith."""
    if count == 0:
        return np.zeros((0, 4))
    ring = np.vstack([outline, outline[:1]])
    along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(ring, axis=0).T))])
    at = rng.uniform(0.0, along[-1], count)
    ends = np.column_stack([np.interp(at, along, ring[:, 0]), np.interp(at, along, ring[:, 1])]) - pith
    r1 = np.hypot(ends[:, 0], ends[:, 1]) + 2.0                       # open at the surface
    size = math.sqrt(max(float(np.ptp(outline[:, 0]) * np.ptp(outline[:, 1])), 1.0))
    r0 = np.maximum(r1 - rng.uniform(0.2, 0.5, count) * size, 0.08 * r1)
    wide = rng.uniform(0.8, 2.4, count) * max(1.0, size / 150.0)       # larger members open wider
    return np.column_stack([np.arctan2(ends[:, 1], ends[:, 0]), r0, r1, wide])


def _side_quads(P: np.ndarray, rings: list[np.ndarray], length: float, light_from: float
                ) -> tuple[np.ndarray, np.ndarray]:
    """The side faces the camera sees, as image quadrilaterals (N, 4, 2) sorted far to near, and
    their lighting (N,).

    A side face is seen when the camera is on its outer side (rings keep the material on their
    left, so the outward normal is the edge turned clockwise). Lighting: a share of ambient light
    plus Lambert's cosine of the angle between the outward normal and the light's direction.
    """
    centre = -np.linalg.solve(P[:, :3], P[:, 3])               # the camera centre [mm]
    quads, lit, far = [], [], []
    for ring in rings:
        a, b = ring, np.roll(ring, -1, axis=0)
        e = b - a
        n = np.column_stack([e[:, 1], -e[:, 0]])
        seen = (np.sum((centre[:2] - a) * n, axis=1) > 0) & (np.hypot(n[:, 0], n[:, 1]) > 0)
        corners = np.stack([a, b, b, a], axis=1)[seen]                              # (N, 4, 2)
        depth = np.broadcast_to(np.array([0.0, 0.0, length, length])[None, :, None], corners[..., :1].shape)
        q = np.concatenate([corners, depth, np.ones_like(depth)], axis=2) @ P.T
        quads.append(q[..., :2] / q[..., 2:])
        facing = np.arctan2(n[seen, 1], n[seen, 0]) - math.radians(light_from)
        lit.append(0.3 + 0.6 * np.clip(np.cos(facing), 0.0, None))
        far.append(np.hypot(*(0.5 * (corners[:, 0] + corners[:, 1]) - centre[:2]).T))
    if not quads:
        return np.zeros((0, 4, 2)), np.zeros(0)
    order = np.argsort(-np.concatenate(far), kind="stable")
    return np.concatenate(quads)[order], np.concatenate(lit)[order]


def _side_shading(quads: np.ndarray, lit: np.ndarray, size: tuple[int, int]) -> np.ndarray:
    """Each side face's lighting painted over its pixels, far faces first (the painter's order).

    One fill per face (a fill of many polygons at once is even-odd, and the faces of a member
    with re-entrant corners overlap in the image); each is a convex quadrilateral of 4 points.
    """
    import cv2

    out = np.zeros(size, np.float32)
    pts = np.round(quads * 16).astype(np.int32)
    for quad, v in zip(pts, lit.astype(float)):
        cv2.fillConvexPoly(out, quad, v, lineType=cv2.LINE_8, shift=4)
    grown = cv2.dilate(out, np.ones((5, 5), np.uint8))                 # the rim no pixel centre took
    return np.where(out > 0, out, grown)


def _length_direction(P: np.ndarray, sec: Section, length: float) -> float:
    """The member's length direction in the image [deg, counter-clockwise on screen]."""
    c = sec.to_shapely().centroid
    q = np.array([[c.x, c.y, 0.0, 1.0], [c.x, c.y, length, 1.0]]) @ P.T
    d = q[1, :2] / q[1, 2] - q[0, :2] / q[0, 2]
    return math.degrees(math.atan2(-d[1], d[0]))


def camera_out(img: np.ndarray, scene: Scene, Hc: np.ndarray, srgb: bool) -> np.ndarray:
    """Light falling off away from where it comes from, the sRGB encoding, and colour noise."""
    H, W = img.shape[:2]
    if scene.light:
        inv = np.linalg.inv(Hc)
        c = inv @ np.array([(W - 1) / 2, (H - 1) / 2, 1.0])
        c = c[:2] / c[2]
        a = math.radians(scene.light_from)
        q = np.column_stack([[c, c + (math.cos(a), math.sin(a))], np.ones(2)]) @ Hc.T
        d = q[1, :2] / q[1, 2] - q[0, :2] / q[0, 2]
        d /= np.hypot(*d)
        away = -(np.arange(W, dtype=np.float32)[None, :] * d[0] + np.arange(H, dtype=np.float32)[:, None] * d[1])
        away = (away - away.min()) / max(float(np.ptp(away)), 1e-9)
        img = img * (1.0 - scene.light * away)[..., None]
    if srgb:
        img = _levels_of(img)
    rng = _stream(scene.seed, "noise")
    # Noise of a colour camera: mostly shared by the channels (after demosaicking), partly not.
    grain = 0.8 * rng.standard_normal((H, W, 1), dtype=np.float32) + 0.6 * rng.standard_normal((H, W, 3), dtype=np.float32)
    return img + np.float32(scene.noise) * grain


def _warp(src: np.ndarray, M: np.ndarray, size: tuple[int, int]) -> np.ndarray:
    """`src` seen through the 3 x 3 map `M` (its pixels to the output's) on an (H, W) output."""
    import cv2

    H, W = size
    return cv2.warpPerspective(src, M, (W, H), flags=cv2.INTER_LINEAR, borderMode=cv2.BORDER_REFLECT)


def _image_scale(Hc: np.ndarray, size: tuple[int, int], at: tuple[float, float] | None = None) -> float:
    """Image pixels per mm of the plane at `at` [mm] (default: where the image centre looks)."""
    if at is None:
        H, W = size
        c = np.linalg.inv(Hc) @ np.array([(W - 1) / 2, (H - 1) / 2, 1.0])
        at = (c[0] / c[2], c[1] / c[2])
    p = np.array([[at[0], at[1], 1.0], [at[0] + 1.0, at[1], 1.0], [at[0], at[1] + 1.0, 1.0]]) @ Hc.T
    p = p[:, :2] / p[:, 2:]
    (ax, ay), (bx, by) = p[1] - p[0], p[2] - p[0]
    return math.sqrt(abs(ax * by - ay * bx))


def _footprint(Hc: np.ndarray, size: tuple[int, int]) -> tuple[np.ndarray, np.ndarray]:
    """The box [mm] of the plane the image sees, with 5 mm to spare."""
    H, W = size
    corners = np.array([[-1.0, -1.0, 1.0], [W, -1.0, 1.0], [W, H, 1.0], [-1.0, H, 1.0]]) @ np.linalg.inv(Hc).T
    xy = corners[:, :2] / corners[:, 2:]
    return xy.min(axis=0) - 5.0, xy.max(axis=0) + 5.0


def _stream(seed: int, name: str) -> np.random.Generator:
    """A random stream of its own for each layer, so that one layer's draws never shift another's."""
    return np.random.default_rng([int(seed) & 0xFFFFFFFF, zlib.crc32(name.encode())])


def _light_of(levels: np.ndarray) -> np.ndarray:
    """sRGB levels 0..255 to light x 255 by a table of 4096 steps (IEC 61966-2-1 via tone.to_light)."""
    i = (np.clip(levels, 0.0, 255.0) * np.float32(4096 / 255) + np.float32(0.5)).astype(np.int32)
    return np.take(_LIGHT_TABLE, i)


def _levels_of(light: np.ndarray) -> np.ndarray:
    """Light x 255 to sRGB levels 0..255 by a table of 65536 steps (tone.to_levels); over white clips."""
    i = (np.clip(light, 0.0, 255.0) * np.float32(65535 / 255) + np.float32(0.5)).astype(np.int32)
    return np.take(_LEVELS_TABLE, i)
