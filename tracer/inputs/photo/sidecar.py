"""A photo's settings and hints: the sidecar ``STEM.toml`` beside ``STEM.jpg`` and the option table
that reads it, a manifest's cells and the command line alike (DESIGN.md, "Photo sidecar").

A sidecar holds the photo options by their long names (``target = "6x4:10mm"``, ``dpi = 300``
...), ``name``, the hints in image pixels (x right, y down) ``seed = [[x, y], ...]``,
``outside = [[x, y], ...]``, ``box = [x0, y0, x1, y1]``, and a hand-edited boundary as a table::

    [trace]
    points = [[x, y], ...]          # the outline [px], replacing the automatic one
    holes = [[[x, y], ...], ...]    # its holes, if any
    snap = true                     # a rough outline: the edge is found near it (default false)
    allowance_px = 2.0              # how well the points were placed [px] (default 0.5)

so that ``tracer measure``, ``tracer batch`` and a colleague's rerun reproduce a reviewed trace.
Tables the tool does not know (``[truth]`` of the bundled samples) and ``notes`` are for people and
are ignored; an unknown setting is refused with its name.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from ...errors import InputError
from .hints import parse_box, parse_points

__all__ = ["PhotoOption", "PHOTO_OPTIONS", "read_sidecar", "layer_options", "merge_options", "sidecar_path",
           "parse_trace", "read_sidecar_file"]

_NOTES = ("notes",)                                  # text a sidecar may carry besides settings


@dataclass(frozen=True)
class PhotoOption:
    """How a photo option is read from a sidecar, a manifest cell or the command line.

    Attributes
    ----------
    parse : callable
        Text or a TOML value -> the value :func:`~tracer.inputs.photo.pipeline.measure_photo` takes.
    scale_reference : bool
        The option is a scale reference: an item that gives one replaces the lot's (a photo
        has one scale reference).
    file : bool
        The value is a file, relative to the sidecar or manifest that names it; its contents
        enter a batch item's key.
    """

    parse: Callable[[Any], Any]
    scale_reference: bool = False
    file: bool = False


def _text(value: Any) -> str:
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise ValueError("write it as text, as the tracer measure option takes it")
    return str(value).strip()


def _number(value: Any) -> float:
    if isinstance(value, bool):
        raise ValueError("write a number")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError("write a number") from None
    if not math.isfinite(v):
        raise ValueError("write a finite number")
    return v


def _flag(value: Any) -> bool:
    if isinstance(value, bool):
        return value
    text = str(value).strip().lower()
    if text in ("true", "yes", "1"):
        return True
    if text in ("false", "no", "0"):
        return False
    raise ValueError("write true or false")


def _points(name: str) -> Callable[[Any], Any]:
    def parse(value: Any) -> list[list[float]]:
        try:
            return [[x, y] for x, y in parse_points(value, f"--{name}")]
        except InputError as e:
            raise ValueError(str(e).split(": ", 1)[-1]) from None
    return parse


def _box(value: Any) -> list[float]:
    try:
        return list(parse_box(value))
    except InputError as e:
        raise ValueError(str(e).split(": ", 1)[-1]) from None


#: The photo options an item may set, by the keyword name of ``measure_photo`` (and of the
#: ``tracer measure`` option, dashes for underscores). Manifest columns, sidecar keys and the
#: lot's defaults are all read through this one table: a new photo option is added here.
PHOTO_OPTIONS: dict[str, PhotoOption] = {
    "target": PhotoOption(_text, scale_reference=True),
    "scale": PhotoOption(_text, scale_reference=True),
    "dpi": PhotoOption(_number, scale_reference=True),
    "known": PhotoOption(_text),
    "seed": PhotoOption(_points("seed")),
    "outside": PhotoOption(_points("outside")),
    "box": PhotoOption(_box),
    "max_tilt": PhotoOption(_number),
    "texture": PhotoOption(_text),
    "lens": PhotoOption(_text, file=True),
    "ruler": PhotoOption(_text, scale_reference=True),
    "pitch": PhotoOption(_text),
    "ruler_class": PhotoOption(_text),
    "under_bark": PhotoOption(_flag),
    "accept_trace": PhotoOption(_flag),
}


def sidecar_path(photo: str | Path) -> Path:
    """The sidecar of `photo`: ``STEM.toml`` beside it."""
    return Path(photo).with_suffix(".toml")


def read_sidecar(photo: str | Path) -> tuple[dict[str, Any], str | None]:
    """The photo options (hints and a hand-edited ``trace`` among them) and the name in the
    sidecar beside `photo`; nothing if there is none.

    Raises
    ------
    InputError
        The sidecar is not readable TOML, names an unknown setting, or a value is malformed (the
        message names the key).
    """
    return read_sidecar_file(sidecar_path(photo))


def read_sidecar_file(side: str | Path) -> tuple[dict[str, Any], str | None]:
    """As :func:`read_sidecar`, from the sidecar file `side` itself (one kept in an output
    folder); files it names are relative to its own folder."""
    side = Path(side)
    if not side.is_file():
        return {}, None
    try:
        doc = tomllib.loads(side.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as e:
        raise InputError(f"sidecar {side.name}: not readable TOML ({e})") from None
    name = doc.pop("name", None)
    if name is not None and not isinstance(name, str):
        raise InputError(f"sidecar {side.name}: name = {name!r} must be text in quotes")
    trace = doc.pop("trace", None)
    # Other tables (such as [truth] of the bundled samples) and notes are for people, not settings.
    raw = {k: v for k, v in doc.items() if not isinstance(v, dict) and k not in _NOTES}
    options = layer_options(raw, f"sidecar {side.name}", side.parent)
    if trace is not None:
        options["trace"] = parse_trace(trace, f"sidecar {side.name}")
    return options, name


def parse_trace(table: Any, where: str) -> dict[str, list]:
    """A hand-edited boundary ``{"points": [[x, y], ...], "holes": [[[x, y], ...], ...], "snap":
    false, "allowance_px": None}`` [px], checked: at least three points a ring, numbers only. With
    ``snap = true`` the points are a rough outline and the member's edge is found near it in the
    photo; ``allowance_px`` is how well they were placed (the review page writes the size of a
    screen pixel at the zoom they were placed at), else the default hand-placement allowance."""
    if not isinstance(table, dict):
        raise InputError(f"{where}: trace must be a table [trace] with points = [[x, y], ...]")
    unknown = set(table) - {"points", "holes", "snap", "allowance_px"}
    if unknown:
        raise InputError(f"{where}: [trace] has unknown key {sorted(unknown)[0]!r}; use points, holes, snap and "
                         "allowance_px")
    allowance = table.get("allowance_px")
    if allowance is not None and (isinstance(allowance, bool) or not isinstance(allowance, (int, float))
                                  or not math.isfinite(allowance) or allowance <= 0):
        raise InputError(f"{where}: [trace] allowance_px = {allowance!r} must be a positive number of pixels")
    snap = table.get("snap", False)
    if not isinstance(snap, bool):
        raise InputError(f"{where}: [trace] snap = {snap!r} must be true or false")
    if "points" not in table:
        raise InputError(f"{where}: [trace] needs points = [[x, y], ...] (the outline, image pixels)")

    def ring(value: Any, what: str) -> list[list[float]]:
        try:
            pts = parse_points(value, what)
        except InputError:
            raise InputError(f"{where}: [trace] {what} must be a list of [x, y] pixel pairs") from None
        if len(pts) < 3:
            raise InputError(f"{where}: [trace] {what} has {len(pts)} point(s); a ring needs at least 3")
        return [[x, y] for x, y in pts]

    holes = table.get("holes", [])
    if not isinstance(holes, list):
        raise InputError(f"{where}: [trace] holes must be a list of rings [[[x, y], ...], ...]")
    return {"points": ring(table["points"], "points"),
            "holes": [ring(h, f"hole {i}") for i, h in enumerate(holes, start=1)], "snap": snap,
            "allowance_px": None if allowance is None else float(allowance)}


def layer_options(raw: dict[str, Any], where: str, base: Path) -> dict[str, Any]:
    """Photo options of one source of settings, checked and parsed; files made absolute."""
    out = {}
    for key, value in raw.items():
        if key not in PHOTO_OPTIONS:
            raise InputError(f"{where}: unknown setting {key!r}; use {', '.join(PHOTO_OPTIONS)}")
        if value is None or value == "":
            continue
        opt = PHOTO_OPTIONS[key]
        try:
            v = opt.parse(value)
        except ValueError as e:
            raise InputError(f"{where}: {key} = {value!r}: {e}") from None
        if opt.file:
            v = str((base / v).resolve())
        out[key] = v
    return out


def merge_options(base: dict[str, Any], over: dict[str, Any]) -> dict[str, Any]:
    """`over` on top of `base`; a scale reference in `over` replaces those of `base`."""
    if any(k in PHOTO_OPTIONS and PHOTO_OPTIONS[k].scale_reference for k in over):
        base = {k: v for k, v in base.items() if not (k in PHOTO_OPTIONS and PHOTO_OPTIONS[k].scale_reference)}
    return {**base, **over}
