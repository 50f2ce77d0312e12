"""One photo under review: the settings and hints a person edits on the review page, measured by
the same :func:`~tracer.inputs.photo.pipeline.measure_photo` as ``tracer measure``, and saved as the
photo's sidecar (DESIGN.md, "Photo sidecar") beside the result JSON and the report.

The page sends its whole state on every change: the photo options by their sidecar names, the
hints (``seed``, ``outside``, ``box``), a hand-edited boundary (``trace``) and ``accept`` (the person
accepts a trace the check still flags). Nothing here prints; errors become messages in the answer.
"""

from __future__ import annotations

import hashlib
import json
import math
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

import numpy as np

from ..errors import InputError, MeasurementError, TracerError

__all__ = ["ReviewSession", "PAGE_KEYS", "QUICK_DRAWS", "VIEW_SIDE", "CROP_SIDE"]

#: The photo options the page may set (a lens profile is a file: it comes from the command line
#: or the sidecar only, so that the page never names a file for the server to read).
PAGE_KEYS: tuple[str, ...] = ("target", "scale", "dpi", "known", "ruler", "pitch", "ruler_class", "max_tilt",
                              "texture", "under_bark", "seed", "outside", "box")
#: Monte Carlo draws while a person is editing; the full adaptive evaluation follows when they stop.
QUICK_DRAWS = 60
#: The longest side of the reduced view sent for the whole photo [px].
VIEW_SIDE = 1600
#: The longest side of a crop sent at zoom [px].
CROP_SIDE = 1600
#: Properties shown on the page.
SHOWN = ("A", "I1", "I2", "Ix", "Iy", "cx", "cy", "theta")
#: Simplification of the editable boundary [px]: few enough vertices to drag, within 1.5 px.
_EDIT_TOLERANCE_PX = 1.5
_EDIT_MAX_VERTICES = 240
#: Weak stretches: the edge support evened over this many outline points; runs this long at least.
_WEAK_EVEN = 15
_WEAK_LEAST = 5


