"""Synthetic photos of known sections, for tests and for the bundled demo images.

A scene is drawn in the plane of the cut face, in millimetres: textured ground, the member's
end face (grain rings or speckle), a printed checkerboard target and, optionally, a ruler. A
camera then looks at the plane through a homography (tilt about a chosen axis, in-plane turn,
scale), with blur, uneven light, noise and JPEG compression. The section's true geometry in the
target's millimetre frame is returned with the image, so that every measurement of the photo
can be compared with the truth. All renders are of invented scenes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..geometry import Section
from .tone import to_levels, to_light

__all__ = ["Scene", "Render", "render"]

# Sub-pixels per pixel along each axis when filling outlines.
_SUPERSAMPLE = 4


@dataclass(frozen=True)
class Scene:
    """What is in front of the camera and how the camera sees it.

    Parameters (lengths in mm, angles in degrees)
    ----------
    section : Section
        The member's cut face, in the target's frame (the target's first inner corner at the
        origin, its rows along +x).
    target : (cols, rows, square) or None
        Inner corners of the printed checkerboard and its square size [mm]; its squares span
        ``[-square, cols*square] x [-square, rows*square]`` before `target_at` moves it. None: no
        target in view (the truth frame is then the section's own).
    target_at : (dx, dy)
        Where the target's first inner corner lies [mm] (the section stays put; the truth frame
        is the target's).
    px_per_mm : float
        Image scale at the centre of the scene.
    tilt, tilt_axis, turn : float
        Camera tilt away from square to the face, the direction of the tilt axis, and the
        in-plane turn of the image.
    blur, noise : float
        Gaussian blur sigma [px] and noise standard deviation [grey levels of 255].
    light : float
        Uneven light: the brightness falls by this share from one side to the other.
    jpeg : int or None
        JPEG quality, or None for a lossless image.
    member, ground : str
        ``"timber"`` (light end grain on a dark floor) or ``"steel"`` (grey on a light card).
    ruler : bool
        Put a graduated ruler in view (below the scene, along +x unless `ruler_at` says).
    ruler_pitch : float
        Its graduation [mm]: 1.0 for a metric rule, 25.4 / 16 for a sixteenth-inch one.
    ruler_marks : tuple of int
        Every n-th mark is longer, for each n (longest first): (10, 5) metric, (16, 8, 4, 2) inch.
    ruler_at : (x, y, angle) or None
        The ruler's start [mm] and direction [deg from +x]; None: along the bottom of the scene.
    ruler_length : float
        Its graduated length [mm].
    second_ruler : (x, y, angle) or None
        A second rule like the first (a framing square's other leg, say), placed likewise.
    seed : int
        Texture and noise seed.
    sensor : (width, height) or None
        A fixed image size [px] with the optical axis through its centre, as a real camera has
        (needed for lens distortion); the tilted camera then walks round the scene's centre,
        keeping it in the middle of the frame. None: the camera turns where it stands and the
        image is cropped to the scene.
    focal_px : float
        Focal length [px].
    distortion : tuple of float
        Lens distortion (k1, k2, p1, p2[, k3]) in OpenCV's convention about the image centre;
        only with `sensor`.
    member_length : float
        Length [mm] of the member behind its cut face: its side faces are drawn where the
        camera sees them (an oblique or off-centre view); 0 draws the face alone.
    tone : {"srgb", "linear"}
        ``"srgb"``: the painted shades are sRGB levels; lens distortion, blur and light fall-off
        act on the light they stand for, and the result is encoded again, as a camera does.
        ``"linear"``: they act on the levels themselves.
    """

    section: Section | None
    target: tuple[int, int, float] = (6, 4, 10.0)
    target_at: tuple[float, float] = (0.0, 0.0)
    px_per_mm: float = 4.0
    tilt: float = 0.0
    tilt_axis: float = 30.0
    turn: float = 0.0
    blur: float = 1.0
    noise: float = 2.0
    light: float = 0.15
    jpeg: int | None = 92
    member: str = "timber"
    ruler: bool = False
    ruler_pitch: float = 1.0
    ruler_marks: tuple[int, ...] = (10, 5)
    ruler_at: tuple[float, float, float] | None = None
    ruler_length: float = 300.0
    second_ruler: tuple[float, float, float] | None = None
    seed: int = 0
    margin: float = 40.0
    sensor: tuple[int, int] | None = None
    focal_px: float = 3000.0
    distortion: tuple[float, ...] = ()
    member_length: float = 0.0
    tone: str = "srgb"


@dataclass(frozen=True)
class Render:
    """A synthetic photo and its truth.

    Attributes
    ----------
    image : ndarray (H, W, 3) uint8, BGR
    section : Section or None
        The true section in the target's mm frame.
    homography : ndarray (3, 3)
        Maps mm-plane points (x, y up) to image pixels (column, row), before lens distortion.
    camera_matrix : ndarray (3, 3)
        The camera's intrinsic matrix in OpenCV's convention (positive focal lengths).
    """

    image: np.ndarray
    section: Section | None
    homography: np.ndarray
    scene: Scene = field(repr=False)
    camera_matrix: np.ndarray | None = None


def render(scene: Scene) -> Render:
    """Draw `scene` as a camera would see it (see :class:`Scene`).

    Every outline (member, holes, target squares, ruler) is mapped to the image by the camera's
    homography, which keeps straight lines straight, and filled by pixel-centre tests on a 4x
    finer grid that is then averaged: the rendered area is exact to well under a pixel's share.
    Lens distortion, where asked, then moves every pixel as OpenCV's model says.
    """
    import cv2

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
    P, K, (W, H) = _camera(scene, lo, hi)                 # 3-D mm -> image pixels
    Hc = P[:, [0, 1, 3]] / P[2, 3]                        # the face's plane (z = 0)
    k = _SUPERSAMPLE

    def cover(polys: list[np.ndarray], signs: list[int] | None = None, *, mapped: bool = False) -> np.ndarray:
        """Share of each pixel inside the union of mapped polygons (holes with sign -1).

        OpenCV fills every sub-pixel its boundary touches, whether it paints or erases (a hole);
        drawing each outline shrunk by 0.4 sub-pixel takes that back (measured: within 0.1
        sub-pixel on squares and circles). `mapped` polygons are in image pixels already.
        """
        import shapely

        acc = np.zeros((H * k, W * k), np.uint8)
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
                pts = np.round(np.asarray(part.exterior.coords) * 256).astype(np.int32)
                cv2.fillPoly(acc, [pts], 0 if hole else 1, lineType=cv2.LINE_8, shift=8)
        return acc.reshape(H, k, W, k).mean(axis=(1, 3), dtype=np.float32)

    member_light = scene.member == "timber"
    # The painted shades are sRGB levels; with tone "srgb" every layer is composited in light
    # (a pixel half covered gets half of each layer's light), and the lens and the light act on
    # light; the camera encodes what it recorded. With "linear" all of it acts on the levels.
    srgb = scene.tone == "srgb"

    def shade(v):
        v = np.asarray(v, dtype=np.float32)
        return to_light(np.clip(v, 0, 255) / 255.0) * 255.0 if srgb else v

    img = shade((45.0 if member_light else 215.0) + _texture(rng, H, W, scale=6 * scene.px_per_mm, amplitude=10.0))
    if scene.section is not None:
        rings = list(scene.section.rings())
        if scene.member_length > 0:                       # the side faces behind the cut end
            side = cover(_side_faces(P, [r for r, _ in rings], scene.member_length), mapped=True)
            img = img * (1 - side) + shade(150.0 if member_light else 95.0) * side
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
    paint = []
    if scene.target is not None:
        paint.append(([_rect(*paper)], 235.0))
        squares = [_rect(np.array([tx + (c - 1) * sq, ty + (r - 1) * sq]), np.array([tx + c * sq, ty + r * sq]))
                   for r in range(rows + 1) for c in range(cols + 1) if (r + c) % 2 == 0]
        paint.append((squares, 25.0))
    for start, length, a in rulers:
        paint.append(([_ruler_outline(start, length, a)], 225.0))
        paint.append((_ruler_ticks(start, length, a, scene.ruler_pitch, scene.ruler_marks), 30.0))
    for polys, value in paint:
        f = cover(polys)
        img = img * (1 - f) + shade(value) * f
    if scene.distortion:
        img = _distort(img.astype(np.float32), K, np.array(scene.distortion, dtype=np.float64))
    if scene.blur > 0:
        img = cv2.GaussianBlur(img.astype(np.float32), (0, 0), scene.blur)
    gx = np.linspace(-0.5, 0.5, W, dtype=np.float32)[None, :]
    img = img * (1.0 - scene.light * (gx + 0.5))
    if srgb:
        img = to_levels(img / 255.0) * 255.0
    img = img + rng.normal(0.0, scene.noise, img.shape).astype(np.float32)
    bgr = np.clip(np.stack([img * 0.92, img, img * 1.05], axis=2), 0, 255).astype(np.uint8)
    if scene.jpeg is not None:
        ok, buf = cv2.imencode(".jpg", bgr, [cv2.IMWRITE_JPEG_QUALITY, int(scene.jpeg)])
        bgr = cv2.imdecode(buf, cv2.IMREAD_COLOR)
    # Truth in the target's frame: the target's first inner corner at the origin.
    truth = scene.section.translated(-tx, -ty) if scene.section is not None else None
    T = np.array([[1.0, 0.0, tx], [0.0, 1.0, ty], [0.0, 0.0, 1.0]])
    return Render(image=bgr, section=truth, homography=Hc @ T, scene=scene, camera_matrix=K)


# ---------------------------------------------------------------------------------------------
def _camera(scene: Scene, lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray, tuple[int, int]]:
    """A pinhole camera square to the face, then tilted.

    Returns the 3 x 4 projection of mm points (x, y in the face, z behind it, away from the
    camera) to image pixels, the intrinsic matrix in OpenCV's convention, and the image size.
    """
    c = 0.5 * (lo + hi)
    f = float(scene.focal_px)
    dist = f / scene.px_per_mm                            # camera distance [mm] giving px_per_mm
    t, a, turn = (math.radians(v) for v in (scene.tilt, scene.tilt_axis, scene.turn))
    axis = np.array([math.cos(a), math.sin(a), 0.0])
    R = _rotation(axis, t) @ _rotation(np.array([0.0, 0.0, 1.0]), turn)
    Rt = R.T
    Kflip = np.array([[f, 0.0, 0.0], [0.0, -f, 0.0], [0.0, 0.0, 1.0]])
    c3 = np.array([c[0], c[1], 0.0])
    if scene.sensor is None:
        # The camera turns where it stands, over c (the image is cropped to the scene after).
        centre = c3 - np.array([0.0, 0.0, dist])
    else:
        # The camera walks round c and keeps it at the centre of the frame, as a person does.
        centre = c3 + R @ np.array([0.0, 0.0, -dist])
    P = Kflip @ np.column_stack([Rt, -Rt @ centre])
    if scene.sensor is not None:
        W, H = (int(v) for v in scene.sensor)
        shift = np.array([[1.0, 0.0, (W - 1) / 2], [0.0, 1.0, (H - 1) / 2], [0.0, 0.0, 1.0]])
        size = (W, H)
    else:
        if scene.distortion:
            raise ValueError("lens distortion needs a fixed sensor size (Scene.sensor)")
        corners = np.array([[lo[0], lo[1], 0, 1], [hi[0], lo[1], 0, 1], [hi[0], hi[1], 0, 1], [lo[0], hi[1], 0, 1]])
        q = corners @ P.T
        q = q[:, :2] / q[:, 2:]
        shift = np.array([[1.0, 0.0, -q[:, 0].min()], [0.0, 1.0, -q[:, 1].min()], [0.0, 0.0, 1.0]])
        size = (int(math.ceil(np.ptp(q[:, 0]))) + 1, int(math.ceil(np.ptp(q[:, 1]))) + 1)
    K = np.array([[f, 0.0, shift[0, 2]], [0.0, f, shift[1, 2]], [0.0, 0.0, 1.0]])
    return shift @ P, K, size


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

    from .lens import undistort_points

    H, W = img.shape
    yy, xx = np.mgrid[0:H, 0:W].astype(np.float64)
    m = undistort_points(np.column_stack([xx.ravel(), yy.ravel()]), K, dist).reshape(H, W, 2)
    return cv2.remap(img, m[..., 0].astype(np.float32), m[..., 1].astype(np.float32), cv2.INTER_CUBIC,
                     borderMode=cv2.BORDER_REFLECT)


def _rotation(axis: np.ndarray, angle: float) -> np.ndarray:
    k = axis / np.linalg.norm(axis)
    Kx = np.array([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return np.eye(3) + math.sin(angle) * Kx + (1 - math.cos(angle)) * Kx @ Kx


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
