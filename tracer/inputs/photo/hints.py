"""What a person tells about a photo: points on the member, points on the ground, a box round it.

Hints are in image pixels as an image viewer shows them (x right, y down, from the top-left
pixel's centre at 0, 0). They come from the command line (``--seed X,Y`` and ``--outside X,Y``,
each repeatable, ``--box X0,Y0,X1,Y1``) or from the photo's sidecar (``seed = [[x, y], ...]``,
``outside = [[x, y], ...]``, ``box = [x0, y0, x1, y1]``; DESIGN.md), and are checked here against
the image and against each other, so that a contradiction is named before any work is done.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ...errors import InputError

__all__ = ["Hints", "make_hints", "parse_points", "parse_box"]

Point = tuple[float, float]


@dataclass(frozen=True)
class Hints:
    """Optional hints for finding the member.

    Attributes
    ----------
    seeds : tuple of (x, y)
        Points on the member's cut face [px].
    outside : tuple of (x, y)
        Points on the ground, or on anything that is not the member [px].
    box : (x0, y0, x1, y1) or None
        A rough box round the face [px], x0 < x1, y0 < y1: nothing outside it is the member.
    """

    seeds: tuple[Point, ...] = ()
    outside: tuple[Point, ...] = ()
    box: tuple[float, float, float, float] | None = None

    @property
    def given(self) -> bool:
        return bool(self.seeds or self.outside or self.box is not None)

    def record(self) -> dict[str, Any]:
        """The hints as the result JSON's ``source.trace.hints`` records them (given keys only)."""
        out: dict[str, Any] = {}
        if self.seeds:
            out["seed"] = [[x, y] for x, y in self.seeds]
        if self.outside:
            out["outside"] = [[x, y] for x, y in self.outside]
        if self.box is not None:
            out["box"] = list(self.box)
        return out

    def check(self, width: int, height: int) -> None:
        """Refuse hints off the `width` x `height` image, or that contradict each other.

        Raises
        ------
        InputError
            A point outside the image, a seed outside the box, or the same point given both on
            the member and on the ground.
        """
        for name, pts in (("--seed", self.seeds), ("--outside", self.outside)):
            for x, y in pts:
                if not (0 <= x <= width - 1 and 0 <= y <= height - 1):
                    raise InputError(f"{name} {x:g},{y:g} lies outside the {width} x {height} image; give a pixel "
                                     f"position with 0 <= X <= {width - 1} and 0 <= Y <= {height - 1}")
        if self.box is not None:
            x0, y0, x1, y1 = self.box
            if x1 <= 0 or y1 <= 0 or x0 >= width - 1 or y0 >= height - 1:
                raise InputError(f"--box {_fmt(self.box)} lies outside the {width} x {height} image")
            for x, y in self.seeds:
                if not (x0 <= x <= x1 and y0 <= y <= y1):
                    raise InputError(f"--seed {x:g},{y:g} lies outside --box {_fmt(self.box)}; a point on the member "
                                     "must be inside the box round it")
        # The same place said to be both member and ground: within a few pixels, or a share of
        # the image too small for a person to mean two places.
        near = max(3.0, 0.003 * math.hypot(width, height))
        for sx, sy in self.seeds:
            for ox, oy in self.outside:
                if math.hypot(sx - ox, sy - oy) <= near:
                    raise InputError(f"--seed {sx:g},{sy:g} and --outside {ox:g},{oy:g} mark the same place as both "
                                     "member and ground; drop one of them")


def make_hints(seed: Any = None, outside: Any = None, box: Any = None) -> Hints:
    """Hints from command-line texts or sidecar values (see :func:`parse_points`, :func:`parse_box`)."""
    return Hints(seeds=parse_points(seed, "--seed"), outside=parse_points(outside, "--outside"),
                 box=None if box is None else parse_box(box))


def parse_points(value: Any, option: str) -> tuple[Point, ...]:
    """Points from ``"X,Y"``, a list of such texts, ``[x, y]`` or ``[[x, y], ...]`` [px].

    >>> parse_points("120,80", "--seed")
    ((120.0, 80.0),)
    >>> parse_points([[1, 2], "3.5,4"], "--seed")
    ((1.0, 2.0), (3.5, 4.0))
    >>> parse_points("1,2; 3,4", "--seed")         # a manifest's cell
    ((1.0, 2.0), (3.0, 4.0))
    """
    if value is None:
        return ()
    if isinstance(value, str):
        return tuple(_point(v, option) for v in value.split(";") if v.strip()) or (_point(value, option),)
    if isinstance(value, (list, tuple)):
        if len(value) == 2 and all(_is_number(v) for v in value):
            return (_point(value, option),)
        return tuple(_point(v, option) for v in value)
    raise InputError(f"{option} {value!r}: write a pixel position as X,Y (or [[x, y], ...] in a sidecar)")


def parse_box(value: Any) -> tuple[float, float, float, float]:
    """A box from ``"X0,Y0,X1,Y1"`` or ``[x0, y0, x1, y1]`` [px], corners in either order.

    >>> parse_box("400,300,100,50")
    (100.0, 50.0, 400.0, 300.0)
    """
    vals = _numbers(value, 4, "--box", "X0,Y0,X1,Y1")
    x0, x1 = sorted(vals[0::2])
    y0, y1 = sorted(vals[1::2])
    if x1 - x0 < 2 or y1 - y0 < 2:
        raise InputError(f"--box {_fmt(vals)} has no size ({x1 - x0:g} x {y1 - y0:g} px); give two opposite "
                         "corners of a box round the whole cut face")
    return x0, y0, x1, y1


def _point(value: Any, option: str) -> Point:
    x, y = _numbers(value, 2, option, "X,Y")
    return x, y


def _numbers(value: Any, n: int, option: str, form: str) -> list[float]:
    if isinstance(value, str):
        parts = [p.strip() for p in value.split(",")]
    elif isinstance(value, (list, tuple)):
        parts = list(value)
    else:
        parts = []
    try:
        vals = [float(p) for p in parts if not isinstance(p, bool)]
    except (TypeError, ValueError):
        vals = []
    if len(vals) != n or len(parts) != n or not all(math.isfinite(v) for v in vals):
        raise InputError(f"{option} {value!r}: write {form} in pixels (x right, y down), e.g. "
                         + ("120,80" if n == 2 else "100,50,900,700"))
    return vals


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _fmt(vals) -> str:
    return ",".join(f"{v:g}" for v in vals)
