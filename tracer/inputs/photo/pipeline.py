"""A photo of the cut end to a :class:`~tracer.measurement.Measurement`: the whole chain.

load -> plane map (target, two points or DPI) -> segmentation -> sub-pixel trace -> Section,
with an ErrorModel made of what the image says about its own edges (a systematic boundary
offset and an independent, correlated scatter), the plane map's uncertainty (the target fit's
homography covariance, or the two-point and tilt allowances), and an allowance where no lens
profile corrects distortion.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ...errors import GeometryError, InputError, MeasurementError
from ...measurement import Measurement
from ...uncertainty import BoundaryOffset, ErrorModel, PointNoise, ScaleError, TiltAllowance
from ...units import parse_length
from .bark import find_bark
from .check import TraceCheck, check_hand, check_trace
from .contour import Trace, coarser_section, hand_trace, on_the_edge, trace_boundary
from .graduation import graduation_read
from .hints import make_hints
from .lens import LensProfile, read_profile
from .load import PHOTO_SUFFIXES, Photo, load_photo
from .ruler import MIN_TICKS, RulerReading
from .scale import (DEFAULT_MAX_TILT, LENS_ALLOWANCE, PlaneMap, map_from_dpi, map_from_points, map_from_ruler,
                    map_from_target, map_from_two_rulers, parse_target, parse_two_points)
from .segment import Segmentation, segment_member, segment_outline
from .sidecar import parse_trace
from .tone import to_light
from .view import camera_view, image_side, side_faces

__all__ = ["PhotoMeasurement", "TraceNeedsReview", "measure_photo", "PHOTO_SUFFIXES", "DEFAULT_TEXTURE_MM"]

#: Cracks, checks and specks narrower than this are texture, not edges [mm].
DEFAULT_TEXTURE_MM = 2.0
# Differences between the pixel and contour moments beyond this many times their expected size
# (half a pixel all round) are reported.
_CHECK_FACTOR = 3.0
# The Monte Carlo draws perturb a copy of the trace simplified within this many pixels (the
# trace itself: 0.1 px); the reported u is the linear one, checked by the draws.
_MC_SIMPLIFY_PX = 0.5
# The allowance of a boundary placed by hand [px]: a person clicking on a zoomed photo puts a point
# within about half a pixel of the edge they see (common practice).
_HAND_PX = 0.5
# A hand boundary is on the photo's edge where a clean step lies within this many times its
# allowance (at least this many px) of it.
_ON_EDGE_TIMES = 3.0
_ON_EDGE_LEAST_PX = 2.0


@dataclass(frozen=True)
class PhotoMeasurement:
    """The measurement and what it was made from, for the review picture."""

    measurement: Measurement
    photo: Photo
    plane: PlaneMap
    segmentation: Segmentation | None
    trace: Trace
    check: TraceCheck | None = None


class TraceNeedsReview(MeasurementError):
    """The trace check asks for review (exit status 1); `photo_measurement` holds what was
    traced, for the review picture."""

    def __init__(self, message: str, photo_measurement: PhotoMeasurement) -> None:
        super().__init__(message)
        self.photo_measurement = photo_measurement


def measure_photo(path: str | Path, *, target: str | None = None, scale: str | None = None,
                  dpi: float | None = None, known: str | None = None, seed=None, outside=None, box=None,
                  max_tilt: float = DEFAULT_MAX_TILT, texture: str | None = None,
                  name: str | None = None, lens: "str | Path | LensProfile | None" = None,
                  ruler: str | None = None, pitch: str | None = None, ruler_class: str = "II",
                  under_bark: bool = False, trace: dict | None = None, accept_trace: bool = False,
                  loaded: Photo | None = None) -> PhotoMeasurement:
    """Measure the member in the photo at `path`.

    Parameters
    ----------
    path : str or Path
    target : str, optional
        ``CxR:SIZE``, a checkerboard of C x R inner corners of SIZE squares in the face's plane.
    scale : str, optional
        ``X1,Y1,X2,Y2=LENGTH``, two image points a known distance apart.
    dpi : float, optional
        The scan's resolution (else the file's own DPI, if no other scale is given).
    known : str, optional
        ``depth=LENGTH`` or ``width=LENGTH``: one caliper reading of the member's overall depth
        (image up-down) or width (image across). Alone it sets the scale; with a target it is a
        cross-check, reported in per cent.
    seed, outside : str or list, optional
        Points on the member and on the ground: ``X,Y`` texts or [x, y] pairs [px]
        (:mod:`tracer.inputs.photo.hints`).
    box : str or list, optional
        ``X0,Y0,X1,Y1``, a rough box round the face [px].
    max_tilt : float
        Assumed bound of the tilt [deg] without a target.
    texture : str, optional
        Texture size with unit (default 2mm): narrower cracks and specks are ignored.
    name : str, optional
        The member's name (default: the file's stem).
    lens : path or LensProfile, optional
        The camera's lens profile (``tracer calibrate``): points are undistorted before they are
        mapped, and its residual replaces the allowance for an uncorrected lens.
    ruler : str, optional
        ``auto`` (find a ruler in view) or ``X1,Y1,X2,Y2`` (a rough line along it) [px].
    pitch : str, optional
        The ruler's graduation (default 1mm; also 1/16in, 1/32in).
    ruler_class : str
        The rule's accuracy class, I, II (default, common for folding rules and tapes) or III.
    under_bark : bool
        Trace the wood inside the bark where bark is seen (round timber is taken under bark);
        by default the whole face is traced and the table says where bark was included.
    trace : dict, optional
        A boundary edited by hand, ``{"points": [[x, y], ...], "holes": [[[x, y], ...]]}`` [px]
        (a sidecar's ``[trace]``): it replaces the automatic trace and carries a hand-placement
        allowance in its uncertainty; with ``"snap": True`` it is a rough outline, and the
        member's edge is found near it in the photo (with the edge's own uncertainty and check).
    accept_trace : bool
        Measure even where the trace check asks for review (the JSON then says so).
    loaded : Photo, optional
        The photo at `path` already read (:func:`~tracer.inputs.photo.load.load_photo`), so that a
        caller measuring it again and again (the review page) reads it once.

    Raises
    ------
    InputError
        Bad options or an unreadable file (exit status 2).
    MeasurementError
        No target found, nothing segmented, the member cut off (exit status 1).
    TraceNeedsReview
        The trace check asks for review and `accept_trace` is not set (exit status 1).
    """
    hints = make_hints(seed, outside, box)
    photo = loaded if loaded is not None else load_photo(path)
    hints.check(*photo.shape[::-1])
    given = [k for k, v in (("--target", target), ("--scale", scale), ("--dpi", dpi), ("--ruler", ruler))
             if v is not None]
    if len(given) > 1:
        raise InputError(f"give one scale reference; this call has {' and '.join(given)}")
    warnings: list[str] = []
    profile = None
    if lens is not None:
        if dpi is not None:
            raise InputError("--lens is for camera photos; a flatbed scan (--dpi) has no lens profile")
        profile = (lens if isinstance(lens, LensProfile) else read_profile(lens)).for_image(*photo.shape[::-1])
    if target is not None:
        cols, rows, square = parse_target(target)
        plane = map_from_target(photo.levels, cols, rows, square, lens=profile)
    elif scale is not None:
        pts, length = parse_two_points(scale)
        plane = map_from_points(pts, length, max_tilt=max_tilt, lens=profile)
    elif ruler is not None:
        if profile is not None:
            raise InputError("--ruler with --lens is not supported yet: measure with the ruler alone (a lens "
                             "allowance is added) or use a target")
        readings, pitch_mm = _read_ruler(photo, ruler, pitch, ruler_class)
        # Each ruler numbered in its finest graduation, whichever graduation the photo resolved.
        readings = [r.renumbered(graduation_read(pitch_mm, r.levels, pitch, tested=r.levels_tested)) for r in readings]
        reading = readings[0]
        if len(readings) == 2:
            plane = map_from_two_rulers(readings[0], readings[1], pitch_mm, ruler_class=ruler_class)
        else:
            plane = map_from_ruler(reading, pitch_mm, max_tilt=max_tilt, ruler_class=ruler_class)
    elif profile is None and (dpi is not None or (photo.dpi is not None and known is None)):
        plane = map_from_dpi(float(dpi if dpi is not None else photo.dpi),
                             stated="--dpi" if dpi is not None else "the file's metadata")
    elif known is not None:
        plane = None                                   # set from the member itself, below
    else:
        raise InputError(f"{path}: no scale: give --target CxR:SIZE, --scale X1,Y1,X2,Y2=LENGTH, --dpi N "
                         "or --known depth=LENGTH")
    known_dim = _parse_known(known) if known is not None else None
    if plane is None:
        plane = _pixels_plane(profile)
    if plane.record["method"] != "ruler":               # a ruler's map is made again where the member is
        warnings += plane.warnings
    centre = np.array(photo.shape[::-1], float) / 2
    px_per_mm = 1.0 / plane.mm_per_px(centre)
    texture_mm = parse_length(texture, field="--texture") if texture else DEFAULT_TEXTURE_MM
    texture_px = max(2.0, texture_mm * px_per_mm)
    if plane.record["method"] == "pixels":        # no scale yet: texture as a share of the photo
        texture_px = max(2.0, 0.002 * float(np.hypot(*photo.shape)))
    smoothing = max(1.0, 0.25 * texture_px)
    bark = trace_ = None
    checked = None                     # the segmentation and trace that the trace check judges
    drawn = parse_trace(trace, "trace") if trace is not None else None
    if drawn is not None and not drawn["snap"]:
        seg = None
        hand_px = max(_HAND_PX, drawn["allowance_px"] or 0.0)

        def retrace(plane_: PlaneMap) -> Trace:
            return hand_trace(drawn["points"], drawn["holes"], plane_, allowance_px=hand_px)
    else:
        if drawn is not None:                          # a rough outline: the edge found near it
            seg = segment_outline(photo, drawn["points"], drawn["holes"], texture_px=texture_px,
                                  keep_out=plane.keep_out)
        else:
            seg = segment_member(photo, texture_px=texture_px, hints=hints, keep_out=plane.keep_out)
        trace_ = trace_boundary(seg, photo, plane, smoothing_px=smoothing)
        bark = find_bark(seg, photo)
        # The check judges how the member was found: its whole face (the wood's edge under the
        # bark is the bark finder's, with its own measures in the bark record).
        checked = (seg, trace_)
        if under_bark and bark.seen:
            seg = replace(seg, mask=bark.wood)
            trace_ = None

        def retrace(plane_: PlaneMap) -> Trace:
            return trace_boundary(seg, photo, plane_, smoothing_px=smoothing)
    if trace_ is None:
        trace_ = retrace(plane)
    if plane.record["method"] == "ruler":
        # The scale where the member lies along the ruler (its period changes under perspective).
        plane = map_from_ruler(reading, pitch_mm, at_px=trace_.rings_px[0].mean(axis=0), max_tilt=max_tilt,
                               ruler_class=ruler_class)
        trace_ = retrace(plane)
        warnings += list(plane.warnings)
    if known_dim is not None:
        which, length = known_dim
        x0, y0, x1, y1 = trace_.section.bounds
        measured = (y1 - y0) if which == "depth" else (x1 - x0)
        if plane.record["method"] == "pixels":
            plane = _known_plane(which, length, measured, max_tilt, profile)
            warnings += plane.warnings
            trace_ = retrace(plane)
        else:
            diff = 100.0 * (measured / length - 1.0)
            plane.record["known_check"] = {which: length, "measured_mm": measured, "difference_percent": diff}
            warnings.append(f"cross-check: the traced {which} is {measured:.1f} mm against the {length:.1f} mm read; "
                            f"{diff:+.2f} %")
    trace = trace_
    edge = trace.edge

    if seg is None:
        comps = [BoundaryOffset(edge["offset_mm"], label="hand-placed boundary, offset"),
                 PointNoise(edge["scatter_mm"], direction="normal", label="hand-placed boundary, points")]
    else:
        comps = [BoundaryOffset(edge["offset_mm"], label="edge offset (threshold, light)"),
                 PointNoise(edge["scatter_mm"], correlation_length=edge["correlation_mm"], direction="normal",
                            label="edge scatter")]
    comps += list(plane.components)
    if plane.record["method"] in ("two points", "ruler"):
        allowance, note = _perspective_allowance(plane, trace, photo, max_tilt,
                                                 across=reading if plane.record["method"] == "ruler" else None)
        comps.append(ScaleError(allowance / np.sqrt(3.0), distribution="rectangular", label="perspective"))
        warnings.append(note)
    if plane.record["method"] == "dpi":
        pass                                            # a flatbed scan: no camera lens
    elif profile is None:
        comps.append(ScaleError(LENS_ALLOWANCE / np.sqrt(3.0), distribution="rectangular", label="no lens profile"))
        warnings.append(f"no lens profile: a {100 * LENS_ALLOWANCE:.1f} % allowance is added to the scale uncertainty")
    else:
        extent = float(np.ptp(trace.rings_px[0], axis=0).max())
        comps.append(ScaleError(np.sqrt(2.0) * profile.rms_px / extent, label="lens profile residual"))
        plane.record["lens"] = {"profile": profile.name, "rms_px": profile.rms_px,
                                "max_correction_px": profile.max_shift_px()}
    if seg is not None:
        warnings += _cross_check(trace)
    if plane.record["method"] != "dpi":
        seen = _side_faces(plane, trace, photo, profile)
        if seen is not None:
            plane.record["side_faces"] = seen
            warnings.append(_side_face_warning(seen))
    if seg is None:
        within = max(_ON_EDGE_LEAST_PX, _ON_EDGE_TIMES * hand_px)
        check = check_hand(on_the_edge(photo, trace.rings_px, within), within,
                           "the boundary was placed by hand (a sidecar's [trace]); a hand-placement allowance "
                           f"of {hand_px:g} px is in its uncertainty")
        hint_record = {**hints.record(), "boundary": "hand-edited"}
    else:
        check = check_trace(*checked)
        hint_record = hints.record()
        if drawn is not None:
            hint_record = {"boundary": "drawn by hand, snapped to the edge"}
        if under_bark:
            hint_record["under_bark"] = True
    trace_record = check.record(hint_record, accepted=accept_trace)
    if bark is not None:
        trace_record["bark"] = bark.record(under_bark=under_bark)
        if bark.seen and not under_bark:
            warnings.append(f"bark included: it is seen on about {100 * bark.coverage:.0f} % of the outline "
                            f"({100 * bark.area_share:.1f} % of the area); round timber is taken under bark: "
                            "measure again with --under-bark for the wood alone")
        elif bark.seen:
            warnings.append(f"traced inside the bark (seen on about {100 * bark.coverage:.0f} % of the outline)")
        elif under_bark:
            warnings.append("--under-bark: no bark seen; the whole face was traced")
    p = Path(path)
    source = {"kind": "photo", "path": str(p), "sha256": photo.sha256, "image_px": list(photo.shape[::-1]),
              "scale": plane.record, "edge": {k: float(v) for k, v in edge.items()},
              "texture_mm": texture_mm, "trace": trace_record}
    if check.needs_review and accept_trace:
        warnings.append("the trace check asked for review and the trace was accepted unchecked: "
                        + "; ".join(check.reasons))
    model = ErrorModel(tuple(comps))
    try:
        proxy = (coarser_section(trace, plane, _MC_SIMPLIFY_PX), model)
    except GeometryError:
        proxy = None                                    # the trace itself serves
    measurement = Measurement(section=trace.section, name=name or p.stem, source=source,
                              error_model=model, warnings=tuple(warnings), mc_proxy=proxy)
    pm = PhotoMeasurement(measurement=measurement, photo=photo, plane=plane, segmentation=seg, trace=trace,
                          check=check)
    if check.needs_review and not accept_trace:
        raise TraceNeedsReview(_review_message(p, check), pm)
    return pm


def _review_message(path: Path, check: TraceCheck) -> str:
    """What to do when the trace check asks for review (one or two lines)."""
    return (f"{path.name}: the trace needs review (confidence {check.confidence:.2f}): " + "; ".join(check.reasons)
            + f". Check and correct it with tracer review {path.name} (or look with --overlay PNG, then give "
            "--seed X,Y on the member, --outside X,Y on the ground or --box X0,Y0,X1,Y1 round it), or accept it "
            "as it is with --accept-trace")


def _parse_known(text: str) -> tuple[str, float]:
    which, _, value = (text or "").partition("=")
    if which not in ("depth", "width") or not value:
        raise InputError(f"--known {text!r}: write depth=LENGTH or width=LENGTH, e.g. depth=195mm")
    return which, parse_length(value, field="--known")


def _pixels_plane(lens: LensProfile | None = None) -> PlaneMap:
    """Pixels as they are (undistorted, with a lens profile), y turned up: the frame of a trace
    before its scale is known."""
    return PlaneMap(H=np.diag([1.0, -1.0, 1.0]), components=(), record={"method": "pixels"}, lens=lens)


def _side_faces(plane: PlaneMap, trace: Trace, photo: Photo, profile: LensProfile | None) -> dict | None:
    """The member's side faces the camera saw (see :mod:`tracer.inputs.photo.view`), or None."""
    # Without a target's homography the map is a similarity: its decomposition is a camera
    # square to the face over the image centre, at the distance the scale and focal length give.
    view = camera_view(plane.H, photo.shape[::-1], None if profile is None else profile.camera_matrix)
    seen = side_faces(trace.section, view)
    if seen is not None and "direction" in seen:
        from ...section.properties import section_properties

        p = section_properties(trace.section)
        c = np.array([[p.cx, p.cy], [p.cx, p.cy]]) + [[0.0, 0.0], seen["direction"]]
        seen["side"] = image_side(np.diff(plane.to_px(c), axis=0)[0])
    if seen is not None:
        seen.update({"camera_tilt_deg": view.tilt_deg, "camera_height_mm": view.height,
                     "focal_from": view.focal_from})
    return seen