@dataclass
class ReviewSession:
    """One photo on the review page.

    Parameters
    ----------
    path : Path
        The photo.
    options : dict
        Photo options from the command line (``measure_photo`` keywords), over the sidecar's.
    defaults : dict
        Photo options under the sidecar's (a batch's settings for the whole lot).
    out : Path, optional
        Where Save writes the sidecar, result JSON and report (default: beside the photo).
    label : str, optional
        The member's name (default: the sidecar's name or the file's stem).
    after_save : callable, optional
        Called with the session after a save (a batch reruns the member's record).
    note : str
        What brought the photo here (a batch's failure reason), shown on the page.
    """

    path: Path
    options: dict[str, Any] = field(default_factory=dict)
    defaults: dict[str, Any] = field(default_factory=dict)
    out: Path | None = None
    label: str | None = None
    after_save: Callable[["ReviewSession"], str] | None = None
    note: str = ""
    _lock: threading.Lock = field(default_factory=threading.Lock, repr=False)
    _photo: Any = field(default=None, repr=False)
    _views: dict = field(default_factory=dict, repr=False)
    _sidecar_digest: str | None = field(default=None, repr=False)
    _sidecar_error: str | None = field(default=None, repr=False)
    _start: dict = field(default_factory=dict, repr=False)
    _fixed: dict = field(default_factory=dict, repr=False)

    def __post_init__(self) -> None:
        from ..inputs.photo.sidecar import merge_options, read_sidecar_file

        self.path = Path(self.path)
        self._sidecar_digest = _digest(self.sidecar_file)
        side: dict[str, Any] = {}
        # An earlier review's sidecar in the output folder, else the photo's own.
        source = self.sidecar_file if self.sidecar_file.is_file() else _beside(self.path)
        try:
            side, name = read_sidecar_file(source)
            self.label = self.label or name
        except InputError as e:
            self._sidecar_error = str(e)
        merged = merge_options(merge_options(self.defaults, side), self.options)
        # What the page does not edit (a lens profile, acceptance) stays as given.
        self._fixed = {k: v for k, v in merged.items() if k not in PAGE_KEYS and k not in ("trace", "accept_trace")}
        self._start = {k: v for k, v in merged.items() if k in PAGE_KEYS}
        if "trace" in merged:
            self._start["trace"] = merged["trace"]
        self._start["accept"] = bool(merged.get("accept_trace", False))

    # -- what the page reads ------------------------------------------------------------------------
    @property
    def name(self) -> str:
        return self.label or self.path.stem

    @property
    def sidecar_file(self) -> Path:
        """Where Save writes the sidecar: beside the photo, or in the output folder."""
        return (self.out / f"{self.path.stem}.toml") if self.out is not None else _beside(self.path)

    def describe(self) -> dict[str, Any]:
        """The page's opening record: the photo's size, the state to start from, and any
        problem with the sidecar (named, so that the person can fix it on the page)."""
        info: dict[str, Any] = {"name": self.name, "file": self.path.name, "state": _jsonable(self._start),
                                "sidecar": str(self.sidecar_file), "sidecar_error": self._sidecar_error,
                                "note": self.note, "fixed": sorted(self._fixed)}
        try:
            photo = self.photo()
            info["image"] = list(photo.shape[::-1])
        except TracerError as e:
            info["image"] = None
            info["photo_error"] = str(e)
        return info

    def photo(self):
        """The photo, read once."""
        from ..inputs.photo.load import load_photo

        with self._lock:
            if self._photo is None:
                self._photo = load_photo(self.path)
            return self._photo

    def view_jpeg(self) -> bytes:
        """The whole photo reduced to :data:`VIEW_SIDE` px at most, as JPEG (made once)."""
        photo = self.photo()
        if "view" not in self._views:
            H, W = photo.shape
            self._views["view"] = _jpeg(photo.color, (0, 0, W, H), VIEW_SIDE)
        return self._views["view"]

    def crop_jpeg(self, box: tuple[float, float, float, float], side: int) -> bytes:
        """The part `box` (x0, y0, x1, y1 [px]) of the photo at up to `side` px on its longer side."""
        photo = self.photo()
        H, W = photo.shape
        x0, y0, x1, y1 = box
        x0, x1 = max(0, int(math.floor(x0))), min(W, int(math.ceil(x1)))
        y0, y1 = max(0, int(math.floor(y0))), min(H, int(math.ceil(y1)))
        if x1 - x0 < 2 or y1 - y0 < 2:
            raise InputError("the crop lies outside the photo or is empty")
        return _jpeg(photo.color, (x0, y0, x1, y1), max(16, min(int(side), CROP_SIDE)))

    # -- measuring ----------------------------------------------------------------------------------
    def settings(self, state: dict[str, Any]) -> dict[str, Any]:
        """The page's `state` -> ``measure_photo`` keywords, checked (a bad key or value is an
        InputError naming it)."""
        from ..inputs.photo.sidecar import layer_options, parse_trace

        if not isinstance(state, dict):
            raise InputError("the state must be a JSON object")
        unknown = sorted(set(state) - set(PAGE_KEYS) - {"trace", "accept"})
        if unknown:
            raise InputError(f"unknown setting {unknown[0]!r}; the page may set {', '.join(PAGE_KEYS)}, trace "
                             "and accept")
        raw = {k: v for k, v in state.items() if k in PAGE_KEYS and not _empty(v)}
        kw = {**self._fixed, **layer_options(raw, "the page", self.path.parent)}
        if state.get("trace"):
            kw["trace"] = parse_trace(state["trace"], "the page")
        accept = state.get("accept", False)
        if not isinstance(accept, bool):
            raise InputError("accept must be true or false")
        if accept:
            kw["accept_trace"] = True
        return kw

    def measure(self, state: dict[str, Any], *, full: bool) -> dict[str, Any]:
        """Measure the photo with the page's `state`: the trace, the scale reference as found,
        the trace check, and A, I1, I2 ... with U (k = 2): a quick estimate of U while editing
        (`full` false), the full evaluation of ``tracer measure`` otherwise."""
        kw = self.settings(state)
        return self._measure(kw, full=full)

    def _measure(self, kw: dict[str, Any], *, full: bool) -> dict[str, Any]:
        from ..inputs.photo.pipeline import measure_photo
        from ..inputs.photo.choice import MemberUnclear
        from ..result import measure

        t0 = time.perf_counter()
        photo = self.photo()
        try:
            pm = measure_photo(self.path, name=self.name, loaded=photo, **{**kw, "accept_trace": True})
        except MemberUnclear as e:
            return {"ok": False, "message": str(e), "candidates": [_candidate(c) for c in e.candidates]}
        except (MeasurementError, InputError) as e:
            return {"ok": False, "message": str(e), "candidates": []}
        result = measure(pm.measurement, draws=None if full else QUICK_DRAWS)
        return self._answer(pm, result, kw, full=full, t0=t0)

    def _answer(self, pm: Any, result: Any, kw: dict[str, Any], *, full: bool, t0: float) -> dict[str, Any]:
        """What the page draws of a measured photo `pm` and its `result`."""
        from ..result import result_json

        doc = result_json(result)
        check = pm.check
        accepted = bool(kw.get("accept_trace"))
        warnings = [w for w in result.warnings if "accepted unchecked" not in w]
        answer = {
            "ok": True, "full": full, "name": self.name,
            "values": {k: {"value": doc["properties"][k]["value"], "U": 2.0 * doc["properties"][k].get("u", math.nan),
                           "unit": doc["properties"][k]["unit"]} for k in SHOWN if k in doc["properties"]},
            "rings": [np.round(r, 2).tolist() for r in pm.trace.rings_px],
            "editable": _editable(pm.trace.rings_px),
            "weak": _weak_stretches(pm.trace) if pm.segmentation is not None else [],
            "hand_edited": "trace" in kw,
            "scale": _scale(pm.plane),
            "check": {"confidence": check.confidence, "needs_review": check.needs_review,
                      "reasons": list(check.reasons), "measures": dict(check.measures)},
            "accepted": accepted,
            "candidates": _candidates(pm.segmentation),
            "bark": pm.measurement.source["trace"].get("bark"),
            "warnings": warnings,
            "seconds": round(time.perf_counter() - t0, 3),
        }
        return _jsonable(answer)

    # -- saving -------------------------------------------------------------------------------------
    def save(self, state: dict[str, Any], *, force: bool = False) -> dict[str, Any]:
        """Write the sidecar that reproduces the page's trace, and, where the trace is measured
        and not left needing review, the result JSON and the report beside it.

        A sidecar changed on disk since it was read (another review, an editor) is not
        overwritten unless `force`: the answer says so and the page asks.
        """
        from ..files import write_atomic, write_atomic_bytes
        from ..inputs.photo.pipeline import measure_photo
        from ..outputs.report import report_bytes
        from ..result import measure, result_json

        kw = self.settings(state)
        side = self.sidecar_file
        if not side.parent.is_dir():
            raise InputError(f"{side.parent}: the output folder does not exist")
        now = _digest(side)
        if now != self._sidecar_digest and not force:
            return {"ok": False, "conflict": True,
                    "message": f"{side.name} changed on disk since this page read it (another review or an editor); "
                               "save again to overwrite it, or reload the page to start from it"}
        text = sidecar_text(side, state, label=self.label)
        # Measured as tracer measure will measure it, from the settings the sidecar holds.
        written: list[str] = []
        outputs: list[tuple[Path, bytes]] = []
        message = ""
        t0 = time.perf_counter()
        try:
            pm = measure_photo(self.path, name=self.name, loaded=self.photo(), **kw)
        except MeasurementError as e:
            pm, message = None, f"saved the settings; not measured: {e}"
        if pm is not None:
            result = measure(pm.measurement)
            doc = result_json(result)
            stem = self.path.stem
            folder = side.parent
            outputs.append((folder / f"{stem}.json", (json.dumps(doc, indent=2, ensure_ascii=False) + "\n").encode()))
            outputs.append((folder / f"{stem}.html", report_bytes(f"{stem}.html", result, photo=pm)))
        for target, data in outputs:
            write_atomic_bytes(target, data)
            written.append(str(target))
        write_atomic(side, text)
        written.append(str(side))
        self._sidecar_digest = _digest(side)
        after = self.after_save(self) if self.after_save is not None else ""
        answer: dict[str, Any] = {"ok": True, "written": written, "message": message, "after": after}
        if pm is not None:                              # what was written, as the page shows it
            answer["measured"] = self._answer(pm, result, kw, full=True, t0=t0)
        return _jsonable(answer)


