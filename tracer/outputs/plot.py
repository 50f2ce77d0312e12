"""Figures of a measured section, drawn with matplotlib, for reports.

- :func:`draw_section`: the section to true scale (equal aspect) with its overall dimensions,
  holes, centroid, principal axes and extreme fibres;
- :func:`draw_budget`: each input's share of u² for the properties that have a budget;
- :func:`figure_svg` and :func:`figure_png`: a figure as inline SVG text (no namespaces, no
  metadata, so the HTML holds no address at all) or as PNG bytes.

Figures are built on ``matplotlib.figure.Figure`` directly, never through pyplot, so no
interactive backend is touched and nothing global changes; matplotlib is imported lazily.
"""

from __future__ import annotations

import io
import math
import re
from typing import Any

import numpy as np

from ..section.geometry import Section
from ..section.properties import Properties
from ..units import mm_per

__all__ = ["section_figure", "draw_section", "budget_figure", "draw_budget", "figure_svg", "figure_png",
           "extreme_fibres", "STYLE"]

#: matplotlib settings of every figure (plain, small type; text stays text in SVG).
STYLE: dict[str, Any] = {
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans", "Liberation Sans", "Arial", "Helvetica"],
    "font.size": 8.0,
    "axes.edgecolor": "#555555",
    "axes.linewidth": 0.6,
    "axes.titlesize": 9.0,
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "svg.fonttype": "none",
    "svg.hashsalt": "tracer",
    "pdf.fonttype": 42,
}

_MATERIAL = "#c8d1da"
_EDGE = "#1d2b38"
_AXIS1 = "#b03a2e"
_AXIS2 = "#1f5f99"
_DIM = "#333333"


def extreme_fibres(section: Section, props: Properties) -> dict[str, tuple[float, float]]:
    """The vertices farthest from each centroidal and principal axis [mm].

    Returns
    -------
    dict
        ``top bottom left right`` (about x and y) and ``1+ 1- 2+ 2-`` (either side of the
        principal axes 1 and 2), each an ``(x, y)`` vertex.
    """
    xy, _ = section.vertices()
    t = math.radians(props.theta)
    d = xy - (props.cx, props.cy)
    v1 = -d[:, 0] * math.sin(t) + d[:, 1] * math.cos(t)     # distance from axis 1 (along axis 2)
    v2 = d[:, 0] * math.cos(t) + d[:, 1] * math.sin(t)      # distance from axis 2 (along axis 1)
    pick = {"top": np.argmax(xy[:, 1]), "bottom": np.argmin(xy[:, 1]), "left": np.argmin(xy[:, 0]),
            "right": np.argmax(xy[:, 0]), "1+": np.argmax(v1), "1-": np.argmin(v1), "2+": np.argmax(v2),
            "2-": np.argmin(v2)}
    return {k: (float(xy[i, 0]), float(xy[i, 1])) for k, i in pick.items()}


def section_figure(section: Section, props: Properties, *, units: str = "mm",
                   max_size: tuple[float, float] = (6.8, 6.4)) -> Any:
    """A matplotlib Figure of the section (see :func:`draw_section`), at most `max_size` inches.

    The figure takes the section's proportions, so that shown at its own size (as the report
    does) its type keeps its point size: a deep section gets a narrower figure, a flat one a
    lower figure.
    """
    import matplotlib
    from matplotlib.figure import Figure

    x0, y0, x1, y1 = section.bounds
    pad = 0.21 * max(x1 - x0, y1 - y0)
    ratio = (y1 - y0 + 2 * pad) / (x1 - x0 + 2.6 * pad)       # of the drawing's limits
    frame_w, frame_h = 0.9, 1.4                                # axis labels, legend [in]
    w_max, h_max = max_size
    if ratio > (h_max - frame_h) / (w_max - frame_w):
        size = (max(5.6, (h_max - frame_h) / ratio + frame_w), h_max)
    else:
        size = (w_max, max(3.4, (w_max - frame_w) * ratio + frame_h))
    with matplotlib.rc_context(STYLE):
        fig = Figure(figsize=size, layout="constrained")
        draw_section(fig.add_subplot(), section, props, units=units)
    return fig


