"""From image pixels to the millimetre plane of the cut face, with the uncertainty of the map.

Every method gives a :class:`PlaneMap`: a homography from pixels (column x right, row y down, as
image viewers show) to the section's mm plane (x right, y up), the error-model components its
uncertainty adds, and a record for the result's ``source.scale``.

- a printed checkerboard (``--target CxR:SIZE``): inner corners found to sub-pixel accuracy, a
  least-squares homography (perspective removed), its covariance from the corner residuals;
- two image points a known distance apart (``--scale``): a similarity, with an allowance for an
  unknown tilt (a one-sided cosine error) and for where the points were clicked;
- a scanner's resolution (``--dpi``);
- a ruler in view (``--ruler``), read by :mod:`tracer.inputs.photo.ruler_read`: a similarity with
  the local period of its graduation where the member lies, the fit's and the rule's own tolerance,
  and the allowances for the tilt across it.

With a lens profile (:mod:`tracer.inputs.photo.lens`) the map first undistorts the points it is given,
so H acts on ideal (distortion-free) pixel positions; points are never moved otherwise.

References
----------
.. [1] R. Hartley and A. Zisserman, *Multiple View Geometry in Computer Vision*, 2nd ed.
       Cambridge University Press, 2004, ch. 4 and 5 (DLT, covariance of the estimated H).
       doi: 10.1017/CBO9780511811685.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ...errors import InputError, MeasurementError
from ...uncertainty import HomographyError, ScaleError, TiltAllowance
from ...units import parse_length

__all__ = ["PlaneMap", "parse_target", "parse_two_points", "map_from_target", "map_from_points",
           "map_from_dpi", "map_from_ruler", "map_from_two_rulers", "find_corners", "LENS_ALLOWANCE", "DEFAULT_MAX_TILT"]

#: Rectangular allowance on the scale where no lens profile corrects distortion (relative).
LENS_ALLOWANCE = 0.003
#: Assumed bound of the camera's tilt to the face when no target removes perspective [deg].
DEFAULT_MAX_TILT = 5.0
# A target fit whose corner residuals exceed this share of a square is refused.
_POOR_FIT = 0.02
# The thorough look for a checkerboard is made on a reduced copy whose long side is at least
# this [px]; corners are then refined on the full image.
_DETECT_PX = 1100.0
# Long side of the copy the quick first look for a checkerboard is made on [px].
_QUICK_PX = 1000.0
# Standard uncertainty of a point read off an image by a person [px].
_CLICK_U = 0.5
# Relative standard uncertainty of a flatbed scanner's stated resolution (common practice).
_SCANNER_U = 0.001


@dataclass(frozen=True)
class PlaneMap:
    """Pixels -> mm plane.

    Attributes
    ----------
    H : ndarray (3, 3)
        Maps (column, row, 1) to the mm plane (x, y up), normalised H[2, 2] = 1.
    components : tuple
        Error-model components of the map.
    record : dict
        For ``source.scale`` in the result JSON.
    keep_out : list of ndarray
        Image polygons (px) that are scale references, never the member.
    marks : ndarray
        Points to draw on the review picture (target corners, clicked points) [px].
    warnings : tuple of str
    lens : LensProfile or None
        Undistorts pixel points before H; None: pixels are taken as a distortion-free lens's.
    """

    H: np.ndarray
    components: tuple
    record: dict[str, Any]
    keep_out: list = field(default_factory=list)
    marks: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))
    warnings: tuple[str, ...] = ()
    lens: Any = None

    def to_mm(self, px: np.ndarray) -> np.ndarray:
        """Map (N, 2) pixel points, as seen in the photo, to mm."""
        if self.lens is not None:
            px = self.lens.undistort(px)
        q = np.column_stack([px, np.ones(len(px))]) @ self.H.T
        return q[:, :2] / q[:, 2:]

    def to_px(self, mm: np.ndarray) -> np.ndarray:
        """Map (N, 2) mm points back to pixels, as seen in the photo."""
        Hi = np.linalg.inv(self.H)
        q = np.column_stack([mm, np.ones(len(mm))]) @ Hi.T
        px = q[:, :2] / q[:, 2:]
        return self.lens.distort(px) if self.lens is not None else px

    def mm_per_px(self, at_px: np.ndarray) -> float:
        """Local linear scale at a pixel position [mm per px] (square root of the Jacobian)."""
        e = 0.5
        p = np.array([at_px, at_px + (e, 0.0), at_px + (0.0, e)])
        q = self.to_mm(p)
        J = np.column_stack([(q[1] - q[0]) / e, (q[2] - q[0]) / e])
        return math.sqrt(abs(np.linalg.det(J)))


def parse_target(text: str) -> tuple[int, int, float]:
    """``6x4:10mm`` -> (6, 4, 10.0): inner corners across and down, square size [mm]."""
    m = re.fullmatch(r"\s*(\d+)\s*[xX]\s*(\d+)\s*:\s*(.+)", text or "")
    if not m:
        raise InputError(f"--target {text!r}: write inner corners and square size, e.g. 6x4:10mm")
    cols, rows = int(m.group(1)), int(m.group(2))
    if cols < 2 or rows < 2:
        raise InputError(f"--target {text!r}: a checkerboard needs at least 2 x 2 inner corners")
    return cols, rows, parse_length(m.group(3), field="--target square size")


def parse_two_points(text: str) -> tuple[np.ndarray, float]:
    """``X1,Y1,X2,Y2=LENGTH`` -> (points (2, 2) [px], length [mm])."""
    m = re.fullmatch(r"\s*([^=]+)=(.+)", text or "")
    try:
        if not m:
            raise ValueError
        xy = [float(v) for v in m.group(1).split(",")]
        if len(xy) != 4:
            raise ValueError
    except ValueError:
        raise InputError(f"--scale {text!r}: write two pixel positions and their distance, "
                         "e.g. 120,80,1620,95=100mm") from None
    pts = np.array(xy).reshape(2, 2)
    if np.hypot(*(pts[1] - pts[0])) < 10:
        raise InputError(f"--scale {text!r}: the two points are less than 10 px apart")
    return pts, parse_length(m.group(2), field="--scale length")


def map_from_target(gray: np.ndarray, cols: int, rows: int, square: float, *, lens: Any = None) -> PlaneMap:
    """Find a checkerboard of `cols` x `rows` inner corners and fit the plane's homography.

    With a `lens` profile the corners are undistorted before the fit.

    Raises
    ------
    MeasurementError
        No such checkerboard in view, or a fit too poor to trust (its residual is given).
    """
    seen = find_corners(to_8bit(gray), cols, rows)
    if seen is None:
        raise MeasurementError(f"no {cols}x{rows} checkerboard target found; --target counts the inner corners "
                               "(where four squares meet), across then down; check the count and that the "
                               "whole target is in view")
    corners = lens.undistort(seen) if lens is not None else seen
    j, i = np.divmod(np.arange(cols * rows), cols)
    ideal = np.column_stack([i * square, j * square]).astype(np.float64)
    H = _fit(corners, ideal)
    # Keep the mm frame right-handed as the image is seen (x right, y up): never a mirror image.
    if _handedness(H, corners.mean(axis=0)) < 0:
        ideal[:, 1] *= -1
        H = _fit(corners, ideal)
    res = _project(H, corners) - ideal
    n = len(corners)
    rms = float(np.sqrt(np.mean(np.sum(res**2, axis=1))))
    if rms > _POOR_FIT * square:
        raise MeasurementError(f"the target fit is poor: corner residual {rms:.3g} mm RMS against {square:g} mm "
                               "squares; is the target flat and in the plane of the cut face?")
    cov = _homography_covariance(H, corners, res, dof=2 * n - 8)
    # The printed sheet around the squares is a reference, never the member.
    margin = 1.7 * square
    sign = 1.0 if ideal[-1, 1] >= 0 else -1.0
    box = np.array([[-margin, -sign * margin], [(cols - 1) * square + margin, -sign * margin],
                    [(cols - 1) * square + margin, sign * ((rows - 1) * square + margin)],
                    [-margin, sign * ((rows - 1) * square + margin)]])
    Hi = np.linalg.inv(H)
    q = np.column_stack([box, np.ones(4)]) @ Hi.T
    keep_out = [q[:, :2] / q[:, 2:]]
    if lens is not None:
        keep_out = [lens.distort(keep_out[0])]
    record = {"method": "target", "inner_corners": [cols, rows], "square_mm": square,
              "corner_residual_mm_rms": rms, "corners_found": n}
    return PlaneMap(H=H, components=(HomographyError(H, cov, label="target fit"),), record=record,
                    keep_out=keep_out, marks=seen, lens=lens)


def map_from_points(points: np.ndarray, length: float, *, max_tilt: float = DEFAULT_MAX_TILT,
                    lens: Any = None) -> PlaneMap:
    """A similarity from two image points `length` [mm] apart; no perspective correction.

    The uncertainty carries the click precision (0.5 px per coordinate), and a one-sided
    allowance for an unknown tilt of up to `max_tilt` degrees.
    """
    ideal = lens.undistort(points) if lens is not None else points
    d = float(np.hypot(*(ideal[1] - ideal[0])))
    s = length / d
    H = np.array([[s, 0.0, 0.0], [0.0, -s, 0.0], [0.0, 0.0, 1.0]])   # y up: the one flip
    u_rel = math.sqrt(2.0) * _CLICK_U / d
    comps = (ScaleError(u_rel, label="scale points"), TiltAllowance(max_tilt))
    record = {"method": "two points", "points_px": points.tolist(), "length_mm": length,
              "mm_per_px": s, "assumed_max_tilt_deg": max_tilt}
    warn = (f"no perspective correction: an unknown tilt of up to {max_tilt:g} deg is allowed for "
            "(--max-tilt changes it); a target removes it",)
    return PlaneMap(H=H, components=comps, record=record, marks=points, warnings=warn, lens=lens)


def map_from_ruler(reading: Any, pitch: float, *, at_px: np.ndarray | None = None, max_tilt: float = DEFAULT_MAX_TILT,
                   ruler_class: str = "II", lens: Any = None) -> PlaneMap:
    """A similarity from a ruler's graduation: `pitch` [mm] per tick at the local period where
    the member lies (`at_px`, projected on the ruler's axis; default the ruler's middle).

    The uncertainty carries the period fit (the projective model's covariance), the rule's own
    graduation tolerance (`ruler_class`, rectangular), and the one-sided allowance for an
    unknown tilt across the ruler of up to `max_tilt` degrees. The reading is of ideal pixels
    where a lens profile undistorted the image points first (its caller's concern). Where a
    coarser graduation was read (the finest marks lost in blur; `reading` numbered in the finest
    one), the fit is of those fewer marks, and its covariance says so; the record names the
    graduation read (``graduation_read_mm``) and a warning says the finest marks were lost.
    """
    from .graduation import graduation_note
    from .ruler import ruler_tolerance

    s0, s1 = reading.extent
    s_at = 0.5 * (s0 + s1) if at_px is None else reading.along(at_px)
    T, uT = reading.period_at(s_at)
    s = pitch / T
    H = np.array([[s, 0.0, 0.0], [0.0, -s, 0.0], [0.0, 0.0, 1.0]])
    used = (s1 - s0) / T * pitch                                   # graduated length read [mm]
    tol = ruler_tolerance(pitch, used, ruler_class)
    comps = (ScaleError(uT / T, label="ruler period fit"),
             ScaleError(tol / math.sqrt(3.0), distribution="rectangular", label=f"ruler graduation (class {ruler_class})"),
             TiltAllowance(max_tilt))
    ref = reading.origin + s_at * reading.direction
    graduation, notes = graduation_note(reading, pitch)
    record = {"method": "ruler", **reading.record(), "pitch_mm": pitch, **graduation, "period_px": T,
              "period_fit_u_percent": 100 * uT / T, "mm_per_px": s, "scale_taken_at_px": ref.round(1).tolist(),
              "class": ruler_class, "graduation_tolerance_percent": 100 * tol, "assumed_max_tilt_deg": max_tilt}
    warn = notes + [f"a ruler fixes the scale along its own direction only: an unknown tilt of up to {max_tilt:g} deg "
                    "across it is allowed for (--max-tilt changes it); a target, or a second ruler square to the "
                    "first, removes it"]
    span = s1 - s0
    if s_at < s0 - 0.25 * span or s_at > s1 + 0.25 * span:
        warn.append("the member lies beyond the end of the ruler's graduation; the scale there is extrapolated "
                    "(put the ruler alongside the member)")
    return PlaneMap(H=H, components=comps, record=record, keep_out=[reading.strip], marks=reading.ticks_px,
                    warnings=tuple(warn), lens=lens)


def map_from_two_rulers(r1: Any, r2: Any, pitch: float, *, ruler_class: str = "II", square_deg: float = 1.0,
                        draws: int = 400, seed: int = 20261202) -> PlaneMap:
    """A homography from two rulers lying square to each other in the face (a framing square, or
    two rules laid square): perspective removed, as with a target.

    The homography's covariance comes from Monte Carlo draws of both rulers' fitted parameters and
    of their angle, uniform within ±`square_deg` of a right angle; the rules' own graduation
    tolerance is added as a scale allowance.
    """
    from .graduation import graduation_note
    from .ruler import ruler_tolerance, two_ruler_homography

    H = two_ruler_homography(r1, r2, pitch)
    rng = np.random.default_rng(seed)
    samples = []
    for _ in range(draws):
        p1 = rng.multivariate_normal(r1.params, r1.cov, method="eigh")
        p2 = rng.multivariate_normal(r2.params, r2.cov, method="eigh")
        try:
            samples.append(two_ruler_homography(r1, r2, pitch, angle_deg=90.0 + rng.uniform(-square_deg, square_deg),
                                                p1=p1, p2=p2).ravel()[:8])
        except MeasurementError:
            continue
    cov = np.cov(np.array(samples).T)
    used = min((r.extent[1] - r.extent[0]) / r.period_at(0.5 * sum(r.extent))[0] * pitch for r in (r1, r2))
    tol = ruler_tolerance(pitch, used, ruler_class)
    comps = (HomographyError(H, cov, label="two rulers (fit, squareness)"),
             ScaleError(tol / math.sqrt(3.0), distribution="rectangular", label=f"ruler graduation (class {ruler_class})"))
    notes = [graduation_note(r, pitch) for r in (r1, r2)]
    record = {"method": "two rulers", "rulers": [{**r.record(), **note[0]} for r, note in zip((r1, r2), notes)],
              "pitch_mm": pitch, "class": ruler_class, "graduation_tolerance_percent": 100 * tol,
              "assumed_square_within_deg": square_deg}
    warn = tuple(w for note in notes for w in note[1]) + (
        f"two rulers found, taken as square to each other on the face (within ±{square_deg:g} deg): perspective "
        "removed from both; lay them square (a framing square is best)",)
    return PlaneMap(H=H, components=comps, record=record, keep_out=[r1.strip, r2.strip],
                    marks=np.vstack([r1.ticks_px, r2.ticks_px]), warnings=warn)


def map_from_dpi(dpi: float, *, stated: str) -> PlaneMap:
    """A scan at `dpi` dots per inch (1 in = 25.4 mm)."""
    s = 25.4 / dpi
    H = np.array([[s, 0.0, 0.0], [0.0, -s, 0.0], [0.0, 0.0, 1.0]])
    record = {"method": "dpi", "dpi": dpi, "from": stated, "mm_per_px": s}
    return PlaneMap(H=H, components=(ScaleError(_SCANNER_U, label="scanner resolution"),), record=record)


# ---------------------------------------------------------------------------------------------
def to_8bit(gray: np.ndarray) -> np.ndarray:
    """Grey levels as uint8 (the detectors' input): 8-bit images as they are, 0..1 floats scaled."""
    if gray.dtype == np.uint8:
        return gray
    return np.clip(gray * 255.0 + 0.5, 0, 255).astype(np.uint8)


def find_corners(img8: np.ndarray, cols: int, rows: int) -> np.ndarray | None:
    """Inner corners (N, 2) [px] of a `cols` x `rows` checkerboard in an 8-bit grey image, row by
    row, or None; detected on a reduced copy, refined at full size.

    The quadrilateral detector [2]_ runs first (a few milliseconds where the board is sharp and
    has its white margin); where it fails, the slower sector-based detector [3]_, quick search
    then exhaustive. Either way the corners' accuracy comes from the refinement at full size.

    References
    ----------
    .. [2] OpenCV, ``cv::findChessboardCorners`` (calib3d module documentation).
    .. [3] P. Duda and U. Frese, "Accurate detection and localization of checkerboard corners for
           calibration," *BMVC* 2018.
    """
    import cv2

    h, w = img8.shape
    quad = cv2.CALIB_CB_ADAPTIVE_THRESH | cv2.CALIB_CB_NORMALIZE_IMAGE | cv2.CALIB_CB_FAST_CHECK
    # The quick look on a copy of at most _QUICK_PX; the thorough ones on one of at least
    # _DETECT_PX (whole k x k blocks averaged: the fast exact reduction).
    ok = False
    tried = set()
    for k, thorough in ((int(np.ceil(max(h, w) / _QUICK_PX)), False), (max(1, int(max(h, w) // _DETECT_PX)), True)):
        small = cv2.resize(img8[:h // k * k, :w // k * k], (w // k, h // k), interpolation=cv2.INTER_AREA) if k > 1 else img8
        if k not in tried:
            tried.add(k)
            ok, c = cv2.findChessboardCorners(small, (cols, rows), flags=quad)
            ok = ok and _regular(c.reshape(-1, 2), cols, rows)   # a misordered grid: look again
        if not ok and thorough:
            ok, c = cv2.findChessboardCornersSB(small, (cols, rows), flags=cv2.CALIB_CB_NORMALIZE_IMAGE)
        if not ok and thorough:
            flags = cv2.CALIB_CB_NORMALIZE_IMAGE | cv2.CALIB_CB_EXHAUSTIVE | cv2.CALIB_CB_ACCURACY
            ok, c = cv2.findChessboardCornersSB(small, (cols, rows), flags=flags)
        if ok:
            break
    if not ok:
        return None
    f = 1.0 / k
    c = (c.reshape(-1, 2).astype(np.float64) + 0.5) / f - 0.5
    step = np.median(np.hypot(*np.diff(c[:cols], axis=0).T))
    win = max(3, int(0.2 * step))
    crit = (cv2.TERM_CRITERIA_EPS + cv2.TERM_CRITERIA_MAX_ITER, 50, 1e-3)
    c = cv2.cornerSubPix(img8, c.astype(np.float32).reshape(-1, 1, 2), (win, win), (-1, -1), crit)
    return c.reshape(-1, 2).astype(np.float64)


def _regular(c: np.ndarray, cols: int, rows: int) -> bool:
    """The corners run as a grid: along each row and down each column, consecutive steps of
    alike direction and length (a perspective changes them slowly)."""
    g = c.reshape(rows, cols, 2)
    for d in (np.diff(g, axis=1).reshape(-1, 2), np.diff(g, axis=0).reshape(-1, 2)):
        n = np.hypot(*d.T)
        if n.min() <= 0.5 * np.median(n) or n.max() >= 2.0 * np.median(n):
            return False
        u = d / n[:, None]
        if (u @ np.median(u, axis=0)).min() < 0.9 * np.linalg.norm(np.median(u, axis=0)):
            return False
    return True


def _fit(px: np.ndarray, mm: np.ndarray) -> np.ndarray:
    """Least-squares homography px -> mm: the DLT, then Gauss-Newton steps on the mm residuals
    (the maximum-likelihood estimate when the corners' errors are alike, [1] sec. 4.2)."""
    import cv2

    H, _ = cv2.findHomography(px, mm, 0)
    if H is None:
        raise MeasurementError("the target's corners do not determine a homography")
    h = (H / H[2, 2]).ravel()[:8]
    for _ in range(20):
        r = (_project(_h(h), px) - mm).ravel()
        J = _jacobian(h, px)
        step = np.linalg.lstsq(J, -r, rcond=None)[0]
        h = h + step
        if np.max(np.abs(J @ step)) < 1e-12 * max(1.0, float(np.max(np.abs(mm)))):
            break                                   # the points moved by less than 1e-12 of the board
    return _h(h)


def _jacobian(h: np.ndarray, px: np.ndarray) -> np.ndarray:
    """d(projected mm points)/d(h) (8 columns; rows x0, y0, x1, y1, ...), by the quotient rule."""
    u, v = px[:, 0], px[:, 1]
    w = h[6] * u + h[7] * v + 1.0
    X = (h[0] * u + h[1] * v + h[2]) / w
    Y = (h[3] * u + h[4] * v + h[5]) / w
    J = np.zeros((2 * len(px), 8))
    J[0::2, 0], J[0::2, 1], J[0::2, 2] = u / w, v / w, 1.0 / w
    J[1::2, 3], J[1::2, 4], J[1::2, 5] = u / w, v / w, 1.0 / w
    J[0::2, 6], J[0::2, 7] = -X * u / w, -X * v / w
    J[1::2, 6], J[1::2, 7] = -Y * u / w, -Y * v / w
    return J


def _h(h: np.ndarray) -> np.ndarray:
    return np.append(h, 1.0).reshape(3, 3)


def _project(H: np.ndarray, px: np.ndarray) -> np.ndarray:
    q = np.column_stack([px, np.ones(len(px))]) @ H.T
    return q[:, :2] / q[:, 2:]


def _handedness(H: np.ndarray, at: np.ndarray) -> float:
    """Sign of d(mm)/d(column, -row): positive when the mm frame is not mirrored."""
    e = 1.0
    q = _project(H, np.array([at, at + (e, 0.0), at + (0.0, -e)]))
    return float(np.linalg.det(np.column_stack([q[1] - q[0], q[2] - q[0]])))


def _homography_covariance(H: np.ndarray, px: np.ndarray, res: np.ndarray, dof: int) -> np.ndarray:
    """σ² (JᵀJ)⁻¹ of the eight entries, σ² from the residuals ([1], sec. 5.2)."""
    J = _jacobian(H.ravel()[:8], px)
    sigma2 = float(np.sum(res**2)) / max(dof, 1)
    return sigma2 * np.linalg.pinv(J.T @ J)
