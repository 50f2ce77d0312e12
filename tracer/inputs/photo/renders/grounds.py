"""The grounds of site photos, painted in the plane of the cut face (:data:`GROUNDS`).

Concrete, gravel, sand, grass, wood chips, decking, a dark floor and a light card. Like the other
textures (:mod:`tracer.inputs.photo.renders.scenery`), each fills a raster over a patch of the
face's plane (a :class:`~tracer.inputs.photo.renders.scenery.Plane`) with sRGB levels 0..255 as
float32 in BGR order, and all randomness comes from the generator passed in. Stones, chips and the
aggregate of concrete are cells round jittered seeds, lit from the light's side. The looks are our
own invention, tuned by eye to what site photos commonly show.
"""

from __future__ import annotations

import math

import numpy as np

from .scenery import Plane, noise, rgb

__all__ = ["GROUNDS", "ground_levels"]

#: Grounds a member may lie on.
GROUNDS = ("concrete", "gravel", "sand", "grass", "wood chips", "decking", "dark floor", "light card")


def ground_levels(kind: str, plane: Plane, rng: np.random.Generator, *, light_from: float = 135.0) -> np.ndarray:
    """The ground's sRGB levels over `plane`, BGR float32 (H, W, 3).

    Parameters
    ----------
    kind : str
        One of :data:`GROUNDS`.
    plane : Plane
    rng : numpy.random.Generator
    light_from : float
        Direction the light comes from [deg from +x, counter-clockwise]: stones and chips are
        lit on that side.
    """
    painters = {"concrete": _concrete, "gravel": _gravel, "sand": _sand, "grass": _grass,
                "wood chips": _wood_chips, "decking": _decking, "dark floor": _dark_floor,
                "light card": _light_card}
    if kind not in painters:
        raise ValueError(f"ground = {kind!r} is not a ground; use one of {', '.join(GROUNDS)}")
    out = painters[kind](plane, rng, light_from)
    return np.clip(out, 0.0, 255.0).astype(np.float32)


