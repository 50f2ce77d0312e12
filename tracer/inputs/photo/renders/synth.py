"""Synthetic photos of known sections, for tests, for the bundled demo images and as site-like test sets.

A scene is drawn in the plane of the cut face, in millimetres: the ground, the member's end face,
a printed checkerboard target and, optionally, a ruler. A camera then looks at the plane through a
homography (tilt about a chosen axis, in-plane turn, scale), with blur, uneven light, noise and
JPEG compression. The section's true geometry in the target's millimetre frame is returned with
the image, so that every measurement of the photo can be compared with the truth.

Two looks share the camera and the exact filling of outlines. With every site field of
:class:`Scene` at its default, the plain look: grey, a mottled floor, the face's rings or speckle
(the existing tests and bundled samples rely on it bit for bit). Setting any site field (a ground,
a finish, bark, checks, marks, a cast shadow, glints, a turned light) gives the
site look, in colour: grounds of concrete, gravel, sand, grass, wood chips or decking; end grain
with growth rings, radial checks and a pith; bark; bright, grey, mill-scaled, rusty or painted
steel; chalk, crayon and paint marks; side faces shaded by the light's direction and the member's
shadow on the ground (textures in :mod:`tracer.inputs.photo.renders.scenery`). Textures are surface only: the
truth is the outline. :func:`site_scenes` is a named set of such scenes; :mod:`tracer.inputs.photo.renders.members` builds
irregular members (logs with bark, waney boards, corroded steel) for them. All scenes and members
are of our own invention.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields

import numpy as np

from ....section.geometry import Section
from ..tone import to_levels, to_light

__all__ = ["Scene", "Render", "render", "site_scenes"]

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


# The fields whose defaults keep the plain look.
_SITE_FIELDS = ("ground", "finish", "under_bark", "checks", "pith", "marks", "shadow", "light_from", "glints")
_SITE_DEFAULTS = {f.name: f.default for f in fields(Scene) if f.name in _SITE_FIELDS}


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
        from .sitelook import check_site

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
    P, K, (W, H) = _camera(scene, lo, hi)                 # 3-D mm -> image pixels
    Hc = P[:, [0, 1, 3]] / P[2, 3]                        # the face's plane (z = 0)

    # The plain look keeps OpenCV's filling (its renders are relied on bit for bit); the site look
    # takes each pixel's exact share of area, without the fill's steps and bias along edges.
    if site:
        from .sitelook import coverage_exact as fill
    else:
        fill = _coverage

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
        from .sitelook import site_layers

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
        from .sitelook import camera_out

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


def site_scenes() -> list[tuple[str, Scene]]:
    """A named set of site-like scenes (invented members on invented grounds) with known truth.

    Forty-five scenes over every member kind (joist, waney board, log with bark, i-section,
    channel, angle, tee, tube, box, round bar, corroded steel), every ground, finish and mark,
    cast shadows, glints, strongly uneven light, camera tilts up to 10 deg and side faces seen
    from an off-centre camera; on purpose also the hard ones: grey steel on grey concrete, a log
    on grass, timber on wood chips and on decking, a tube on sand, a shadow along the member's
    side. Each has a 9 x 6 checkerboard of 15 mm squares to its left (measure with
    ``target="9x6:15mm"``) and a scale at which the section is at least 600 px across and its
    thinnest wall at least 25 px thick. Deterministic: the same list every call.
    """
    from ....section.shapes import angle, box, channel, i_section, rectangle, round_bar, tee, tube
    from .members import corroded_section, log_section, waney_board

    q = 0.05                                                   # chord angle [rad] of arcs
    joist = rectangle(b=47.0, h=195.0, wane={"top_left": 16.0}, chord_angle=q)
    deep = rectangle(b=75.0, h=225.0, wane={"top_right": [12.0, 30.0]}, chord_angle=q)
    stud = rectangle(b=63.0, h=150.0, chord_angle=q)
    post = rectangle(b=100.0, h=100.0, wane=4.0, chord_angle=q)
    ipe = i_section(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0, chord_angle=q)
    heb = i_section(h=200.0, b=200.0, tw=9.0, tf=15.0, r=18.0, chord_angle=q)
    upn = channel(h=152.0, b=76.0, tw=6.4, tf=9.0, r=8.0, chord_angle=q)
    ang = angle(h=150.0, b=90.0, t=10.0, r=12.0, rt=6.0, chord_angle=q)
    eq = angle(h=120.0, b=120.0, t=11.0, r=13.0, rt=6.5, chord_angle=q)
    tsec = tee(h=150.0, b=150.0, tw=10.0, tf=14.0, r=12.0, chord_angle=q)
    chs = tube(d=114.3, t=6.3, chord_angle=q)
    big = tube(d=168.3, t=8.0, chord_angle=q)
    rhs = box(h=200.0, b=100.0, t=8.0, ro=12.0, ri=8.0, chord_angle=q)
    shs = box(h=150.0, b=100.0, t=6.3, ro=9.5, ri=6.3, chord_angle=q)
    bar = round_bar(d=120.0, chord_angle=q)
    flat = rectangle(b=160.0, h=30.0, chord_angle=q)
    log_a = log_section(d=260.0, bark=9.0, tears=2, seed=1)
    log_b = log_section(d=220.0, bark=7.0, wobble=0.05, tears=3, seed=2)
    log_c = log_section(d=300.0, bark=12.0, tears=1, seed=3)
    log_d = log_section(d=240.0, seed=4)                       # debarked
    board_a = waney_board(b=150.0, h=45.0, log_d=300.0, wane=25.0, bark=6.0, offset=20.0, seed=5)
    board_b = waney_board(b=200.0, h=50.0, log_d=380.0, wane=30.0, bark=8.0, offset=-30.0, seed=6)
    board_c = waney_board(b=175.0, h=63.0, log_d=340.0, wane=20.0, bark=0.0, seed=7)
    pitted_ipe = corroded_section(ipe, loss=0.3, pits=14, depth=1.5, size=5.0, where=(0.0, 180.0, 100.0, 200.0), seed=8)
    pitted_upn = corroded_section(upn, loss=0.3, pits=10, depth=1.2, size=6.0, seed=9)
    pitted_ang = corroded_section(ang, loss=0.5, pits=12, depth=2.0, size=5.0, seed=10)
    pitted_chs = corroded_section(chs, loss=0.3, pits=8, depth=1.5, size=4.0, seed=11)
    side = dict(member_length=250.0, camera_shift=(170.0, -40.0))
    st = dict(member="steel")
    specs = [  # name, section (or (section, under bark)), px/mm, scene fields
        ("joist-concrete", joist, 3.4, dict(ground="concrete", checks=2, light=0.3, tilt=4.0, tilt_axis=20.0)),
        ("joist-decking", joist, 3.4, dict(ground="decking", finish="sawn", shadow=25.0, light_from=200.0, tilt=6.0)),
        ("joist-wood-chips", deep, 3.0, dict(ground="wood chips", checks=3, marks=("crayon",), tilt=3.0, tilt_axis=110.0)),
        ("joist-gravel-side", deep, 3.0, dict(ground="gravel", finish="sawn", **side)),
        ("joist-strong-light", joist, 3.4, dict(ground="sand", light=0.55, light_from=30.0, shadow=30.0, tilt=9.5,
                                                tilt_axis=60.0)),
        ("stud-grass", stud, 4.2, dict(ground="grass", marks=("chalk",), shadow=20.0, light_from=150.0)),
        ("stud-dark-floor", stud, 4.2, dict(ground="dark floor", finish="sawn", marks=("paint",), tilt=5.0)),
        ("post-checks-concrete", post, 6.0, dict(ground="concrete", checks=5, pith=(50.0, 52.0), light=0.25)),
        ("post-light-card", post, 6.0, dict(ground="light card", checks=3, pith=(48.0, 55.0), marks=("crayon", "chalk"))),
        ("log-grass", log_a, 2.6, dict(ground="grass", checks=4, shadow=35.0, light_from=120.0)),
        ("log-wood-chips", log_b, 3.0, dict(ground="wood chips", checks=2, tilt=7.0, tilt_axis=150.0)),
        ("log-sand-side", log_c, 2.4, dict(ground="sand", checks=3, member_length=400.0, camera_shift=(250.0, 60.0))),
        ("log-decking", log_b, 3.0, dict(ground="decking", marks=("paint",), light=0.4, light_from=300.0)),
        ("log-gravel-debarked", log_d, 2.8, dict(ground="gravel", checks=6, finish="sawn", shadow=30.0,
                                                 pith=(3.0, -4.0))),
        ("board-gravel", board_a, 4.2, dict(ground="gravel", tilt=5.0, tilt_axis=80.0)),
        ("board-decking", board_b, 3.2, dict(ground="decking", shadow=20.0, light_from=45.0)),
        ("board-grass", board_c, 3.6, dict(ground="grass", finish="sawn", checks=2, tilt=8.0)),
        ("ipe-grey-concrete", ipe, 4.6, dict(ground="concrete", finish="grey", tilt=3.0, **st)),
        ("ipe-mill-scale-gravel-side", ipe, 4.6, dict(ground="gravel", finish="mill scale", **side, **st)),
        ("ipe-bright-glints", ipe, 4.6, dict(ground="concrete", finish="bright", glints=12, light=0.3, **st)),
        ("ipe-chalk-dark-floor", ipe, 4.6, dict(ground="dark floor", finish="grey", marks=("chalk", "chalk"),
                                                tilt=6.0, **st)),
        ("heb-gravel-uneven", heb, 3.2, dict(ground="gravel", finish="rust", light=0.55, light_from=330.0, tilt=10.0,
                                             tilt_axis=45.0, **st)),
        ("heb-light-card", heb, 3.2, dict(ground="light card", finish="mill scale", marks=("crayon",), **st)),
        ("channel-rust-sand", upn, 4.2, dict(ground="sand", finish="rust", shadow=25.0, light_from=160.0, **st)),
        ("channel-shadow-side", upn, 4.2, dict(ground="concrete", finish="grey", shadow=45.0, light_from=180.0,
                                                light=0.3, **st)),
        ("channel-decking-side", upn, 4.2, dict(ground="decking", finish="painted", **side, **st)),
        ("angle-grass", ang, 4.2, dict(ground="grass", finish="rust", tilt=4.0, **st)),
        ("angle-grey-concrete-tilt", ang, 4.2, dict(ground="concrete", finish="grey", tilt=9.0, tilt_axis=130.0,
                                                    glints=5, **st)),
        ("angle-equal-wood-chips", eq, 5.0, dict(ground="wood chips", finish="mill scale", shadow=30.0, **st)),
        ("tee-decking", tsec, 4.2, dict(ground="decking", finish="mill scale", light=0.35, **st)),
        ("tee-paint-concrete", tsec, 4.2, dict(ground="concrete", finish="painted", marks=("paint",), **st)),
        ("tube-sand", chs, 5.4, dict(ground="sand", finish="grey", tilt=5.0, **st)),
        ("tube-concrete-glints", chs, 5.4, dict(ground="concrete", finish="bright", glints=9, shadow=20.0, **st)),
        ("tube-grass-painted", big, 3.8, dict(ground="grass", finish="painted", light=0.3, **st)),
        ("tube-gravel-side", big, 3.8, dict(ground="gravel", finish="rust", **side, **st)),
        ("box-gravel-glints", rhs, 3.3, dict(ground="gravel", finish="grey", glints=8, tilt=6.0, **st)),
        ("box-wood-chips", shs, 4.2, dict(ground="wood chips", finish="rust", shadow=25.0, light_from=100.0, **st)),
        ("box-crayon-light-card", shs, 4.2, dict(ground="light card", finish="grey", marks=("crayon",), light=0.5,
                                                 **st)),
        ("bar-bright-concrete", bar, 5.0, dict(ground="concrete", finish="bright", glints=6, tilt=7.0, **st)),
        ("bar-rust-sand", bar, 5.0, dict(ground="sand", finish="rust", shadow=30.0, **st)),
        ("flat-grey-concrete", flat, 3.8, dict(ground="concrete", finish="grey", light=0.4, **st)),
        ("pitted-ipe-gravel", pitted_ipe, 5.2, dict(ground="gravel", finish="rust", tilt=4.0, **st)),
        ("pitted-channel-concrete", pitted_upn, 5.8, dict(ground="concrete", finish="mill scale", glints=4, **st)),
        ("pitted-angle-grass", pitted_ang, 4.2, dict(ground="grass", finish="rust", shadow=25.0, **st)),
        ("pitted-tube-decking", pitted_chs, 5.4, dict(ground="decking", finish="rust", light=0.35, tilt=6.0, **st)),
    ]
    out = []
    for i, (name, member, ppm, kw) in enumerate(specs):
        sec, wood = member if isinstance(member, tuple) else (member, None)
        wood = None if wood is sec else wood                  # no bark: no wood under it to draw
        x0, y0, x1, y1 = sec.bounds
        dx, dy = -x0, -(y0 + y1) / 2                          # left edge at x = 0, middle at y = 0
        if "pith" in kw:                                      # given in the member's own frame
            kw = dict(kw, pith=(kw["pith"][0] + dx, kw["pith"][1] + dy))
        # The target's paper ends 25 mm left of the member, its middle level with the member's.
        at = (-25.0 - (9 + 0.6) * 15.0, -(6 - 1) / 2 * 15.0)
        scene = Scene(section=sec.translated(dx, dy), under_bark=None if wood is None else wood.translated(dx, dy),
                      target=(9, 6, 15.0), target_at=at, px_per_mm=ppm, margin=35.0, blur=0.9, noise=2.5,
                      seed=1000 + i, jpeg=90, **kw)
        out.append((name, scene))
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