def _side_face_warning(seen: dict) -> str:
    where = f"off to the member's {seen['side']}" if "side" in seen else "off square to the member"
    holes = " (and into its openings)" if seen.get("holes_share", 0) > 0 else ""
    assumed = ", focal length assumed" if seen.get("focal_from") == "assumed" else ""
    return (f"the camera stood {where}{holes}, seeing its edges at up to about {seen['max_angle_deg']:.0f} deg from "
            f"square{assumed}: side faces may show beside the cut face and be traced as section; check the review "
            "picture, or photograph square to the face with the member centred in view")


def _known_plane(which: str, length: float, extent_px: float, max_tilt: float,
                 lens: LensProfile | None = None) -> PlaneMap:
    """The scale from one caliper reading of the member's own depth or width.

    The reading is taken as read to 0.1 mm (u = 0.1/√12 mm); each end of the traced extent is
    located to 0.5 px; no perspective correction, so the tilt allowance applies.
    """
    import math

    s = length / extent_px
    u_rel = math.hypot(0.1 / math.sqrt(12) / length, math.sqrt(2) * 0.5 / extent_px)
    H = np.diag([s, -s, 1.0])
    record = {"method": "known", which: length, "extent_px": extent_px, "mm_per_px": s,
              "assumed_max_tilt_deg": max_tilt}
    warn = (f"scale from the member's own {which} ({length:g} mm, taken as read to 0.1 mm); no perspective "
            f"correction: an unknown tilt of up to {max_tilt:g} deg is allowed for",)
    return PlaneMap(H=H, components=(ScaleError(u_rel, label=f"known {which}"), TiltAllowance(max_tilt)),
                    record=record, warnings=warn, lens=lens)


