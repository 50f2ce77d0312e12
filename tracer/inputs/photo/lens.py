"""Lens profiles: a camera's intrinsic matrix and distortion, built from photos of a checkerboard.

A profile is made once per camera and lens setting (`tracer calibrate`) and given to every
measurement made with it (`--lens FILE`). Points found in a photo (the target's corners, the
traced boundary, clicked scale points) are undistorted before they are mapped to the mm plane;
the image itself is never resampled.

The profile file (JSON, schema ``tracer/lens/1``) records the image size it was made at, the
camera matrix and the distortion coefficients in OpenCV's model (k1, k2, p1, p2, k3), the RMS
reprojection error of the calibration, and the photos it was made from.

References
----------
.. [1] Z. Zhang, "A flexible new technique for camera calibration," *IEEE Trans. Pattern
       Analysis and Machine Intelligence* 22(11), 1330-1334, 2000. doi: 10.1109/34.888718.
.. [2] OpenCV, *Camera Calibration and 3D Reconstruction* (calib3d module): the distortion
       model and ``calibrateCamera``.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

import numpy as np

from ...errors import InputError, MeasurementError

__all__ = ["LensProfile", "read_profile", "profile_json", "calibrate", "CalibrationView", "MIN_VIEWS",
           "undistort_points"]

SCHEMA = "tracer/lens/1"
#: Fewest photos of the board a calibration accepts.
MIN_VIEWS = 3
# A calibration whose reprojection error exceeds this [px] is refused: the corners were not
# found where the model puts them (a bent board, motion blur, a zoom changed between photos).
_POOR_RMS = 1.5


@dataclass(frozen=True)
class LensProfile:
    """A camera's intrinsics and distortion, at the image size they were found at.

    Attributes
    ----------
    camera_matrix : ndarray (3, 3)
        fx, fy, cx, cy in pixels of an image of `image_size`.
    distortion : ndarray (5,)
        k1, k2, p1, p2, k3 (OpenCV's model).
    image_size : (width, height)
    rms_px : float
        RMS reprojection error of the calibration [px].
    name : str
    record : dict
        Provenance (photos, board, tool version).
    """

    camera_matrix: np.ndarray
    distortion: np.ndarray
    image_size: tuple[int, int]
    rms_px: float
    name: str = ""
    record: dict | None = None

    def for_image(self, width: int, height: int) -> "LensProfile":
        """The profile for a photo of `width` x `height` px: the same, or scaled for a resized copy.

        Raises
        ------
        InputError
            A photo of another shape (turned, cropped) than the profile was made for.
        """
        w0, h0 = self.image_size
        if (width, height) == (w0, h0):
            return self
        f = width / w0
        if abs(height / h0 - f) > 2e-3 * max(1.0, f):
            turned = " (turned: the profile is for the camera held the other way)" if (width, height) == (h0, w0) else ""
            raise InputError(f"the lens profile {self.name or ''} is for {w0} x {h0} px photos; this one is "
                             f"{width} x {height}{turned}; use the camera's own uncropped photos or make a profile "
                             "for this size with tracer calibrate")
        K = self.camera_matrix.copy()
        K[:2] *= f
        K[0, 2] = (self.camera_matrix[0, 2] + 0.5) * f - 0.5
        K[1, 2] = (self.camera_matrix[1, 2] + 0.5) * f - 0.5
        return LensProfile(K, self.distortion, (width, height), self.rms_px * f, self.name, self.record)

    def undistort(self, px: np.ndarray) -> np.ndarray:
        """Pixel points (N, 2) as seen -> where a distortion-free lens would have put them."""
        if len(px) == 0:
            return np.zeros((0, 2))
        return undistort_points(px, self.camera_matrix, self.distortion)

    def distort(self, px: np.ndarray) -> np.ndarray:
        """The inverse of :meth:`undistort`: ideal pixel points -> where the lens puts them."""
        import cv2

        if len(px) == 0:
            return np.zeros((0, 2))
        K = self.camera_matrix
        xn = (np.asarray(px, dtype=np.float64) - K[:2, 2]) / np.diag(K)[:2]
        obj = np.column_stack([xn, np.ones(len(xn))]).reshape(-1, 1, 3)
        out, _ = cv2.projectPoints(obj, np.zeros(3), np.zeros(3), K, self.distortion)
        return out.reshape(-1, 2).astype(np.float64)

    def max_shift_px(self) -> float:
        """The largest distance a pixel moves when undistorted (at the image's corners and edges)."""
        w, h = self.image_size
        xs, ys = np.linspace(0, w - 1, 9), np.linspace(0, h - 1, 7)
        border = np.concatenate([np.column_stack([xs, np.zeros(9)]), np.column_stack([xs, np.full(9, h - 1.0)]),
                                 np.column_stack([np.zeros(7), ys]), np.column_stack([np.full(7, w - 1.0), ys])])
        return float(np.max(np.hypot(*(self.undistort(border) - border).T)))


def undistort_points(px: np.ndarray, K: np.ndarray, dist: np.ndarray) -> np.ndarray:
    """Seen pixel points (N, 2) -> ideal ones, by OpenCV's iterative inversion of the model,
    iterated to convergence (OpenCV's default stops after 5 steps, short at strong distortion)."""
    import cv2

    pts = np.ascontiguousarray(px, dtype=np.float64).reshape(-1, 1, 2)
    crit = (cv2.TERM_CRITERIA_COUNT | cv2.TERM_CRITERIA_EPS, 50, 1e-10)
    if hasattr(cv2, "undistortPointsIter"):                  # OpenCV 4
        out = cv2.undistortPointsIter(pts, K, dist, None, K, crit)
    else:                                                    # OpenCV 5 takes the criteria directly
        out = cv2.undistortPoints(pts, K, dist, R=None, P=K, criteria=crit)
    return out.reshape(-1, 2).astype(np.float64)


@dataclass(frozen=True)
class CalibrationView:
    """One photo of the board: where its corners were found, and how well the model fits them."""

    path: str
    found: bool
    rms_px: float = math.nan


def read_profile(path: str | Path) -> LensProfile:
    """Read a lens profile written by :func:`profile_json`.

    Raises
    ------
    InputError
        Not a readable profile; the message says which field.
    """
    p = Path(path)
    try:
        doc = json.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"--lens {p}: no such file") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as e:
        raise InputError(f"--lens {p}: not a lens profile ({e}); make one with tracer calibrate") from None
    if not isinstance(doc, dict) or doc.get("schema") != SCHEMA:
        raise InputError(f"--lens {p}: not a lens profile (schema {SCHEMA} expected); make one with tracer calibrate")
    try:
        K = np.array(doc["camera_matrix"], dtype=np.float64)
        d = np.array(doc["distortion"], dtype=np.float64).ravel()
        size = tuple(int(v) for v in doc["image_size"])
        rms = float(doc["rms_px"])
    except (KeyError, TypeError, ValueError) as e:
        raise InputError(f"--lens {p}: field {e} is missing or not a number") from None
    if K.shape != (3, 3) or d.size not in (4, 5, 8) or len(size) != 2 or not np.isfinite(K).all() \
            or not np.isfinite(d).all() or K[0, 0] <= 0 or K[1, 1] <= 0:
        raise InputError(f"--lens {p}: camera_matrix must be 3 x 3 with positive focal lengths and distortion "
                         "4, 5 or 8 numbers")
    return LensProfile(K, d, (size[0], size[1]), rms, name=p.name, record=doc)


def profile_json(profile: LensProfile) -> str:
    """The profile as the JSON text :func:`read_profile` reads."""
    from ..._version import __version__

    doc: dict[str, Any] = {
        "schema": SCHEMA,
        "tool": {"name": "tracer", "version": __version__},
        "image_size": list(profile.image_size),
        "camera_matrix": profile.camera_matrix.tolist(),
        "distortion": profile.distortion.tolist(),
        "rms_px": profile.rms_px,
    }
    doc.update({k: v for k, v in (profile.record or {}).items() if k not in doc})
    return json.dumps(doc, indent=2) + "\n"


def calibrate(paths: Sequence[str | Path], cols: int, rows: int, square: float) -> tuple[LensProfile, list[CalibrationView]]:
    """Build a lens profile from photos of a flat checkerboard seen at several angles ([1], [2]).

    Parameters
    ----------
    paths : photos of the same camera and lens setting, all of one size; the board tilted
        differently in each (20 to 40 degrees), filling a good part of the frame.
    cols, rows : inner corners across and down.
    square : square size [mm] (it sets nothing in the profile but the board's shape).

    Returns
    -------
    profile : LensProfile
    views : list of CalibrationView, one per photo (those where the board was not found too)

    Raises
    ------
    MeasurementError
        Fewer than :data:`MIN_VIEWS` photos with the board found, or a fit too poor to trust.
    InputError
        Photos of different sizes, or unreadable files.
    """
    import cv2

    from .load import load_photo
    from .scale import find_corners, to_8bit

    size = None
    found_px, found_paths, views = [], [], []
    j, i = np.divmod(np.arange(cols * rows), cols)
    board = np.column_stack([i * square, j * square, np.zeros(cols * rows)]).astype(np.float32)
    for path in paths:
        photo = load_photo(path)
        h, w = photo.shape
        if size is None:
            size = (w, h)
        elif (w, h) != size:
            raise InputError(f"{path}: {w} x {h} px, but the first photo is {size[0]} x {size[1]}; a profile is for "
                             "one camera at one image size")
        c = find_corners(to_8bit(photo.levels), cols, rows)
        views.append(CalibrationView(str(path), c is not None))
        if c is not None:
            found_px.append(c.astype(np.float32).reshape(-1, 1, 2))
            found_paths.append(str(path))
    if len(found_px) < MIN_VIEWS:
        missing = [v.path for v in views if not v.found]
        raise MeasurementError(f"the {cols}x{rows} board was found in {len(found_px)} of {len(views)} photos; "
                               f"a profile needs at least {MIN_VIEWS}"
                               + (f" (not found in: {', '.join(Path(m).name for m in missing)})" if missing else ""))
    assert size is not None
    # k3 stays zero: with the board in a few places the sixth-order term fits noise and throws
    # the model far off beyond the corners seen (common practice for ordinary phone lenses).
    flags = cv2.CALIB_FIX_K3
    rms, K, dist, rvecs, tvecs = cv2.calibrateCamera([board] * len(found_px), found_px, size, None, None,
                                                     flags=flags)
    per_view = {}
    for path, obs, rv, tv in zip(found_paths, found_px, rvecs, tvecs):
        proj, _ = cv2.projectPoints(board, rv, tv, K, dist)
        per_view[path] = float(np.sqrt(np.mean(np.sum((proj - obs).reshape(-1, 2) ** 2, axis=1))))
    views = [CalibrationView(v.path, v.found, per_view.get(v.path, math.nan)) for v in views]
    if rms > _POOR_RMS:
        worst = max(per_view, key=per_view.get)
        raise MeasurementError(f"the calibration fits poorly: {rms:.2f} px RMS reprojection error (worst "
                               f"{Path(worst).name}, {per_view[worst]:.2f} px); was the board flat and the zoom the "
                               "same in every photo?")
    hull = cv2.convexHull(np.concatenate(found_px).reshape(-1, 2)).reshape(-1, 2)
    coverage = float(cv2.contourArea(hull)) / (size[0] * size[1])
    record = {"board": {"inner_corners": [cols, rows], "square_mm": square},
              "covered_px": hull.astype(float).round(1).tolist(), "covered_share": coverage,
              "photos": [{"path": Path(v.path).name, "board_found": v.found,
                          **({"rms_px": v.rms_px} if v.found else {})} for v in views]}
    profile = LensProfile(np.asarray(K, dtype=np.float64), np.asarray(dist, dtype=np.float64).ravel(), size,
                          float(rms), record=record)
    return profile, views
