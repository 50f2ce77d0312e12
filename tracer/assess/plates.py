"""The plate elements of a parametric section (flanges, web, legs, walls) and their thickness.

Each plate of a nominal shape is crossed by short cuts at evenly spaced stations, away from
the fillets and corners; the length of a cut inside a measured section is its local thickness
there. The thinnest station of a plate is its largest local loss of thickness.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["Plate", "plate_elements", "plate_thickness"]

# Stations per plate element.
_STATIONS = 41


@dataclass(frozen=True)
class Plate:
    """One plate element of a nominal shape.

    Attributes
    ----------
    name : str
        E.g. ``"top flange"``.
    dim : str
        The shape's dimension that is its thickness (``tf``, ``tw``, ``t``, ``b``, ``h``).
    thickness : float
        Nominal thickness [mm].
    cuts : ndarray, shape (S, 2, 2)
        Start and end point of each cut across the plate [mm], reaching past both nominal faces.
    """

    name: str
    dim: str
    thickness: float
    cuts: np.ndarray


def plate_elements(kind: str, dims: dict, *, stations: int = _STATIONS) -> list[Plate]:
    """The plate elements of a parametric `kind` with dimensions `dims` [mm] (as built by
    :mod:`tracer.section.shapes`, bottom-left corner at the origin); an empty list for ``round``."""
    g = {k: float(v) for k, v in dims.items() if isinstance(v, (int, float))}
    r = g.get("r", 0.0)
    n = stations
    if kind in ("i-section", "tee"):
        h, b, tw, tf = g["h"], g["b"], g["tw"], g["tf"]
        wl, wr = (b - tw) / 2, (b + tw) / 2
        outstands = [(0.0, wl - r), (wr + r, b)]
        out = [Plate("top flange", "tf", tf, _across_y(outstands, h - tf, h, n))]
        if kind == "i-section":
            out.append(Plate("bottom flange", "tf", tf, _across_y(outstands, 0.0, tf, n)))
            out.append(Plate("web", "tw", tw, _across_x([(tf + r, h - tf - r)], wl, wr, n)))
        else:
            out.append(Plate("stem", "tw", tw, _across_x([(0.0, h - tf - r)], wl, wr, n)))
        return out
    if kind == "channel":
        h, b, tw, tf = g["h"], g["b"], g["tw"], g["tf"]
        return [Plate("web", "tw", tw, _across_x([(tf + r, h - tf - r)], 0.0, tw, n)),
                Plate("top flange", "tf", tf, _across_y([(tw + r, b)], h - tf, h, n)),
                Plate("bottom flange", "tf", tf, _across_y([(tw + r, b)], 0.0, tf, n))]
    if kind == "angle":
        h, b, t, rt = g["h"], g["b"], g["t"], g.get("rt", 0.0)
        return [Plate("vertical leg", "t", t, _across_x([(t + r, h - rt)], 0.0, t, n)),
                Plate("horizontal leg", "t", t, _across_y([(t + r, b - rt)], 0.0, t, n))]
    if kind == "box":
        h, b, t = g["h"], g["b"], g["t"]
        ro = max(g.get("ro", 0.0), t + g.get("ri", 0.0))      # clear of both corner arcs
        return [Plate("bottom wall", "t", t, _across_y([(ro, b - ro)], 0.0, t, n)),
                Plate("top wall", "t", t, _across_y([(ro, b - ro)], h - t, h, n)),
                Plate("left wall", "t", t, _across_x([(ro, h - ro)], 0.0, t, n)),
                Plate("right wall", "t", t, _across_x([(ro, h - ro)], b - t, b, n))]
    if kind == "tube":
        d, t = g["d"], g["t"]
        a = np.linspace(0.0, 2 * math.pi, 4 * n, endpoint=False)
        m = 0.5 * t
        rin, rout = d / 2 - t - m, d / 2 + m
        u = np.stack([np.cos(a), np.sin(a)], axis=1)
        cuts = np.stack([d / 2 + rin * u, d / 2 + rout * u], axis=1)
        return [Plate("wall", "t", t, cuts)]
    if kind == "rectangle":
        b, h = g["b"], g["h"]
        return [Plate("width", "b", b, _across_x([(0.1 * h, 0.9 * h)], 0.0, b, n)),
                Plate("depth", "h", h, _across_y([(0.1 * b, 0.9 * b)], 0.0, h, n))]
    return []


def plate_thickness(xy: np.ndarray, starts: np.ndarray, plate: Plate) -> np.ndarray:
    """Length [mm] of each of the plate's cuts inside a section.

    Parameters
    ----------
    xy : ndarray (N, 2)
        The section's vertices, ring after ring (:meth:`Section.vertices`) [mm].
    starts : ndarray
        Start index of each ring, with N appended.
    plate : Plate

    Notes
    -----
    Each cut's line meets every edge at a parameter t (t = 0 and 1 at the cut's ends); a point
    of the line is inside when an odd number of crossings lie before it (even-odd rule), so the
    crossings sorted pair up into the inside intervals, clipped to [0, 1]. An edge crosses where
    its end vertices lie on different sides of the line, so a line through a vertex counts it
    once. Folded Monte Carlo copies are measured by the same rule.
    """
    a = plate.cuts[:, 0]                                         # (S, 2)
    d = plate.cuts[:, 1] - a
    nxt = np.arange(1, len(xy) + 1)
    nxt[starts[1:] - 1] = starts[:-1]                            # each ring closes on itself
    p, e = xy, xy[nxt] - xy                                      # edges p -> p + e, (E, 2)
    # Each vertex is on one side of the cut's line (on the line counts as the left side), and an
    # edge crosses the line where its two ends differ: the count stays even, whatever rounding does.
    w = p[None, :, :] - a[:, None, :]                            # (S, E, 2)
    side = (d[:, None, 0] * w[..., 1] - d[:, None, 1] * w[..., 0]) >= 0
    crosses = side != side[:, nxt]
    denom = d[:, None, 0] * e[None, :, 1] - d[:, None, 1] * e[None, :, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (w[..., 0] * e[None, :, 1] - w[..., 1] * e[None, :, 0]) / denom
    t = np.where(crosses, t, np.nan)
    t = np.sort(t, axis=1)                                       # NaN last
    k = np.sum(np.isfinite(t), axis=1).max(initial=0) // 2 * 2
    lo, hi = t[:, 0:k:2], t[:, 1:k:2]
    inside = np.clip(np.minimum(hi, 1.0) - np.maximum(lo, 0.0), 0.0, None)
    return np.nansum(inside, axis=1) * np.hypot(d[:, 0], d[:, 1])


def _stations(spans: list[tuple[float, float]], n: int) -> np.ndarray:
    """n stations spread over the spans in proportion to their lengths, inset from their ends."""
    spans = [(a, b) for a, b in spans if b > a]
    total = sum(b - a for a, b in spans)
    out = []
    for a, b in spans:
        k = max(2, round(n * (b - a) / total))
        inset = 0.05 * (b - a)
        out.append(np.linspace(a + inset, b - inset, k))
    return np.concatenate(out)


def _across_y(spans, y0: float, y1: float, n: int) -> np.ndarray:
    """Vertical cuts through a plate lying along x between y0 and y1."""
    x = _stations(spans, n)
    m = 0.5 * (y1 - y0)
    return np.stack([np.stack([x, np.full_like(x, y0 - m)], 1), np.stack([x, np.full_like(x, y1 + m)], 1)], 1)


def _across_x(spans, x0: float, x1: float, n: int) -> np.ndarray:
    """Horizontal cuts through a plate lying along y between x0 and x1."""
    y = _stations(spans, n)
    m = 0.5 * (x1 - x0)
    return np.stack([np.stack([np.full_like(y, x0 - m), y], 1), np.stack([np.full_like(y, x1 + m), y], 1)], 1)