def _perspective_allowance(plane: PlaneMap, trace: Trace, photo: Photo, max_tilt: float,
                           across: "RulerReading | None" = None) -> tuple[float, str]:
    """Half-width of the scale change between the scale reference and the member under a tilt.

    Under a tilt θ the scale changes across the view by about tan θ · d / D, d the distance from
    the scale points to the member (for a ruler, from its axis: along it the fitted period follows
    the change) and D the camera's distance; D is taken as 0.7 times the photo's width (a field of
    view of about 70°, common for phones and compact cameras).
    """
    import math

    centre = trace.rings_px[0].mean(axis=0)
    s = plane.mm_per_px(centre)
    if across is not None:
        d = abs(across.across(centre)) * s
        what = "the ruler's line is"
    else:
        mid = plane.marks.mean(axis=0)
        d = float(np.hypot(*(plane.to_mm(np.array([centre]))[0] - plane.to_mm(np.array([mid]))[0])))
        what = "the scale points are"
    width_mm = photo.shape[1] * s
    a = math.tan(math.radians(max_tilt)) * d / (0.7 * width_mm)
    return a, (f"{what} {d:.0f} mm from the member: perspective may change the scale by up to "
               f"{100 * a:.1f} % between them (allowed for); put the ruler against the member's face")


def _read_ruler(photo: Photo, ruler: str, pitch: str | None, ruler_class: str) -> tuple[list["RulerReading"], float]:
    """Find the ruler (and a second one square to it) or follow the one given, and read them."""
    from .ruler import parse_pitch, parse_ruler, ruler_tolerance
    from .ruler_find import find_rulers
    from .ruler_read import read_ruler

    pitch_mm = parse_pitch(pitch or "1mm")
    ruler_tolerance(pitch_mm, 100.0, ruler_class)            # an unknown class is refused here
    where = parse_ruler(ruler)
    if isinstance(where, str):
        return find_rulers(to_light(photo.levels)), pitch_mm
    reading = read_ruler(to_light(photo.levels), where[0], where[1])
    if reading is None:
        raise MeasurementError(f"no ruler graduation found along --ruler {ruler}: looked for {MIN_TICKS} or "
                               "more evenly spaced marks within about an eighth of its length of that line")
    return [reading], pitch_mm


def _cross_check(trace: Trace) -> list[str]:
    """Moments over the mask's pixels against the contour integrals."""
    from ...section.properties import section_properties

    p = section_properties(trace.section)
    px = trace.pixel_check
    s = trace.edge["mm_per_px"]
    expected = 0.5 * s * p.perimeter                      # half a pixel all round [mm^2]
    out = []
    if abs(px["A"] - p.A) > _CHECK_FACTOR * expected + 1e-9 * p.A:
        out.append(f"the traced outline and the segmented pixels disagree on the area by "
                   f"{100 * (px['A'] / p.A - 1):+.2f} %; check the review picture")
    return out
