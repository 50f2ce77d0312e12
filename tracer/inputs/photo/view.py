"""Where the camera stood over the cut face, and whether it saw the member's side faces.

A member runs on behind its cut face, away from the camera. A side face (the plane through a
boundary edge, along the member) is in view when the camera is on its outer side: when the
foot of the camera's perpendicular on the face's plane lies beyond that edge. Its image then
lies beside the cut face and can be traced as section. The camera's position comes from the
plane map: a target's homography decomposed with the camera's intrinsics (a lens profile's, or
a focal length estimated from the homography itself [1], or assumed), or, without a
homography, a camera square to the face over the image centre.

References
----------
.. [1] R. Hartley and A. Zisserman, *Multiple View Geometry in Computer Vision*, 2nd ed.
       Cambridge University Press, 2004, sec. 8.8 (calibration from the image of the absolute
       conic; one homography of a plane with square pixels and a known principal point fixes f).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ...section.geometry import Section

__all__ = ["CameraView", "camera_view", "side_faces", "image_side", "ASSUMED_FOCAL", "SIDE_FACE_DEG"]

#: Focal length assumed when neither a lens profile nor the target's perspective tells it, as a
#: share of the photo's long side (a field of view of about 64 degrees; common practice for
#: phones and compact cameras).
ASSUMED_FOCAL = 0.8
#: Side faces seen at more than this angle [deg] are warned about.
SIDE_FACE_DEG = 2.0


@dataclass(frozen=True)
class CameraView:
    """The camera over the face's plane, in the section's mm frame.

    Attributes
    ----------
    foot : ndarray (2,)
        The foot of the perpendicular from the camera centre on the plane [mm].
    height : float
        The camera's distance from the plane [mm].
    tilt_deg : float
        Angle between the optical axis and the face's normal.
    focal_px : float
    focal_from : str
        ``"lens profile"``, ``"target perspective"`` or ``"assumed"``.
    """

    foot: np.ndarray
    height: float
    tilt_deg: float
    focal_px: float
    focal_from: str


def camera_view(H: np.ndarray, image_size: tuple[int, int], camera_matrix: np.ndarray | None = None) -> CameraView:
    """Decompose the pixels -> mm homography `H` (ideal pixels) into the camera's position.

    Parameters
    ----------
    H : (3, 3) pixels (column, row) -> mm plane (x, y up).
    image_size : (width, height) [px].
    camera_matrix : intrinsics, if a lens profile gives them.
    """
    w, h = image_size
    G = np.linalg.inv(H)                                   # mm -> pixels
    if camera_matrix is not None:
        K, source = np.asarray(camera_matrix, float), "lens profile"
    else:
        c = np.array([(w - 1) / 2, (h - 1) / 2])
        T = np.array([[1.0, 0.0, -c[0]], [0.0, 1.0, -c[1]], [0.0, 0.0, 1.0]])
        g = T @ G
        f = _focal_from_homography(g)
        long_side = max(w, h)
        if f is None or not 0.3 * long_side < f < 3.0 * long_side:
            f, source = ASSUMED_FOCAL * long_side, "assumed"
        else:
            source = "target perspective"
        K = np.array([[f, 0.0, c[0]], [0.0, f, c[1]], [0.0, 0.0, 1.0]])
    B = np.linalg.solve(K, G)
    lam = 1.0 / math.sqrt(np.linalg.norm(B[:, 0]) * np.linalg.norm(B[:, 1]))
    B = B * lam
    if B[2, 2] < 0:                                        # the plane lies in front of the camera
        B = -B
    r1, r2, t = B[:, 0], B[:, 1], B[:, 2]
    r3 = np.cross(r1, r2)
    r3 /= np.linalg.norm(r3)
    foot = np.array([-(r1 @ t) / (r1 @ r1), -(r2 @ t) / (r2 @ r2)])
    height = abs(float(r3 @ t))
    tilt = math.degrees(math.acos(min(1.0, abs(float(r3[2])))))
    return CameraView(foot=foot, height=height, tilt_deg=tilt, focal_px=float(K[0, 0]), focal_from=source)


def _focal_from_homography(g: np.ndarray) -> float | None:
    """f from the two constraints of a plane's image with square pixels, principal point at 0.

    g1ᵀ ω g2 = 0 and g1ᵀ ω g1 = g2ᵀ ω g2 with ω = diag(1/f², 1/f², 1), solved for 1/f² by least
    squares; None when the view is too near square to the plane to tell f.
    """
    a1, b1, c1 = g[:, 0]
    a2, b2, c2 = g[:, 1]
    A = np.array([a1 * a2 + b1 * b2, (a1**2 + b1**2) - (a2**2 + b2**2)])
    C = np.array([c1 * c2, c1**2 - c2**2])
    if float(A @ A) == 0.0:
        return None
    wf = -float(A @ C) / float(A @ A)
    if wf <= 0:
        return None
    f = 1.0 / math.sqrt(wf)
    # The sine of the tilt the perspective terms imply; below about 3 degrees they hardly fix f.
    if max(abs(c1) / math.hypot(a1, b1), abs(c2) / math.hypot(a2, b2)) * f < 0.05:
        return None
    return f


def side_faces(section: Section, view: CameraView) -> dict | None:
    """How much of the member's sides the camera saw, or None when it saw none worth a warning.

    Returns
    -------
    dict with ``max_angle_deg`` (the steepest side face in view), ``outline_share`` and
    ``holes_share`` (shares of the outline and of the holes' boundaries whose side faces are in
    view at more than :data:`SIDE_FACE_DEG`), and ``direction`` (a unit vector in the section's
    frame, outward from the side faces of the outline in view).
    """
    limit = math.tan(math.radians(SIDE_FACE_DEG))
    worst, shares = 0.0, {"outline": [0.0, 0.0], "holes": [0.0, 0.0]}
    direction = np.zeros(2)
    for ring, is_hole in section.rings():
        a = np.asarray(ring, float)
        b = np.roll(a, -1, axis=0)
        e = b - a
        length = np.hypot(e[:, 0], e[:, 1])
        ok = length > 0
        # Exterior rings run counter-clockwise, holes clockwise: material is on the left, so the
        # outward normal (away from material) is on the right of each edge.
        n = np.column_stack([e[:, 1], -e[:, 0]])[ok] / length[ok, None]
        m = 0.5 * (a + b)[ok]
        v = ((view.foot - m) * n).sum(axis=1) / view.height      # tan of the angle it is seen at
        seen = v > limit
        key = "holes" if is_hole else "outline"
        shares[key][0] += float(length[ok][seen].sum())
        shares[key][1] += float(length[ok].sum())
        if seen.any():
            worst = max(worst, float(v.max()))
            if not is_hole:
                direction += (n[seen] * length[ok][seen, None]).sum(axis=0)
    if worst <= limit:
        return None
    out = {"max_angle_deg": math.degrees(math.atan(worst)),
           "outline_share": shares["outline"][0] / max(shares["outline"][1], 1e-300),
           "holes_share": shares["holes"][0] / max(shares["holes"][1], 1e-300) if shares["holes"][1] else 0.0}
    if np.any(direction):
        out["direction"] = (direction / np.linalg.norm(direction)).tolist()
    return out


def image_side(direction_px: np.ndarray) -> str:
    """``left``, ``right``, ``top`` or ``bottom``: where a direction in image pixels (x right,
    y down) points, as a person looking at the photo would say."""
    ang = math.degrees(math.atan2(-float(direction_px[1]), float(direction_px[0])))
    return ("right", "top", "left", "bottom")[int(((ang + 45.0) % 360.0) // 90.0)]