# ---------------------------------------------------------------------------------------------
def _cells(rng: np.random.Generator, h: int, w: int, size: float, *, stretch: tuple[float, float] | None = None,
           turns: tuple[float, ...] = ()) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
    """Cells round seeds jittered over a grid of `size` px (Worley's cellular texture).

    Returns the distance [px] to the nearest and the second-nearest seed, the nearest seed's
    index, and the number of seeds. `stretch` = (most, least) draws a turn and an elongation
    between those for each seed (chips, flakes); distances are then measured in each seed's
    stretched frame; with `turns` [deg, counter-clockwise on screen] seed i lies along
    ``turns[i % len(turns)]`` (give one noise field per turn to streak each cell along its length),
    else along a random direction. Each pixel looks at the seeds of its own and the eight neighbouring grid
    cells, which the jittered grid makes enough for round cells.
    """
    n = max(int(round(size)), 2)
    gh, gw = -(-h // n), -(-w // n)
    sy = ((np.arange(-1, gh + 1)[:, None] + rng.uniform(0.05, 0.95, (gh + 2, gw + 2))) * n).astype(np.float32)
    sx = ((np.arange(-1, gw + 1)[None, :] + rng.uniform(0.05, 0.95, (gh + 2, gw + 2))) * n).astype(np.float32)
    ys = (np.arange(gh)[:, None] * n + np.arange(n)[None, :]).astype(np.float32)          # (gh, n)
    xs = (np.arange(gw)[:, None] * n + np.arange(n)[None, :]).astype(np.float32)          # (gw, n)
    if stretch is not None:
        if turns:
            k = np.arange((gh + 2) * (gw + 2)).reshape(gh + 2, gw + 2) % len(turns)
            turn = -np.radians(np.asarray(turns, dtype=float))[k] + rng.normal(0.0, 0.12, k.shape)
        else:
            turn = rng.uniform(0.0, math.pi, (gh + 2, gw + 2))
        long = rng.uniform(stretch[1], stretch[0], (gh + 2, gw + 2))
        cu, su = (np.cos(turn) / long).astype(np.float32), (np.sin(turn) / long).astype(np.float32)
        cv, sv = (np.cos(turn) * long).astype(np.float32), (np.sin(turn) * long).astype(np.float32)
    f1 = np.full((gh, n, gw, n), np.inf, np.float32)
    f2 = np.full((gh, n, gw, n), np.inf, np.float32)
    idx = np.zeros((gh, n, gw, n), np.int32)
    rows, cols = np.arange(gh), np.arange(gw)
    for di in (-1, 0, 1):
        for dj in (-1, 0, 1):
            win = (slice(1 + di, 1 + di + gh), slice(1 + dj, 1 + dj + gw))
            dy = ys[:, :, None] - sy[win][:, None, :]                                  # (gh, n, gw)
            dx = xs[None, :, :] - sx[win][:, :, None]                                  # (gh, gw, n)
            if stretch is None:
                d2 = dy[:, :, :, None] ** 2 + dx[:, None, :, :] ** 2
            else:
                c1, s1, c2, s2 = (a[win][:, None, :, None] for a in (cu, su, cv, sv))
                u = dx[:, None, :, :] * c1 + dy[:, :, :, None] * s1
                v = dy[:, :, :, None] * c2 - dx[:, None, :, :] * s2
                d2 = u * u + v * v
            which = ((rows + 1 + di)[:, None] * (gw + 2) + (cols + 1 + dj)[None, :]).astype(np.int32)
            closer = d2 < f1
            np.copyto(f2, np.where(closer, f1, np.minimum(f2, d2)))
            np.copyto(f1, np.where(closer, d2, f1))
            np.copyto(idx, np.where(closer, which[:, None, :, None], idx))
    shape = (gh * n, gw * n)
    crop = (slice(0, h), slice(0, w))
    return (np.sqrt(f1.reshape(shape))[crop], np.sqrt(f2.reshape(shape))[crop], idx.reshape(shape)[crop],
            (gh + 2) * (gw + 2))


def _coarse_cells(rng: np.random.Generator, h: int, w: int, size: float, *, stretch: tuple[float, float] | None = None,
                  turns: tuple[float, ...] = (), values=None) -> tuple[np.ndarray, np.ndarray, np.ndarray, list]:
    """:func:`_cells` worked out on a raster of about 12 px a cell and enlarged: cells of many
    pixels then cost what cells of a few do.

    Distances are enlarged linearly, the index by nearest pixel. `values(count)` may return
    per-cell arrays (count,) or (count, C); they come back looked up on the small raster and
    enlarged linearly, so a cell's value blends into its neighbour's over a few pixels instead of
    stepping in blocks.
    """
    import cv2

    q = max(1.0, size / 12.0)
    hs, ws = max(2, int(math.ceil(h / q))), max(2, int(math.ceil(w / q)))
    f1, f2, idx, count = _cells(rng, hs, ws, size / q, stretch=stretch, turns=turns)
    per_cell = values(count) if values is not None else []
    grow = dict(dsize=(w, h), interpolation=cv2.INTER_LINEAR)
    fields = [cv2.resize(np.ascontiguousarray(v[idx], dtype=np.float32), **grow) for v in per_cell]
    return (cv2.resize(f1, **grow) * np.float32(q), cv2.resize(f2, **grow) * np.float32(q),
            cv2.resize(idx, (w, h), interpolation=cv2.INTER_NEAREST), fields)


def _towards(light_from: float) -> np.ndarray:
    """Unit vector towards the light in raster axes (column right, row down)."""
    a = math.radians(light_from)
    return np.array([math.cos(a), -math.sin(a)], dtype=np.float32)


def _lit(height: np.ndarray, light_from: float, strength: float) -> np.ndarray:
    """Lambert-like shading of a height field: slopes facing the light brighter (1 = flat)."""
    import cv2

    lx, ly = _towards(light_from)
    gx = cv2.Sobel(height, cv2.CV_32F, 1, 0, ksize=3) / 8.0
    gy = cv2.Sobel(height, cv2.CV_32F, 0, 1, ksize=3) / 8.0
    return 1.0 - strength * (gx * lx + gy * ly)


def _concrete(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    grey = rng.uniform(138.0, 168.0)
    v = 11.0 * noise(rng, h, w, 70.0 * s) + 5.0 * noise(rng, h, w, 10.0 * s) + 4.0 * noise(rng, h, w, 1.0 * s)
    v += rng.normal(0.0, 3.0, (h, w)).astype(np.float32)
    f1, f2, idx, (tone,) = _coarse_cells(
        rng, h, w, 6.0 * s, values=lambda count: [np.where(rng.random(count) < 0.35, rng.normal(0.0, 22.0, count), 0.0)])
    edge = (f2 - f1) / (2.0 * s)                                           # mm to the cell's edge
    v += np.clip((edge - 0.5) * 2.0, 0.0, 1.0) * tone
    pores = np.clip((noise(rng, h, w, 0.8 * s) - 2.4) * 3.0, 0.0, 1.0)
    v -= 60.0 * pores
    warm = rng.uniform(-4.0, 6.0)
    return rgb(grey + warm, grey, grey - warm) + v[..., None]


def _gravel(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    size = rng.uniform(12.0, 18.0) * s
    wobble = noise(rng, h, w, 0.2 * size)
    height = np.zeros((h, w), np.float32)
    colour = np.zeros((h, w, 3), np.float32)

    def stones(count: int) -> list[np.ndarray]:
        grey = rng.uniform(70.0, 205.0, count)
        kind = rng.random(count)
        tint = np.where(kind[:, None] < 0.25, np.array([-10.0, 2.0, 14.0]),            # warm (BGR)
                        np.where(kind[:, None] < 0.38, np.array([8.0, 2.0, -6.0]), 0.0))
        return [rng.uniform(0.32, 0.5, count), grey[:, None] + tint]

    for scale in (0.45, 1.0):                                # small stones below, large ones on top
        f1, f2, _, (radius, paint) = _coarse_cells(rng, h, w, scale * size, values=stones)
        t_ = f1 / (radius * scale * size * (1.0 + 0.1 * wobble))
        dome = np.sqrt(np.clip(1.0 - t_ * t_, 0.0, 1.0)) * scale
        crease = np.clip((f2 - f1) / (0.8 * s), 0.0, 1.0)    # where two stones press together
        dome *= crease
        top = dome > height
        height = np.where(top, dome, height)
        colour = np.where(top[..., None], paint, colour)
    shade = np.clip(_lit(height, light_from, 0.45 * size), 0.45, 1.35)
    soil = rgb(56, 48, 40) + (8.0 * noise(rng, h, w, 2.0 * s))[..., None]
    stone = colour * (shade * (0.55 + 0.45 * np.sqrt(np.clip(height * 3.0, 0.0, 1.0))))[..., None]
    stone += (7.0 * noise(rng, h, w, 0.7 * s))[..., None]
    return np.where((height > 0.0)[..., None], stone, soil)


def _sand(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    a = rng.uniform(0.0, math.pi)
    mx, my = plane.xy()
    ripple = np.sin(2 * np.pi * (mx * math.cos(a) + my * math.sin(a)) / rng.uniform(25.0, 45.0)
                    + 0.8 * noise(rng, h, w, 40.0 * s))
    grains = rng.standard_normal((h, w)).astype(np.float32)
    v = 4.0 * ripple + 6.0 * noise(rng, h, w, 50.0 * s) + 3.0 * noise(rng, h, w, 1.5 * s) + 7.0 * grains
    v += np.where(grains > 2.5, -55.0, 0.0) + np.where(grains < -2.6, 30.0, 0.0)
    r = rng.uniform(192.0, 214.0)
    g = r - rng.uniform(14.0, 24.0)                         # beige: red over green over blue
    base = rgb(r, g, g - rng.uniform(36.0, 50.0))
    return base + v[..., None]


def _grass(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    import cv2

    h, w = plane.shape
    s = plane.scale
    area = (h / s) * (w / s)
    out = (rgb(40, 58, 26) + (8.0 * noise(rng, h, w, 40.0 * s))[..., None]
           + (noise(rng, h, w, 60.0 * s)[..., None] * rgb(12, 10, -3)))
    canvas = np.clip(out, 0, 255).astype(np.uint8)
    flow = noise(rng, 8, 8, 2.0)                                  # blades lie roughly alike nearby
    shades = [(44, 72, 28), (62, 100, 36), (82, 126, 44), (104, 146, 56), (132, 156, 70), (160, 156, 96)]
    weights = np.array([0.2, 0.28, 0.25, 0.17, 0.07, 0.03])
    n = int(0.12 * area)
    root = rng.uniform((0.0, 0.0), (w, h), (n, 2))
    cell = np.clip((root / (w, h) * 8).astype(int), 0, 7)
    angle = 2.0 * flow[cell[:, 1], cell[:, 0]] + rng.normal(0.0, 0.7, n)
    length = rng.uniform(10.0, 40.0, n) * s
    bend = rng.normal(0.0, 0.3, n)
    ang = angle[:, None] + bend[:, None] * np.array([0.0, 0.5, 1.0])[None, :]
    steps = np.cumsum(np.stack([np.cos(ang), np.sin(ang)], axis=2) * (length[:, None, None] / 3), axis=1)
    pts = np.round((root[:, None, :] + np.concatenate([np.zeros((n, 1, 2)), steps], axis=1)) * 16).astype(np.int32)
    pick = rng.choice(len(shades), n, p=weights / weights.sum())
    wide = rng.uniform(1.2, 2.6, n) * s
    layer = np.arange(n) % 3
    for depth in range(3):                                        # lower blades first, in shade
        for i, shade in enumerate(shades):
            sel = (pick == i) & (layer == depth)
            colour = tuple(float(v) * (0.7 + 0.15 * depth) for v in rgb(*shade))
            for part, taper in ((slice(0, 2), 1.0), (slice(1, 3), 0.7), (slice(2, 4), 0.4)):   # blades taper
                thick = np.maximum(1, np.round(wide[sel] * taper)).astype(int)
                for t_ in np.unique(thick):
                    cv2.polylines(canvas, list(pts[sel][thick == t_][:, part]), False, colour, int(t_),
                                  cv2.LINE_AA, shift=4)
    return canvas.astype(np.float32) + (5.0 * noise(rng, h, w, 0.8 * s))[..., None]


def _wood_chips(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    size = rng.uniform(7.0, 10.0) * s
    turns = (20.0, 65.0, 110.0, 155.0)
    palette = np.array([rgb(164, 112, 68), rgb(138, 92, 56), rgb(192, 150, 104), rgb(96, 70, 52),
                        rgb(150, 140, 122), rgb(112, 76, 46)])       # tan, brown, pale, bark, grey, dark

    def chips(count: int) -> list[np.ndarray]:
        pick = rng.choice(len(palette), count, p=[0.28, 0.24, 0.16, 0.12, 0.08, 0.12])
        return [palette[pick] * rng.uniform(0.8, 1.15, (count, 1))]

    f1, f2, idx, (chip,) = _coarse_cells(rng, h, w, size, stretch=(3.2, 2.0), turns=turns, values=chips)
    edge = (f2 - f1) / 2.0
    # Fibres along each chip: four grain directions, each chip takes one.
    grains = np.stack([noise(rng, h, w, 0.5 * s, stretch=12.0, angle=a) for a in turns])
    grain = np.take_along_axis(grains, (idx % 4)[None], axis=0)[0]
    shade = np.clip(0.8 + 0.5 * np.clip(edge / (0.3 * size), 0.0, 1.0), 0.6, 1.3)
    chip = chip * shade[..., None] + (12.0 * grain)[..., None]
    gap = np.clip((0.7 * s - edge) / (0.4 * s), 0.0, 1.0)[..., None]
    return chip * (1.0 - gap) + rgb(34, 26, 20) * gap


def _decking(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    import cv2

    h, w = plane.shape
    s = plane.scale
    angle = float(rng.choice([0.0, 90.0, rng.uniform(0.0, 180.0)]))
    d = int(math.ceil(math.hypot(h, w))) + 4
    pitch = rng.uniform(120.0, 150.0) * s
    gapw = rng.uniform(4.0, 8.0) * s
    rows = np.arange(d, dtype=np.float32)[:, None]
    plank = np.floor(rows / pitch).astype(np.int32)
    across = rows - plank * pitch
    count = int(plank.max()) + 1
    species = [(138, 122, 102), (126, 114, 74), (156, 90, 62), (170, 140, 104)]
    base = rgb(*species[int(rng.integers(len(species)))])
    tone = rng.uniform(0.82, 1.12, count).astype(np.float32)
    grain = noise(rng, d, d, 1.0 * s, stretch=40.0, angle=0.0)
    figure = np.sin(2 * np.pi * (across + 6.0 * s * noise(rng, d, d, 40.0 * s, stretch=4.0)) / (5.0 * s))
    canvas = base * tone[plank][..., None] + (10.0 * grain + 6.0 * figure)[..., None]
    if rng.random() < 0.5:                                            # grooved, anti-slip boards
        canvas *= (1.0 - 0.12 * (np.sin(2 * np.pi * across / (5.0 * s)) > 0.6))[..., None]
    gap = np.clip((across - (pitch - gapw)) / 1.5 + 0.5, 0.0, 1.0)
    canvas = canvas * (1.0 - gap[..., None]) + gap[..., None] * rgb(22, 20, 18)
    for p in range(count):                                            # one butt joint and screws per plank
        x = rng.uniform(0.1, 0.9) * d
        y0, y1 = p * pitch, p * pitch + pitch - gapw
        cv2.line(canvas, (int(x), int(y0)), (int(x), int(y1)), tuple(float(v) for v in rgb(30, 26, 22)),
                 max(1, int(2.0 * s)))
        for side in (-1, 1):
            for f in (0.25, 0.75):
                cv2.circle(canvas, (int(x + side * 20.0 * s), int(y0 + f * (y1 - y0))), max(1, int(2.5 * s)),
                           tuple(float(v) for v in rgb(60, 58, 56)), -1, cv2.LINE_AA)
    turn = cv2.getRotationMatrix2D((d / 2, d / 2), angle, 1.0)
    turn[:, 2] -= (d / 2 - w / 2, d / 2 - h / 2)
    return cv2.warpAffine(canvas, turn, (w, h), flags=cv2.INTER_LINEAR, borderMode=cv2.BORDER_REFLECT)


def _dark_floor(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    v = 8.0 * noise(rng, h, w, 40.0 * s) + 4.0 * noise(rng, h, w, 3.0 * s) + 3.0 * noise(rng, h, w, 0.6 * s)
    stains = np.clip(noise(rng, h, w, 25.0 * s) - 1.2, 0.0, 1.0)
    return rgb(54, 50, 46) + (v - 14.0 * stains)[..., None]


def _light_card(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    v = 3.0 * noise(rng, h, w, 25.0 * s) + 2.5 * noise(rng, h, w, 0.5 * s)
    return rgb(220, 217, 210) + v[..., None]
