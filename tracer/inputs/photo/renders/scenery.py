"""Textures of site photos, painted in the plane of the cut face: wood, bark, steel, marks, glints, shadows.

Each painter fills a raster over a patch of the face's plane (a :class:`Plane`: millimetres, x
right, y up) and returns sRGB levels 0..255 as float32 in BGR order, or a share or light layer;
:func:`tracer.inputs.photo.renders.synth.render` maps the rasters through the camera and composites
them in light. The grounds are painted likewise in :mod:`tracer.inputs.photo.renders.grounds`, on
the plane, the smooth random fields (:func:`noise`) and the colours (:func:`rgb`) of this module.
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

__all__ = ["Plane", "WOOD_FINISHES", "STEEL_FINISHES", "MARKS", "wood_levels", "bark_levels", "steel_levels",
           "paint_marks", "glint_light", "shadow_share", "side_levels", "noise", "rgb"]

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
    early, latec = rgb(*early), rgb(*latec)
    out = early + (latec - early) * (0.8 * late)[..., None]
    heart = np.clip((rng.uniform(0.5, 0.68) * reach - r) / 8.0 + 0.5, 0.0, 1.0)
    out *= 1.0 - heart[..., None] * (1.0 - np.array(tint[::-1], dtype=np.float32))
    out += (5.0 * noise(rng, h, w, 0.6 * s) + 6.0 * noise(rng, h, w, 12.0 * s))[..., None]
    pith_dot = np.clip((2.5 - r) / 1.0, 0.0, 1.0)
    out = out * (1.0 - 0.45 * pith_dot[..., None])
    if finish == "sawn":
        # Weathered grey, and the marks of a circular saw: arcs of a large radius.
        grey = out.mean(axis=2, keepdims=True)
        out = 0.45 * out + 0.55 * (0.85 * grey + rgb(10, 8, 4))
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
        out = out * (1.0 - 0.85 * dark[..., None]) + 0.85 * dark[..., None] * rgb(38, 28, 20)
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
    base = rgb(*rng.uniform((80, 64, 50), (105, 85, 66)))
    out = base + (14.0 * fibres + 8.0 * noise(rng, h, w, 0.5 * s))[..., None]
    out *= (1.0 - 0.55 * furrow)[..., None]
    out = out * (1.0 - inner[..., None]) + inner[..., None] * (rgb(150, 98, 66) + (10.0 * fibres)[..., None])
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
        out = rgb(176, 179, 184) + (9.0 * marks + 4.0 * fine + 6.0 * broad)[..., None]
    elif finish == "grey":
        out = rgb(124, 126, 129) + (8.0 * fine + 7.0 * broad)[..., None]
    elif finish == "mill scale":
        flakes = noise(rng, h, w, 6.0 * s) + 0.25 * noise(rng, h, w, 1.2 * s)
        bare = np.clip((flakes - 1.0) * 4.0, 0.0, 1.0)[..., None]
        out = rgb(70, 77, 88) + (6.0 * fine + 5.0 * broad)[..., None]
        out = out * (1.0 - bare) + bare * (rgb(138, 112, 92) + (10.0 * fine)[..., None])
    elif finish == "rust":
        patches = noise(rng, h, w, 8.0 * s)
        speck = rng.standard_normal((h, w)).astype(np.float32)
        out = rgb(150, 84, 44) + (14.0 * broad)[..., None] + (10.0 * fine)[..., None] * rgb(1.0, 0.7, 0.45)
        dark = np.clip(patches - 0.4, 0.0, 1.0)[..., None]
        out = out * (1.0 - 0.45 * dark) + 0.45 * dark * rgb(90, 50, 32)
        out += np.where(speck > 2.2, -45.0, np.where(speck < -2.4, 30.0, 0.0))[..., None] * rgb(1.0, 0.8, 0.6)
        remnant = np.clip((noise(rng, h, w, 20.0 * s) - 1.3) * 3.0, 0.0, 1.0)[..., None]
        out = out * (1.0 - remnant) + remnant * rgb(112, 106, 100)
    elif finish == "painted":
        colours = [(140, 58, 42), (96, 112, 94), (222, 178, 36), (40, 82, 140), (218, 218, 210)]
        coat = rgb(*colours[int(rng.integers(len(colours)))])
        brush = noise(rng, h, w, 0.8 * s, stretch=12.0, angle=rng.uniform(0.0, 180.0))
        out = coat + (4.0 * brush + 5.0 * broad)[..., None]
        chips = np.clip((noise(rng, h, w, 3.0 * s) - 1.7) * 4.0, 0.0, 1.0)[..., None]
        out = out * (1.0 - chips) + chips * rgb(120, 80, 56)
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
            colour = rgb(236, 236, 226) if rng.random() < 0.6 else rgb(232, 220, 140)
        elif kind == "crayon":
            alpha *= np.clip(0.8 + 0.4 * noise(rng, h, w, 0.7 * s, stretch=6.0, angle=rng.uniform(0, 180)), 0.0, 0.95)
            colour = rgb(*[(40, 84, 200), (205, 40, 40), (240, 200, 24), (40, 160, 70)][int(rng.integers(4))])
        else:
            alpha = np.clip(cv2.GaussianBlur(alpha, (0, 0), 2.0 * s) * 1.6, 0.0, 0.95)
            colour = rgb(*[(255, 110, 20), (240, 60, 150), (40, 120, 230), (250, 240, 60)][int(rng.integers(4))])
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
    out = rgb(*base) + (amp * streak + 6.0 * broad)[..., None]
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


def rgb(r: float, g: float, b: float) -> np.ndarray:
    """An sRGB colour written as people do (red, green, blue), stored BGR as OpenCV does."""
    return np.array([b, g, r], dtype=np.float32)


# ---------------------------------------------------------------------------------------------
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