def draw_section(ax: Any, section: Section, props: Properties, *, units: str = "mm") -> None:
    """Draw `section` on `ax` to true scale, with dimensions, centroid, principal axes, extreme fibres.

    Parameters
    ----------
    ax : matplotlib Axes
    section : Section
        Geometry [mm].
    props : Properties
        Its properties [mm units, deg].
    units : str
        Length unit of the axes and the dimensions.
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch, PathPatch
    from matplotlib.path import Path as MPath

    f = 1.0 / mm_per(units)
    verts, codes = [], []
    for ring, _ in section.rings():
        r = ring * f
        verts += [*r, r[0]]
        codes += [MPath.MOVETO] + [MPath.LINETO] * (len(r) - 1) + [MPath.CLOSEPOLY]
    # Exteriors run counter-clockwise and holes clockwise, so the non-zero rule leaves holes open.
    ax.add_patch(PathPatch(MPath(np.array(verts), codes), facecolor=_MATERIAL, edgecolor=_EDGE, lw=0.9, zorder=2))
    x0, y0, x1, y1 = (v * f for v in section.bounds)
    cx, cy = props.cx * f, props.cy * f
    w, h = x1 - x0, y1 - y0
    L = max(w, h)
    gap = 0.09 * L

    def dim(p: tuple[float, float], q: tuple[float, float], text: str | None, *, side: str) -> None:
        ax.annotate("", p, q, arrowprops=dict(arrowstyle="<|-|>", lw=0.6, color=_DIM, shrinkA=0, shrinkB=0,
                                              mutation_scale=6), zorder=3)
        if text is None:
            return
        mid = ((p[0] + q[0]) / 2, (p[1] + q[1]) / 2)
        off = {"below": (0, -3), "above": (0, 3), "left": (-3, 0), "right": (3, 0)}[side]
        ax.annotate(text, mid, xytext=off, textcoords="offset points", fontsize=7.5, color=_DIM,
                    ha={"left": "right", "right": "left"}.get(side, "center"),
                    va={"below": "top", "above": "bottom"}.get(side, "center"),
                    rotation=90 if side == "left" else 0, rotation_mode="anchor" if side == "left" else "default",
                    zorder=4)

    ext = dict(color=_DIM, lw=0.4, zorder=1)
    # Overall width below, overall depth on the left.
    yb, xl = y0 - gap, x0 - gap
    ax.plot([x0, x0], [y0, yb - 0.02 * L], **ext)
    ax.plot([x1, x1], [y0, yb - 0.02 * L], **ext)
    dim((x0, yb), (x1, yb), f"width {_g(w)} {units}", side="below")
    ax.plot([x0, xl - 0.02 * L], [y0, y0], **ext)
    ax.plot([x0, xl - 0.02 * L], [y1, y1], **ext)
    dim((xl, y0), (xl, y1), f"depth {_g(h)} {units}", side="left")
    # Extreme fibres about x (right) and about y (top), measured from the centroid.
    xr, yt = x1 + gap, y1 + gap
    ax.plot([cx, xr + 0.02 * L], [cy, cy], color=_DIM, lw=0.4, ls=(0, (4, 3)), zorder=3)
    ax.plot([cx, cx], [cy, yt + 0.02 * L], color=_DIM, lw=0.4, ls=(0, (4, 3)), zorder=3)
    for y in (y0, y1):
        ax.plot([x1, xr + 0.02 * L], [y, y], **ext)
    for x in (x0, x1):
        ax.plot([x, x], [y1, yt + 0.02 * L], **ext)
    dim((xr, cy), (xr, y1), f"top fibre\n{_g(y1 - cy)} {units}", side="right")
    dim((xr, y0), (xr, cy), f"bottom fibre\n{_g(cy - y0)} {units}", side="right")
    dim((x0, yt), (cx, yt), None, side="above")
    dim((cx, yt), (x1, yt), None, side="above")
    ax.annotate(f"left fibre {_g(cx - x0)} | right fibre {_g(x1 - cx)} {units}", (cx, yt), xytext=(0, 3),
                textcoords="offset points", fontsize=7.5, color=_DIM, ha="center", va="bottom", zorder=4)
    # Principal axes through the centroid, 1 (major, solid) and 2 (minor, dashed), each drawn a
    # little beyond the section's extent along it.
    t = math.radians(props.theta)
    corners = np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]]) - (cx, cy)
    for k, (dx, dy), colour, ls in ((1, (math.cos(t), math.sin(t)), _AXIS1, "-"),
                                    (2, (-math.sin(t), math.cos(t)), _AXIS2, (0, (6, 3)))):
        half = float(np.abs(corners @ (dx, dy)).max()) + 0.06 * L
        ax.plot([cx - half * dx, cx + half * dx], [cy - half * dy, cy + half * dy], color=colour, lw=0.9,
                ls=ls, zorder=5)
        ax.annotate(str(k), (cx + half * dx, cy + half * dy), xytext=(4 * dx, 4 * dy), textcoords="offset points",
                    color=colour, fontsize=8, fontweight="bold", ha="center", va="center", zorder=6,
                    bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none"))
    fib = extreme_fibres(section, props)
    for key, colour in (("1+", _AXIS1), ("1-", _AXIS1), ("2+", _AXIS2), ("2-", _AXIS2)):
        ax.plot(*(v * f for v in fib[key]), marker="D", ms=3.5, color=colour, mec="white", mew=0.5, zorder=7)
    ax.plot(cx, cy, marker="o", ms=7, mfc="white", mec="black", mew=0.9, zorder=8)
    ax.plot(cx, cy, marker="+", ms=7, color="black", mew=0.9, zorder=9)
    ax.set_aspect("equal")
    pad = 2.3 * gap
    ax.set_xlim(x0 - pad, x1 + pad * 1.6)
    ax.set_ylim(y0 - pad, y1 + pad)
    ax.set_xlabel(f"x [{units}]")
    ax.set_ylabel(f"y [{units}]")
    ax.grid(True, lw=0.3, color="#dddddd", zorder=0)
    ax.set_axisbelow(True)
    handles = [Patch(facecolor=_MATERIAL, edgecolor=_EDGE, lw=0.8, label="material (holes open)"),
               Line2D([], [], marker="o", ms=6, mfc="white", mec="black", ls="none", label="centroid"),
               Line2D([], [], color=_AXIS1, lw=1, label=f"axis 1 (I1), {round(props.theta, 1) + 0.0:.1f}° from x"),
               Line2D([], [], color=_AXIS2, lw=1, ls=(0, (6, 3)), label="axis 2 (I2)"),
               Line2D([], [], marker="D", ms=4, color="#555555", ls="none",
                      label="extreme fibres of axes 1 and 2"),
               Line2D([], [], color=_DIM, lw=0.5, ls=(0, (4, 3)), label="centroidal x and y")]
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.1), ncol=3, fontsize=7,
              frameon=False, handlelength=2.2)


def budget_figure(budget: dict[str, list[dict]], *, size: tuple[float, float] = (6.6, 2.6)) -> Any:
    """A matplotlib Figure of the budget (see :func:`draw_budget`), or None for an empty budget."""
    if not budget:
        return None
    import matplotlib
    from matplotlib.figure import Figure

    with matplotlib.rc_context(STYLE):
        fig = Figure(figsize=size, layout="constrained")
        draw_budget(fig.add_subplot(), budget)
    return fig


def draw_budget(ax: Any, budget: dict[str, list[dict]], *, inputs: int = 6) -> None:
    """Horizontal bars: each input's share of u² [%] for every property in `budget`.

    The `inputs` largest contributors (by their largest share) get a bar each; the others are
    summed into one.
    """
    keys = list(budget)
    names: dict[str, float] = {}
    for key in keys:
        for e in budget[key]:
            names[e["input"]] = max(names.get(e["input"], 0.0), float(e["share"]))
    top = sorted(names, key=lambda n: -names[n])[:inputs]
    rows = top + (["other inputs"] if len(names) > len(top) else [])
    share = np.zeros((len(rows), len(keys)))
    for j, key in enumerate(keys):
        for e in budget[key]:
            i = rows.index(e["input"]) if e["input"] in top else len(rows) - 1
            share[i, j] += 100.0 * float(e["share"])
    colours = ["#4c6a88", "#b0773a", "#6f8f5a", "#8a5a83"]
    height = 0.8 / len(keys)
    y = np.arange(len(rows))
    for j, key in enumerate(keys):
        ax.barh(y - 0.4 + height * (j + 0.5), share[:, j], height=height * 0.92, color=colours[j % len(colours)],
                label=key)
    ax.set_yticks(y, rows)
    ax.invert_yaxis()
    ax.set_xlim(0, 100)
    ax.set_xlabel("share of u² [%]")
    ax.grid(True, axis="x", lw=0.3, color="#dddddd")
    ax.set_axisbelow(True)
    ax.legend(loc="lower right", fontsize=7, frameon=False)


def figure_svg(fig: Any) -> str:
    """`fig` as an ``<svg>`` element to place inside HTML: no XML header, DOCTYPE, metadata or
    namespace declarations (HTML's parser supplies them), so the text holds no address."""
    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context(STYLE):
        fig.savefig(buf, format="svg", metadata={"Creator": None, "Date": None, "Format": None, "Type": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    text = re.sub(r"<metadata>.*?</metadata>\s*", "", text, flags=re.S)
    text = re.sub(r'\s+xmlns(:\w+)?="[^"]*"', "", text)
    return text


def figure_png(fig: Any, *, dpi: float = 200) -> bytes:
    """`fig` as PNG bytes."""
    import matplotlib

    buf = io.BytesIO()
    with matplotlib.rc_context(STYLE):
        fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()


def _g(v: float) -> str:
    """A dimension to four significant digits."""
    return f"{v:.4g}"
