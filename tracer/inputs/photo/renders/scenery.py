"""Textures of site photos, painted in the plane of the cut face: grounds, wood, bark, steel, marks.

Each painter fills a raster over a patch of the face's plane (a :class:`Plane`: millimetres, x
right, y up) and returns sRGB levels 0..255 as float32 in BGR order, or a share or light layer;
:func:`tracer.inputs.photo.renders.synth.render` maps the rasters through the camera and composites them in light.
Textures are surface only: they never move the member's outline, whose truth the renderer keeps.
All randomness comes from the generator passed in, so a scene's seed fixes every stone, blade,
ring and mark. The looks are our own invention, tuned by eye to what site photos commonly show
(grass green, sand beige, concrete grey with aggregate, rust orange-brown, mill scale blue-grey).
Everything is vectorised over pixels; the only loops run over a few dozen planks, marks or glints.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["Plane", "GROUNDS", "WOOD_FINISHES", "STEEL_FINISHES", "MARKS", "ground_levels", "wood_levels",
           "bark_levels", "steel_levels", "paint_marks", "glint_light", "shadow_share", "side_levels", "noise"]

#: Grounds a member may lie on.
GROUNDS = ("concrete", "gravel", "sand", "grass", "wood chips", "decking", "dark floor", "light card")
#: Surfaces of a timber member's cut end.
WOOD_FINISHES = ("end grain", "sawn")
#: Surfaces of a steel member's cut end and sides.
STEEL_FINISHES = ("bright", "grey", "mill scale", "rust", "painted")
#: Marks a person puts on a cut end.
MARKS = ("chalk", "crayon", "paint")


@dataclass(frozen=True)
class Plane:
    """A raster over a patch of the face's plane.

    Pixel (column c, row r) has its centre at ``(x0 + c / scale, y1 - r / scale)`` [mm]: rows run
    down, y runs up.

    Attributes
    ----------
    x0, y1 : float
        The plane point [mm] at the centre of the top-left pixel.
    scale : float
        Raster pixels per mm.
    width, height : int
        Raster size [px].
    """

    x0: float
    y1: float
    scale: float
    width: int
    height: int

    @classmethod
    def over(cls, lo: np.ndarray, hi: np.ndarray, scale: float) -> Plane:
        """The raster of `scale` px/mm over the box from `lo` to `hi` [mm]."""
        w = int(math.ceil((hi[0] - lo[0]) * scale)) + 1
        h = int(math.ceil((hi[1] - lo[1]) * scale)) + 1
        return cls(float(lo[0]), float(hi[1]), float(scale), max(w, 2), max(h, 2))

    @property
    def shape(self) -> tuple[int, int]:
        return self.height, self.width

    def xy(self) -> tuple[np.ndarray, np.ndarray]:
        """Plane coordinates [mm] of every pixel centre, as two broadcast (H, W) float32 arrays."""
        x = (self.x0 + np.arange(self.width) / self.scale).astype(np.float32)
        y = (self.y1 - np.arange(self.height) / self.scale).astype(np.float32)
        return np.broadcast_to(x[None, :], self.shape), np.broadcast_to(y[:, None], self.shape)

    def to_px(self, xy: np.ndarray) -> np.ndarray:
        """Plane points (N, 2) [mm] to raster pixels (column, row)."""
        xy = np.asarray(xy, dtype=np.float64)
        return np.column_stack([(xy[:, 0] - self.x0) * self.scale, (self.y1 - xy[:, 1]) * self.scale])

    def matrix(self) -> np.ndarray:
        """The 3 x 3 map of raster pixels (column, row, 1) to plane points (x, y, 1) [mm]."""
        s = 1.0 / self.scale
        return np.array([[s, 0.0, self.x0], [0.0, -s, self.y1], [0.0, 0.0, 1.0]])


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


def wood_levels(plane: Plane, rng: np.random.Generator, *, finish: str, pith: tuple[float, float],
                reach: float, checks: np.ndarray) -> np.ndarray:
    """End grain of timber over `plane`: growth rings round the pith, heartwood, sapwood, checks.

    Parameters
    ----------
    finish : {"end grain", "sawn"}
        ``"end grain"``: a fresh cut, rings plain to see; ``"sawn"``: weathered grey, the rings
        faint, saw marks across.
    pith : (x, y)
        The pith [mm]; it may lie outside the member (a board sawn off-centre).
    reach : float
        Distance from the pith to the outside of the wood [mm]: the heartwood takes the inner
        half to two thirds of it.
    checks : ndarray (K, 4)
        Radial drying checks: angle [rad], inner and outer radius [mm], width at the outer end
        [mm]. They open towards the outside and close towards the pith.
    """
    h, w = plane.shape
    s = plane.scale
    mx, my = plane.xy()
    dx, dy = mx - np.float32(pith[0]), my - np.float32(pith[1])
    r = np.hypot(dx, dy)
    th = np.arctan2(dy, dx)
    # Rings are not circles: low harmonics of the stem's shape and small waves along each ring.
    k = rng.uniform(0.0, 2 * math.pi, 3)
    a = rng.uniform(0.01, 0.05, 3)
    wobble = 1.0 + a[0] * np.cos(2 * th + k[0]) + a[1] * np.cos(3 * th + k[1]) + a[2] * np.cos(5 * th + k[2])
    rd = r * wobble + 0.25 * noise(rng, h, w, 2.0 * s) + 0.8 * noise(rng, h, w, 30.0 * s)
    width = rng.uniform(2.2, 5.5)                              # ring width [mm]
    phase = rd / width
    f = phase - np.floor(phase)
    late = np.clip((f - 0.55) / 0.25, 0.0, 1.0)                # earlywood to latewood, then a sharp line
    palettes = [                                               # (earlywood, latewood, heartwood tint) RGB
        ((222, 190, 140), (170, 112, 62), (0.90, 0.80, 0.70)),  # pine
        ((228, 210, 170), (188, 150, 105), (0.95, 0.92, 0.85)),  # spruce
        ((200, 160, 115), (150, 100, 60), (0.80, 0.68, 0.58)),  # oak-like brown
        ((214, 170, 128), (165, 95, 55), (0.88, 0.70, 0.58)),   # douglas fir
    ]
    early, latec, tint = palettes[int(rng.integers(len(palettes)))]
    early, latec = _rgb(*early), _rgb(*latec)
    out = early + (latec - early) * (0.8 * late)[..., None]
    heart = np.clip((rng.uniform(0.5, 0.68) * reach - r) / 8.0 + 0.5, 0.0, 1.0)
    out *= 1.0 - heart[..., None] * (1.0 - np.array(tint[::-1], dtype=np.float32))
    out += (5.0 * noise(rng, h, w, 0.6 * s) + 6.0 * noise(rng, h, w, 12.0 * s))[..., None]
    pith_dot = np.clip((2.5 - r) / 1.0, 0.0, 1.0)
    out = out * (1.0 - 0.45 * pith_dot[..., None])
    if finish == "sawn":
        # Weathered grey, and the marks of a circular saw: arcs of a large radius.
        grey = out.mean(axis=2, keepdims=True)
        out = 0.45 * out + 0.55 * (0.85 * grey + _rgb(10, 8, 4))
        c = (float(mx[0, 0]) - rng.uniform(300.0, 600.0), float(my[0, 0]) + rng.uniform(-200.0, 200.0))
        arcs = np.hypot(mx - np.float32(c[0]), my - np.float32(c[1]))
        out += (7.0 * np.sin(2 * np.pi * arcs / rng.uniform(1.2, 2.5)) * (0.6 + 0.4 * noise(rng, h, w, 8.0 * s)))[..., None]
    for angle, r0, r1, wide in np.asarray(checks, dtype=float).reshape(-1, 4):
        zigzag = 0.6 * np.sin(r / rng.uniform(4.0, 9.0) + rng.uniform(0, 6.3))      # [mm] across
        turn = np.mod(th - np.float32(angle) + np.float32(np.pi), np.float32(2 * np.pi)) - np.float32(np.pi)
        off = np.abs(turn * r - zigzag)                                # distance across the check [mm]
        t = np.clip((r - r0) / max(r1 - r0, 1e-6), 0.0, 1.0)
        half = 0.5 * wide * t ** 0.8 * (r > r0)
        dark = np.clip((half - off) * s + 0.5, 0.0, 1.0)               # about one pixel's soft edge
        out = out * (1.0 - 0.85 * dark[..., None]) + 0.85 * dark[..., None] * _rgb(38, 28, 20)
    return np.clip(out, 0.0, 255.0).astype(np.float32)


def bark_levels(plane: Plane, rng: np.random.Generator, *, centre: tuple[float, float], wood: list[np.ndarray],
                thickness: float) -> np.ndarray:
    """Bark over `plane`: a dark, rough, fibrous layer, its inner bark lighter and redder.

    Parameters
    ----------
    centre : (x, y)
        The stem's centre [mm]; the bark's fibres run round it.
    wood : list of ndarray (N, 2)
        The outlines of the wood inside the bark [mm] (to find the inner bark).
    thickness : float
        The bark's nominal thickness [mm].
    """
    import cv2

    h, w = plane.shape
    s = plane.scale
    mx, my = plane.xy()
    th = np.arctan2(my - np.float32(centre[1]), mx - np.float32(centre[0]))
    r = np.hypot(mx - np.float32(centre[0]), my - np.float32(centre[1]))
    # Fibres run round the stem: sample a noise strip long in arc length, short across it.
    ring = max(16, int(2 * math.pi * 40.0))                   # strip columns, per turn
    strip = noise(rng, 64, ring, 2.0, stretch=8.0, angle=0.0)  # rows: radius, columns: angle
    u = ((th + np.pi) / (2 * np.pi) * ring).astype(np.float32)
    v = np.mod(r * 2.0, 63.0).astype(np.float32)
    fibres = cv2.remap(strip, u, v, cv2.INTER_LINEAR, borderMode=cv2.BORDER_WRAP)
    plates = noise(rng, 1, ring, 6.0)[0]                      # furrows between bark plates, by angle
    furrow = np.clip(plates[np.clip(u.astype(np.int32), 0, ring - 1)] - 0.9, 0.0, 1.0)
    inside = np.zeros((h, w), np.uint8)
    cv2.fillPoly(inside, [np.round(plane.to_px(ring_) * 16).astype(np.int32) for ring_ in wood], 255,
                 lineType=cv2.LINE_8, shift=4)
    depth = cv2.distanceTransform(255 - inside, cv2.DIST_L2, 5) / s          # mm outside the wood
    inner = np.clip((0.3 * thickness - depth) / (0.1 * thickness + 0.2) + 0.5, 0.0, 1.0)
    base = _rgb(*rng.uniform((80, 64, 50), (105, 85, 66)))
    out = base + (14.0 * fibres + 8.0 * noise(rng, h, w, 0.5 * s))[..., None]
    out *= (1.0 - 0.55 * furrow)[..., None]
    out = out * (1.0 - inner[..., None]) + inner[..., None] * (_rgb(150, 98, 66) + (10.0 * fibres)[..., None])
    return np.clip(out, 0.0, 255.0).astype(np.float32)


def steel_levels(plane: Plane, rng: np.random.Generator, *, finish: str) -> np.ndarray:
    """A steel surface over `plane`: one of :data:`STEEL_FINISHES`.

    ``"bright"`` a fresh saw cut, light and striated; ``"grey"`` dull grey speckle;
    ``"mill scale"`` blue-grey dark scale flaking off in places; ``"rust"`` orange-brown with
    darker patches, speckle and grey remnants; ``"painted"`` a coat of paint, chipped.
    """
    h, w = plane.shape
    s = plane.scale
    fine = noise(rng, h, w, 0.6 * s)
    broad = noise(rng, h, w, 15.0 * s)
    if finish == "bright":
        angle = rng.uniform(0.0, 180.0)
        marks = noise(rng, h, w, 0.5 * s, stretch=30.0, angle=angle)
        out = _rgb(176, 179, 184) + (9.0 * marks + 4.0 * fine + 6.0 * broad)[..., None]
    elif finish == "grey":
        out = _rgb(124, 126, 129) + (8.0 * fine + 7.0 * broad)[..., None]
    elif finish == "mill scale":
        flakes = noise(rng, h, w, 6.0 * s) + 0.25 * noise(rng, h, w, 1.2 * s)
        bare = np.clip((flakes - 1.0) * 4.0, 0.0, 1.0)[..., None]
        out = _rgb(70, 77, 88) + (6.0 * fine + 5.0 * broad)[..., None]
        out = out * (1.0 - bare) + bare * (_rgb(138, 112, 92) + (10.0 * fine)[..., None])
    elif finish == "rust":
        patches = noise(rng, h, w, 8.0 * s)
        speck = rng.standard_normal((h, w)).astype(np.float32)
        out = _rgb(150, 84, 44) + (14.0 * broad)[..., None] + (10.0 * fine)[..., None] * _rgb(1.0, 0.7, 0.45)
        dark = np.clip(patches - 0.4, 0.0, 1.0)[..., None]
        out = out * (1.0 - 0.45 * dark) + 0.45 * dark * _rgb(90, 50, 32)
        out += np.where(speck > 2.2, -45.0, np.where(speck < -2.4, 30.0, 0.0))[..., None] * _rgb(1.0, 0.8, 0.6)
        remnant = np.clip((noise(rng, h, w, 20.0 * s) - 1.3) * 3.0, 0.0, 1.0)[..., None]
        out = out * (1.0 - remnant) + remnant * _rgb(112, 106, 100)
    elif finish == "painted":
        colours = [(140, 58, 42), (96, 112, 94), (222, 178, 36), (40, 82, 140), (218, 218, 210)]
        coat = _rgb(*colours[int(rng.integers(len(colours)))])
        brush = noise(rng, h, w, 0.8 * s, stretch=12.0, angle=rng.uniform(0.0, 180.0))
        out = coat + (4.0 * brush + 5.0 * broad)[..., None]
        chips = np.clip((noise(rng, h, w, 3.0 * s) - 1.7) * 4.0, 0.0, 1.0)[..., None]
        out = out * (1.0 - chips) + chips * _rgb(120, 80, 56)
    else:
        raise ValueError(f"finish = {finish!r} is not a steel finish; use one of {', '.join(STEEL_FINISHES)}")
    return np.clip(out, 0.0, 255.0).astype(np.float32)


def paint_marks(levels: np.ndarray, plane: Plane, rng: np.random.Generator, *, kinds: tuple[str, ...],
                centre: tuple[float, float], size: float) -> np.ndarray:
    """Marks a person puts on a cut end, painted over `levels` (returned anew).

    Parameters
    ----------
    kinds : tuple of str
        One mark per entry, each one of :data:`MARKS`: ``"chalk"`` (white or yellow, dusty and
        broken), ``"crayon"`` (a lumber crayon's waxy, bright stroke), ``"paint"`` (a sprayed
        stripe or dot with soft overspray).
    centre : (x, y)
        Where on the face the marks gather [mm].
    size : float
        The face's size [mm]: marks span up to about half of it.
    """
    import cv2

    h, w = plane.shape
    s = plane.scale
    out = levels.copy()
    for kind in kinds:
        if kind not in MARKS:
            raise ValueError(f"mark {kind!r} is not a mark; use one of {', '.join(MARKS)}")
        shape = int(rng.integers(4))
        c = np.array(centre) + rng.uniform(-0.2, 0.2, 2) * size
        half = rng.uniform(0.15, 0.3) * size
        strokes = _mark_strokes(shape, c, half, rng)
        alpha = np.zeros((h, w), np.float32)
        width = {"chalk": 3.0, "crayon": 6.0, "paint": 9.0}[kind] * rng.uniform(0.8, 1.3)
        pts = [np.round(plane.to_px(p) * 16).astype(np.int32) for p in strokes]
        cv2.polylines(alpha, pts, False, 1.0, max(1, int(round(width * s))), cv2.LINE_AA, shift=4)
        if kind == "chalk":
            alpha *= np.clip(0.55 + 0.6 * noise(rng, h, w, 0.5 * s), 0.0, 0.9)
            colour = _rgb(236, 236, 226) if rng.random() < 0.6 else _rgb(232, 220, 140)
        elif kind == "crayon":
            alpha *= np.clip(0.8 + 0.4 * noise(rng, h, w, 0.7 * s, stretch=6.0, angle=rng.uniform(0, 180)), 0.0, 0.95)
            colour = _rgb(*[(40, 84, 200), (205, 40, 40), (240, 200, 24), (40, 160, 70)][int(rng.integers(4))])
        else:
            alpha = np.clip(cv2.GaussianBlur(alpha, (0, 0), 2.0 * s) * 1.6, 0.0, 0.95)
            colour = _rgb(*[(255, 110, 20), (240, 60, 150), (40, 120, 230), (250, 240, 60)][int(rng.integers(4))])
        out = out * (1.0 - alpha[..., None]) + colour * alpha[..., None]
    return out.astype(np.float32)


def glint_light(plane: Plane, rng: np.random.Generator, points: np.ndarray) -> np.ndarray:
    """Specular glints at `points` (N, 2) [mm]: short bright streaks, in light (1 = white).

    A glint is brighter than white paint (up to four times), so it saturates the camera and
    blooms a little through the lens blur.
    """
    import cv2

    h, w = plane.shape
    s = plane.scale
    out = np.zeros((h, w), np.float32)
    for p in np.asarray(points, dtype=float).reshape(-1, 2):
        a = rng.uniform(0.0, math.pi)
        half = rng.uniform(0.5, 2.5) * np.array([math.cos(a), math.sin(a)])
        ends = plane.to_px(np.array([p - half, p + half]))
        cv2.line(out, tuple(np.round(ends[0] * 16).astype(int)), tuple(np.round(ends[1] * 16).astype(int)),
                 float(rng.uniform(1.5, 4.0)), max(1, int(round(rng.uniform(0.3, 0.8) * s))), cv2.LINE_AA, shift=4)
    return cv2.GaussianBlur(out, (0, 0), max(0.3, 0.25 * s))


def shadow_share(plane: Plane, rings: list[np.ndarray], *, towards: float, reach: float) -> np.ndarray:
    """The share of light a member's cast shadow takes from the ground, 0..1 over `plane`.

    The shadow is the member's outline swept `reach` [mm] in the direction `towards` [deg from
    +x] (filled at steps of at most 1.5 px), softened by a penumbra that grows with the reach.
    """
    import cv2

    h, w = plane.shape
    s = plane.scale
    steps = max(2, int(math.ceil(reach / max(1.0, 1.5 / s))) + 1)
    shift = np.linspace(0.0, reach, steps)[:, None] * np.array([math.cos(math.radians(towards)),
                                                                 math.sin(math.radians(towards))])
    mask = np.zeros((h, w), np.float32)
    for ring in rings:                       # one fill per copy: a fill of many polygons is even-odd
        for d in shift:
            cv2.fillPoly(mask, [np.round(plane.to_px(ring + d) * 16).astype(np.int32)], 1.0,
                         lineType=cv2.LINE_8, shift=4)
    return cv2.GaussianBlur(mask, (0, 0), (1.0 + 0.08 * reach) * s)


def side_levels(material: str, shape: tuple[int, int], rng: np.random.Generator, *, along: float,
                px_per_mm: float) -> np.ndarray:
    """The member's side faces in image space, BGR levels (H, W, 3), streaked along the member.

    Parameters
    ----------
    material : str
        ``"wood"``, ``"bark"`` or one of :data:`STEEL_FINISHES`.
    along : float
        Direction of the member's length in the image [deg, image axes].
    px_per_mm : float
        Image scale, for the size of the streaks.
    """
    h, w = shape
    s = px_per_mm
    streak = noise(rng, h, w, 1.0 * s, stretch=25.0, angle=along)
    broad = noise(rng, h, w, 20.0 * s)
    base = {"wood": (196, 160, 112), "bark": (92, 74, 58), "bright": (150, 153, 158), "grey": (112, 114, 117),
            "mill scale": (66, 72, 82), "rust": (138, 78, 42), "painted": (120, 120, 112)}[material]
    amp = {"wood": 12.0, "bark": 22.0}.get(material, 7.0)
    out = _rgb(*base) + (amp * streak + 6.0 * broad)[..., None]
    return np.clip(out, 0.0, 255.0).astype(np.float32)


def noise(rng: np.random.Generator, h: int, w: int, size: float, *, stretch: float = 1.0,
          angle: float = 0.0) -> np.ndarray:
    """A smooth random field of zero mean and unit spread over (h, w) pixels, float32.

    Parameters
    ----------
    size : float
        Size of its features [px].
    stretch : float
        Features this many times longer along `angle` [deg, counter-clockwise on screen] than across.
    """
    import cv2

    size = max(float(size), 0.5)
    turn = float(angle) % 180.0
    if stretch == 1.0 or turn in (0.0, 90.0):
        # Along a raster axis the field is a plain enlargement of a small random grid.
        along, across = (size * stretch, size) if turn == 0.0 else (size, size * stretch)
        small = rng.standard_normal((max(2, int(h / across) + 2), max(2, int(w / along) + 2))).astype(np.float32)
        big = cv2.resize(small, (w, h), interpolation=cv2.INTER_CUBIC)
    else:
        d = int(math.ceil(math.hypot(h, w))) + 4
        small = rng.standard_normal((max(2, int(d / size) + 2), max(2, int(d / (size * stretch)) + 2))).astype(np.float32)
        canvas = cv2.resize(small, (d, d), interpolation=cv2.INTER_CUBIC)
        rot = cv2.getRotationMatrix2D((d / 2, d / 2), turn, 1.0)
        rot[:, 2] -= (d / 2 - w / 2, d / 2 - h / 2)
        big = cv2.warpAffine(canvas, rot, (w, h), flags=cv2.INTER_LINEAR, borderMode=cv2.BORDER_REFLECT)
    big -= big.mean()
    return big / np.float32(big.std() + 1e-9)


# ---------------------------------------------------------------------------------------------
def _rgb(r: float, g: float, b: float) -> np.ndarray:
    """An sRGB colour written as people do (red, green, blue), stored BGR as OpenCV does."""
    return np.array([b, g, r], dtype=np.float32)


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
    return _rgb(grey + warm, grey, grey - warm) + v[..., None]


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
    soil = _rgb(56, 48, 40) + (8.0 * noise(rng, h, w, 2.0 * s))[..., None]
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
    base = _rgb(r, g, g - rng.uniform(36.0, 50.0))
    return base + v[..., None]


def _grass(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    import cv2

    h, w = plane.shape
    s = plane.scale
    area = (h / s) * (w / s)
    out = (_rgb(40, 58, 26) + (8.0 * noise(rng, h, w, 40.0 * s))[..., None]
           + (noise(rng, h, w, 60.0 * s)[..., None] * _rgb(12, 10, -3)))
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
            colour = tuple(float(v) * (0.7 + 0.15 * depth) for v in _rgb(*shade))
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
    palette = np.array([_rgb(164, 112, 68), _rgb(138, 92, 56), _rgb(192, 150, 104), _rgb(96, 70, 52),
                        _rgb(150, 140, 122), _rgb(112, 76, 46)])       # tan, brown, pale, bark, grey, dark

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
    return chip * (1.0 - gap) + _rgb(34, 26, 20) * gap


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
    base = _rgb(*species[int(rng.integers(len(species)))])
    tone = rng.uniform(0.82, 1.12, count).astype(np.float32)
    grain = noise(rng, d, d, 1.0 * s, stretch=40.0, angle=0.0)
    figure = np.sin(2 * np.pi * (across + 6.0 * s * noise(rng, d, d, 40.0 * s, stretch=4.0)) / (5.0 * s))
    canvas = base * tone[plank][..., None] + (10.0 * grain + 6.0 * figure)[..., None]
    if rng.random() < 0.5:                                            # grooved, anti-slip boards
        canvas *= (1.0 - 0.12 * (np.sin(2 * np.pi * across / (5.0 * s)) > 0.6))[..., None]
    gap = np.clip((across - (pitch - gapw)) / 1.5 + 0.5, 0.0, 1.0)
    canvas = canvas * (1.0 - gap[..., None]) + gap[..., None] * _rgb(22, 20, 18)
    for p in range(count):                                            # one butt joint and screws per plank
        x = rng.uniform(0.1, 0.9) * d
        y0, y1 = p * pitch, p * pitch + pitch - gapw
        cv2.line(canvas, (int(x), int(y0)), (int(x), int(y1)), tuple(float(v) for v in _rgb(30, 26, 22)),
                 max(1, int(2.0 * s)))
        for side in (-1, 1):
            for f in (0.25, 0.75):
                cv2.circle(canvas, (int(x + side * 20.0 * s), int(y0 + f * (y1 - y0))), max(1, int(2.5 * s)),
                           tuple(float(v) for v in _rgb(60, 58, 56)), -1, cv2.LINE_AA)
    turn = cv2.getRotationMatrix2D((d / 2, d / 2), angle, 1.0)
    turn[:, 2] -= (d / 2 - w / 2, d / 2 - h / 2)
    return cv2.warpAffine(canvas, turn, (w, h), flags=cv2.INTER_LINEAR, borderMode=cv2.BORDER_REFLECT)


def _dark_floor(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    v = 8.0 * noise(rng, h, w, 40.0 * s) + 4.0 * noise(rng, h, w, 3.0 * s) + 3.0 * noise(rng, h, w, 0.6 * s)
    stains = np.clip(noise(rng, h, w, 25.0 * s) - 1.2, 0.0, 1.0)
    return _rgb(54, 50, 46) + (v - 14.0 * stains)[..., None]


def _light_card(plane: Plane, rng: np.random.Generator, light_from: float) -> np.ndarray:
    h, w = plane.shape
    s = plane.scale
    v = 3.0 * noise(rng, h, w, 25.0 * s) + 2.5 * noise(rng, h, w, 0.5 * s)
    return _rgb(220, 217, 210) + v[..., None]


def _mark_strokes(shape: int, c: np.ndarray, half: float, rng: np.random.Generator) -> list[np.ndarray]:
    """Polylines [mm] of one mark: a cross, a line, a tick or a loop."""
    a = rng.uniform(0.0, math.pi)
    u = np.array([math.cos(a), math.sin(a)])
    v = np.array([-u[1], u[0]])
    if shape == 0:
        return [np.array([c - half * (u + v), c + half * (u + v)]), np.array([c - half * (u - v), c + half * (u - v)])]
    if shape == 1:
        t = np.linspace(-1.0, 1.0, 9)[:, None]
        return [c + half * t * u + 0.08 * half * np.sin(3 * t) * v]
    if shape == 2:
        return [np.array([c - half * u, c - 0.3 * half * v, c + half * (u + v)])]
    t = np.linspace(0.0, 2 * math.pi * 0.95, 24)[:, None]
    return [c + half * 0.6 * (np.cos(t) * u + 0.8 * np.sin(t) * v)]
