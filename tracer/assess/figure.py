"""The loss map of ``tracer compare --figure``: nominal outline, measured outline, loss shaded.

matplotlib is imported inside :func:`loss_map` (the Agg backend, no display needed), so the
command line starts without it.
"""

from __future__ import annotations

import io
import textwrap

from .loss import Comparison
from .shared import ASSESS_CAUTIONS

__all__ = ["loss_map"]

_FORMATS = {".svg": "svg", ".png": "png", ".pdf": "pdf"}


def loss_map(c: Comparison, suffix: str) -> bytes:
    """The loss map as the bytes of an SVG, PNG or PDF file (by `suffix`, e.g. ``".svg"``).

    Red: nominal material the measured section lacks. Blue: measured material outside the
    nominal. Black: the nominal outline; green: the measured outline after registration.
    """
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure
    from matplotlib.patches import PathPatch
    from matplotlib.path import Path as MPath

    fmt = _FORMATS[suffix.lower()]
    nom = c.nominal.section.to_shapely()
    meas = c.registration.section.to_shapely()
    fig = Figure(figsize=(7.0, 8.0), layout="constrained")
    ax = fig.add_subplot()
    for geom, face, label in ((nom.difference(meas), "#d62728", "missing (loss)"),
                              (meas.difference(nom), "#1f77b4", "extra (outside nominal)")):
        path = _path(geom, MPath)
        if path is not None:
            ax.add_patch(PathPatch(path, facecolor=face, edgecolor="none", alpha=0.6, label=label))
    for geom, colour, label in ((nom, "black", "nominal"), (meas, "#2ca02c", "measured, registered")):
        first = True
        for ring in _rings(geom):
            ax.plot(ring[:, 0], ring[:, 1], color=colour, lw=1.0, label=label if first else None)
            first = False
    ax.set_aspect("equal")
    ax.autoscale_view()
    ax.set_xlabel("x [mm]")
    ax.set_ylabel("y [mm]")
    loss = c.loss
    ax.set_title(f"{c.measurement.name} against {c.nominal.name}\n"
                 f"loss of A {loss['A']:.2f} %, Ix {loss['Ix']:.2f} %, Iy {loss['Iy']:.2f} % (positive = lost)",
                 fontsize=9)
    ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=8, framealpha=0.8)
    fig.text(0.01, 0.005, "\n".join(textwrap.fill(t, 110) for t in ASSESS_CAUTIONS), fontsize=6.5, va="bottom")
    fig.get_layout_engine().set(rect=(0, 0.08, 1, 0.92))
    buf = io.BytesIO()
    fig.savefig(buf, format=fmt, dpi=150)
    return buf.getvalue()


def _rings(geom):
    import numpy as np

    for poly in getattr(geom, "geoms", [geom]):
        if poly.is_empty or poly.geom_type != "Polygon":
            continue
        yield np.asarray(poly.exterior.coords)
        for hole in poly.interiors:
            yield np.asarray(hole.coords)


def _path(geom, MPath):
    import numpy as np

    verts, codes = [], []
    for ring in _rings(geom):
        verts.append(ring)
        codes += [MPath.MOVETO] + [MPath.LINETO] * (len(ring) - 2) + [MPath.CLOSEPOLY]
    if not verts:
        return None
    return MPath(np.concatenate(verts), codes)
