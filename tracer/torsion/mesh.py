"""Triangular meshes of a section, for the finite-element torsion analysis.

A conforming Delaunay triangulation of the section: the boundary (holes included) is split into
segments no longer than the mesh size, a hexagonal lattice of interior points fills the rest, and
boundary segments missing from the Delaunay triangulation are split until every one is an edge.
Triangles whose centroid lies outside the material are dropped, and the mesh is checked to cover
the section's area exactly. The Delaunay step is Qhull's (through scipy), under a permissive
licence; no mesher with a non-commercial licence is used.

References
----------
.. [1] J. R. Shewchuk, "Delaunay refinement algorithms for triangular mesh generation,"
       *Computational Geometry*, vol. 22, pp. 21-74, 2002. doi: 10.1016/S0925-7721(01)00047-5.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import MeasurementError
from ..section.geometry import Section

__all__ = ["Mesh", "triangulate"]

_MAX_SPLITS = 12


@dataclass(frozen=True)
class Mesh:
    """A triangulation of a section.

    Attributes
    ----------
    nodes : ndarray (M, 2)
        Node coordinates [mm].
    triangles : ndarray (T, 3)
        Node indices, counter-clockwise.
    boundary : ndarray (B,)
        Indices of the nodes on the boundary.
    on_edge : ndarray (B, 3)
        For each boundary node: the section vertices (i, j) of the edge it lies on and its
        fraction t along it, so that it moves with the vertices (t as a float in column 2).
    size : float
        The target edge length [mm].
    """

    nodes: np.ndarray
    triangles: np.ndarray
    boundary: np.ndarray
    on_edge: np.ndarray
    size: float

    @property
    def areas(self) -> np.ndarray:
        """Signed area of every triangle [mm^2] (positive: counter-clockwise)."""
        p = self.nodes[self.triangles]
        return 0.5 * ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                      - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))


def triangulate(section: Section, size: float) -> Mesh:
    """A conforming triangulation of `section` with edges of about `size` [mm].

    Every vertex of the section is a node; boundary nodes between vertices lie on its edges.

    Raises
    ------
    MeasurementError
        When no conforming mesh is found (a degenerate section), with the reason.
    """
    import shapely
    from scipy.spatial import Delaunay

    if not (size > 0 and np.isfinite(size)):
        raise ValueError(f"mesh size = {size!r} must be positive")
    xy, starts = section.vertices()
    poly = section.to_shapely()
    # Boundary points: the vertices, and points dividing each edge into pieces <= size.
    b_pts, b_info, segments = [], [], []
    count = 0
    for a, b in zip(starts[:-1], starts[1:]):           # per ring (vectorised within it)
        idx = np.arange(a, b)
        nxt = np.roll(idx, -1)
        length = np.hypot(*(xy[nxt] - xy[idx]).T)
        pieces = np.maximum(1, np.ceil(length / size).astype(int))
        edge = np.repeat(np.arange(len(idx)), pieces)
        t = (np.arange(len(edge)) - np.repeat(np.cumsum(pieces) - pieces, pieces)) / pieces[edge]
        p0, p1 = xy[idx[edge]], xy[nxt[edge]]
        b_pts.append(p0 + t[:, None] * (p1 - p0))
        b_info.append(np.column_stack([idx[edge], nxt[edge], t]))
        ring = np.arange(count, count + len(edge))
        segments.append(np.column_stack([ring, np.roll(ring, -1)]))
        count += len(edge)
    b_pts = np.concatenate(b_pts)
    b_info = np.concatenate(b_info)
    segments = np.concatenate(segments)

    # Interior points: a hexagonal lattice, kept clear of the boundary.
    x0, y0, x1, y1 = section.bounds
    dy = size * np.sqrt(3) / 2
    ys = np.arange(y0 + dy / 2, y1, dy)
    xs = np.arange(x0 + size / 2, x1, size)
    gx, gy = np.meshgrid(xs, ys)
    gx = gx + (np.arange(len(ys))[:, None] % 2) * size / 2
    cand = np.column_stack([gx.ravel(), gy.ravel()])
    if len(cand):
        inside = shapely.contains_xy(poly, cand[:, 0], cand[:, 1])
        cand = cand[inside]
        if len(cand):
            far = shapely.distance(shapely.points(cand), poly.boundary) >= 0.6 * size
            cand = cand[far]

    for _ in range(_MAX_SPLITS):
        pts = np.vstack([b_pts, cand]) if len(cand) else b_pts
        tri = Delaunay(pts, qhull_options="Qbb Qc Qz Q12").simplices
        cen = pts[tri].mean(axis=1)
        tri = tri[shapely.contains_xy(poly, cen[:, 0], cen[:, 1])]
        missing = _missing_segments(tri, segments)
        if not missing.size:
            break
        # Split every missing segment at its midpoint (it moves with the section's edge).
        i, j = segments[missing, 0], segments[missing, 1]
        new_pts = 0.5 * (b_pts[i] + b_pts[j])
        same_edge = b_info[j, 0] == b_info[i, 0]
        t_end = np.where(same_edge, b_info[j, 2], 1.0)
        new_info = np.column_stack([b_info[i, 0], b_info[i, 1], 0.5 * (b_info[i, 2] + t_end)])
        m = len(b_pts) + np.arange(len(missing))
        keep = np.ones(len(segments), dtype=bool)
        keep[missing] = False
        segments = np.concatenate([segments[keep], np.column_stack([i, m]), np.column_stack([m, j])])
        b_pts = np.vstack([b_pts, new_pts])
        b_info = np.vstack([b_info, new_info])
        if len(cand):   # interior points too near a new boundary point would spoil it again
            d = shapely.distance(shapely.points(cand), shapely.multipoints(new_pts))
            cand = cand[d >= 0.5 * size]
    else:
        raise MeasurementError("could not mesh the section for torsion: boundary edges stay missing "
                               "after refinement; the section may have a sliver or a spike")
    # Orient counter-clockwise and check the cover.
    p = pts[tri]
    signed = 0.5 * ((p[:, 1, 0] - p[:, 0, 0]) * (p[:, 2, 1] - p[:, 0, 1])
                    - (p[:, 2, 0] - p[:, 0, 0]) * (p[:, 1, 1] - p[:, 0, 1]))
    tri = np.where((signed < 0)[:, None], tri[:, [0, 2, 1]], tri)
    keep = np.abs(signed) > 1e-14 * size * size
    tri = tri[keep]
    covered = float(np.abs(signed[keep]).sum())
    if abs(covered - poly.area) > 1e-9 * poly.area:
        raise MeasurementError(f"could not mesh the section for torsion: the mesh covers {covered:.6g} mm^2 "
                               f"of {poly.area:.6g} mm^2")
    return Mesh(nodes=pts, triangles=tri, boundary=np.arange(len(b_pts)), on_edge=b_info, size=size)


def _missing_segments(tri: np.ndarray, segments: np.ndarray) -> np.ndarray:
    """Indices of boundary segments that are not edges of the triangulation."""
    edges = np.concatenate([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]])
    edges.sort(axis=1)
    n = int(max(edges.max(), segments.max())) + 1
    have = np.unique(edges[:, 0].astype(np.int64) * n + edges[:, 1])
    seg = np.sort(segments, axis=1)
    key = seg[:, 0].astype(np.int64) * n + seg[:, 1]
    return np.flatnonzero(~np.isin(key, have))
