"""What a synthetic photo shows and how its camera sees it: the :class:`Scene`, the :class:`Render`.

A scene is drawn in the plane of the cut face, in millimetres: the ground, the member's end face,
a printed checkerboard target and, optionally, a ruler. A camera looks at the plane
(:func:`camera_projection`: a pinhole tilted about a chosen axis, turned in the image, at the
distance that gives the scale, on a fixed sensor or cropped to the scene).
:func:`tracer.inputs.photo.renders.synth.render` draws a scene and returns a :class:`Render`: the
image and, beside it, the section's true geometry in the target's millimetre frame. The records
lie below the renderer and its site look (:mod:`tracer.inputs.photo.renders.sitelook`), which
both take them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ....section.geometry import Section

__all__ = ["Scene", "Render", "camera_projection"]


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
    member : str
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
    camera_shift : (dx, dy)
        Where the camera stands [mm], off the scene's centre, looking the same way: an
        off-centre view, which shows the member's side faces when `member_length` > 0.
    tone : {"srgb", "linear"}
        ``"srgb"``: the painted shades are sRGB levels; lens distortion, blur and light fall-off
        act on the light they stand for, and the result is encoded again, as a camera does.
        ``"linear"``: they act on the levels themselves.

    Site fields (any of them away from its default gives the site look, in colour)

    ground : str or None
        What the member lies on: ``"concrete"``, ``"gravel"``, ``"sand"``, ``"grass"``,
        ``"wood chips"``, ``"decking"``, ``"dark floor"`` or ``"light card"``. None: the dark
        floor under timber, the light card under steel.
    finish : str or None
        The cut end's surface. Timber: ``"end grain"`` (a fresh cut: rings, heartwood and
        sapwood, pith) or ``"sawn"`` (weathered grey, saw marks). Steel: ``"bright"``,
        ``"grey"``, ``"mill scale"``, ``"rust"`` or ``"painted"``. None: end grain for timber,
        grey for steel. It colours the side faces too.
    under_bark : Section or None
        The wood inside the bark, in the frame of `section` (timber only): the part of `section`
        outside it is drawn as bark. :func:`log_section` and :func:`waney_board` return both.
    checks : int
        Radial drying checks in the end grain (dark cracks that open towards the outside).
    pith : (x, y) or None
        The pith [mm, the frame of `section`]; it may lie outside the member. None: with bark,
        near the centre of the circle that fits the wood's outline under the bark (a log's
        middle, a waney board's log axis); without, below the section as in the plain look.
    marks : tuple of str
        Marks on the face, one per entry: ``"chalk"``, ``"crayon"`` or ``"paint"``.
    shadow : float
        Reach [mm] of the member's cast shadow on the ground, on the side away from the light
        (0: none). It darkens the ground, never the face.
    light_from : float
        Direction the light comes from [deg from +x, counter-clockwise]: the shadow falls the
        other way, side faces turned to it are lit, and stones are lit on that side. With `light`,
        the brightness also falls off across the image away from it (180: from the left, as in
        the plain look).
    glints : int
        Small specular highlights: on a steel face two thirds of them, the rest on the ground
        (on timber scenes all on the ground).
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
    camera_shift: tuple[float, float] = (0.0, 0.0)
    ground: str | None = None
    finish: str | None = None
    under_bark: Section | None = None
    checks: int = 0
    pith: tuple[float, float] | None = None
    marks: tuple[str, ...] = ()
    shadow: float = 0.0
    light_from: float = 180.0
    glints: int = 0


@dataclass(frozen=True)
class Render:
    """A synthetic photo and its truth.

    Attributes
    ----------
    image : ndarray (H, W, 3) uint8, BGR
    section : Section or None
        The true section in the target's mm frame: the whole member as seen, bark included.
    homography : ndarray (3, 3)
        Maps mm-plane points (x, y up) to image pixels (column, row), before lens distortion.
    camera_matrix : ndarray (3, 3)
        The camera's intrinsic matrix in OpenCV's convention (positive focal lengths).
    under_bark : Section or None
        The wood inside the bark in the target's mm frame; None without bark.
    coverage : ndarray (H, W) float32 or None
        The share of each pixel inside the section, as filled before lens distortion and blur:
        in the site look the exact share of its area, in the plain look the share of its 4 x 4
        sub-pixels that OpenCV's fill took.
    member_point : (x, y) or None
        A pixel well inside the member's face, off any hole [px, x right, y down]: a seed hint.
    ground_point : (x, y) or None
        A pixel on open ground, away from the member, its side faces, its shadow, the target
        and rulers [px]: an outside hint. None where no ground is that clear.
    """

    image: np.ndarray
    section: Section | None
    homography: np.ndarray
    scene: Scene = field(repr=False)
    camera_matrix: np.ndarray | None = None
    under_bark: Section | None = None
    coverage: np.ndarray | None = field(default=None, repr=False)
    member_point: tuple[float, float] | None = None
    ground_point: tuple[float, float] | None = None

    def to_image(self, points: np.ndarray) -> np.ndarray:
        """Points (N, 2) [mm, the truth's frame] to image pixels (column, row), through the lens."""
        pts = np.atleast_2d(np.asarray(points, dtype=np.float64))
        q = np.column_stack([pts, np.ones(len(pts))]) @ self.homography.T
        q = q[:, :2] / q[:, 2:]
        if self.scene.distortion and self.camera_matrix is not None:
            import cv2

            K = self.camera_matrix
            unit = np.column_stack([(q - K[:2, 2]) / (K[0, 0], K[1, 1]), np.ones(len(q))])
            seen, _ = cv2.projectPoints(unit, np.zeros(3), np.zeros(3), K, np.array(self.scene.distortion, float))
            q = seen.reshape(-1, 2)
        return q


def camera_projection(scene: Scene, lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray, tuple[int, int]]:
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
    if tuple(scene.camera_shift) != (0.0, 0.0):
        centre = centre + np.array([scene.camera_shift[0], scene.camera_shift[1], 0.0])
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


def _rotation(axis: np.ndarray, angle: float) -> np.ndarray:
    k = axis / np.linalg.norm(axis)
    Kx = np.array([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return np.eye(3) + math.sin(angle) * Kx + (1 - math.cos(angle)) * Kx @ Kx