def sidecar_text(side: Path, state: dict[str, Any], *, label: str | None = None) -> str:
    """The sidecar for the page's `state`: its settings, hints and hand-edited boundary, with
    what the sidecar at `side` held besides settings (``name``, ``notes``, other tables) kept."""
    import tomllib

    import tomli_w

    from ..inputs.photo.sidecar import PHOTO_OPTIONS

    doc: dict[str, Any] = {}
    if side.is_file():
        try:
            doc = tomllib.loads(side.read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
            doc = {}                                   # unreadable: replaced whole
    kept = {k: v for k, v in doc.items() if k not in PHOTO_OPTIONS and k != "trace"}
    kept.pop("accept_trace", None)
    fixed = {k: v for k, v in doc.items() if k in PHOTO_OPTIONS and k not in PAGE_KEYS and k != "accept_trace"}
    out: dict[str, Any] = {}
    if label and "name" not in kept:
        out["name"] = label
    out.update({k: v for k, v in kept.items() if not isinstance(v, dict)})
    out.update(fixed)
    for k in PAGE_KEYS:
        v = state.get(k)
        if _empty(v):
            continue
        out[k] = v
    if state.get("accept"):
        out["accept_trace"] = True
    if state.get("trace"):
        t = state["trace"]
        out["trace"] = {"points": t["points"], **({"holes": t["holes"]} if t.get("holes") else {}),
                        **({"snap": True} if t.get("snap") else {}),
                        **({"allowance_px": t["allowance_px"]} if t.get("allowance_px") else {})}
    out.update({k: v for k, v in kept.items() if isinstance(v, dict)})
    head = ("# Settings and hints that reproduce this photo's trace, saved by tracer review on "
            f"{time.strftime('%Y-%m-%d %H:%M')}.\n# tracer measure and tracer batch read them; the command line "
            "overrides them.\n")
    return head + tomli_w.dumps(_jsonable(out))


# -- helpers ---------------------------------------------------------------------------------------------
def _beside(photo: Path) -> Path:
    return photo.with_suffix(".toml")


def _empty(v: Any) -> bool:
    """A setting the page left blank (0 is a value, not blank)."""
    return v is None or v is False or (isinstance(v, (str, list)) and not v)


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except FileNotFoundError:
        return None


def _jpeg(color: np.ndarray, box: tuple[int, int, int, int], side: int) -> bytes:
    import cv2

    x0, y0, x1, y1 = box
    part = color[y0:y1, x0:x1]
    h, w = part.shape[:2]
    f = min(1.0, side / max(h, w))
    if f < 1.0:
        part = cv2.resize(part, (max(1, round(w * f)), max(1, round(h * f))), interpolation=cv2.INTER_AREA)
    ok, buf = cv2.imencode(".jpg", part, [cv2.IMWRITE_JPEG_QUALITY, 88])
    if not ok:
        raise InputError("the photo could not be encoded for the page")
    return buf.tobytes()


def _candidate(c: tuple) -> dict[str, Any]:
    x, y, w, h, score = c
    return {"centre": [x, y], "size": [w, h], "score": score}


def _candidates(seg: Any) -> list[dict[str, Any]]:
    """The other whole regions an unattended search weighed, besides the one taken (for the page
    to offer); none once the person has pointed at the member or boxed it."""
    if seg is None or seg.hints.seeds or seg.hints.box is not None:
        return []
    out = []
    for c in seg.candidates[1:]:
        if c.cut_off or c.reference is not None or c.inside is not None:
            continue
        out.append({"centre": list(c.centre), "size": list(c.size), "score": c.score})
        if len(out) == 4:
            break
    return out


def _editable(rings: list[np.ndarray]) -> dict[str, Any]:
    """The traced rings simplified to a few hundred vertices at most, for dragging by hand."""
    import shapely

    out = []
    for ring in rings:
        tol = _EDIT_TOLERANCE_PX
        line = shapely.LinearRing(ring)
        simple = line.simplify(tol)
        while len(simple.coords) - 1 > _EDIT_MAX_VERTICES:
            tol *= 1.5
            simple = line.simplify(tol)
        pts = np.asarray(simple.coords)[:-1]
        if len(pts) >= 3:
            out.append(np.round(pts, 1).tolist())
    return {"points": out[0] if out else [], "holes": out[1:]}


def _weak_stretches(trace: Any) -> list[list[list[float]]]:
    """The stretches of the outline not on a clean step from member to ground (the trace check's
    edge support, point by point, evened over ``_WEAK_EVEN`` points), as polylines [px] of at
    least ``_WEAK_LEAST`` points, for the page to show where to look."""
    prof = trace.profiles[0]
    pts = np.asarray(prof.points, float)
    weak = ~np.asarray(prof.clean, bool)
    if len(pts) < 3 or not weak.any():
        return []
    # Evened over about 15 points, as the check evens its outside test: lone points off a clean
    # step (a grain line meeting the edge) are no stretch to look at.
    k = min(len(pts), _WEAK_EVEN)
    padded = np.concatenate([weak[-k:], weak, weak[:k]]).astype(float)
    clean = np.convolve(padded, np.ones(k) / k, mode="same")[k:-k] <= 0.5
    # Runs of weak points, the ring rolled to start on a clean one (so no run wraps round).
    order = np.roll(np.arange(len(pts)), -int(np.argmax(clean))) if clean.any() else np.arange(len(pts))
    edges = np.diff(np.concatenate([[0], (~clean[order]).astype(np.int8), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    return [np.round(pts[order[a:b]], 1).tolist() for a, b in zip(starts, ends) if b - a >= _WEAK_LEAST]


def _scale(plane: Any) -> dict[str, Any]:
    marks = getattr(plane, "marks", None)
    record = dict(plane.record)
    return {"method": record.get("method"), "record": record,
            "marks": [] if marks is None else np.asarray(marks, float).reshape(-1, 2).round(2).tolist()}


def _jsonable(value: Any) -> Any:
    """Numpy numbers and arrays, tuples and non-finite floats made plain JSON."""
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return _jsonable(value.tolist())
    if isinstance(value, (np.bool_, bool)):
        return bool(value)
    if isinstance(value, (np.integer, int)):
        return int(value)
    if isinstance(value, (np.floating, float)):
        v = float(value)
        return v if math.isfinite(v) else None
    if isinstance(value, Path):
        return str(value)
    return value
