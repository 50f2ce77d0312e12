"""St Venant torsion constant, shear centre and warping constant by finite elements.

The warping function ω of the section solves Laplace's equation with the Neumann condition
∂ω/∂n = y n_x - x n_y on every boundary (coordinates from the centroid) [1]_. In weak form,
for every test function v,

    ∫ ∇ω · ∇v dA = ∫ (y ∂v/∂x - x ∂v/∂y) dA,

which holds on multiply connected sections (tubes, boxes, bolt holes) as it stands: the warping
function is single-valued, so no hole conditions are needed. Quadratic (6-node) triangles on a
conforming Delaunay mesh (:mod:`tracer.torsion.mesh`) discretise it; then

- ``J = Ip - ωᵀ K ω`` (Ip = Ix + Iy about the centroid), from J = ∫ (x² + y² + x ω_y - y ω_x) dA;
- the shear centre (xs, ys) makes the warping function about it, ω_S = ω - ys·x + xs·y,
  orthogonal to x and y (Trefftz' definition, [1]_ ch. 6, [2]_);
- ``Cw = ∫ ω_S² dA`` with ∫ ω_S dA = 0.

The mesh is refined (edge length divided by √2 per level) until J and Cw change by less than
0.1 %; the change over the last level is reported as the remaining discretisation error.

References
----------
.. [1] W. D. Pilkey, *Analysis and Design of Elastic Beams: Computational Methods*.
       New York: Wiley, 2002, chs. 5-6. doi: 10.1002/9780470172667.
.. [2] E. Trefftz, "Über den Schubmittelpunkt in einem durch eine Einzellast gebogenen Balken,"
       *ZAMM*, vol. 15, pp. 220-225, 1935. doi: 10.1002/zamm.19350150404.
.. [3] D. A. Dunavant, "High degree efficient symmetrical Gaussian quadrature rules for the
       triangle," *Int. J. Numer. Meth. Eng.*, vol. 21, pp. 1129-1148, 1985.
       doi: 10.1002/nme.1620210612.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..section.geometry import Section, trusted_geometry
from ..section.properties import section_properties
from .mesh import Mesh, triangulate

__all__ = ["Torsion", "TORSION_KEYS", "TORSION_DRAWS", "torsion_properties", "TorsionModel", "TorsionUncertainty",
           "evaluate_torsion"]

#: Keys of the torsion results, as in the result JSON.
TORSION_KEYS = ("J", "Cw", "xs", "ys")

# Quadrature on the triangle in barycentric coordinates: 3 points exact to degree 2 (midpoints
# of the medians), 6 points exact to degree 4 (Dunavant [3], Table, p = 4).
_Q3 = (np.array([[2 / 3, 1 / 6, 1 / 6], [1 / 6, 2 / 3, 1 / 6], [1 / 6, 1 / 6, 2 / 3]]), np.full(3, 1 / 3))
_A4, _B4 = 0.445948490915965, 0.091576213509771
_Q6 = (np.array([[_A4, _A4, 1 - 2 * _A4], [_A4, 1 - 2 * _A4, _A4], [1 - 2 * _A4, _A4, _A4],
                 [_B4, _B4, 1 - 2 * _B4], [_B4, 1 - 2 * _B4, _B4], [1 - 2 * _B4, _B4, _B4]]),
       np.array([0.223381589678011] * 3 + [0.109951743655322] * 3))
_TOL = 1e-3
_MAX_LEVELS = 7
# A simplified mesh geometry may change A and Ip by this share at most.
_GEOMETRY_TOL = 1e-4
#: Monte Carlo draws of the torsion properties unless another number is asked for.
TORSION_DRAWS = 200


@dataclass(frozen=True)
class Torsion:
    """Torsion results, lengths in mm.

    Attributes
    ----------
    J : float
        St Venant torsion constant [mm^4].
    Cw : float
        Warping constant about the shear centre [mm^6].
    xs, ys : float
        Shear centre, in the section's coordinates [mm].
    error : dict
        Estimated remaining discretisation error of each, the change over the last mesh level.
    triangles : int
        Elements of the finest mesh.
    converged : bool
        False when the refinement stopped at its last level before J and Cw settled.
    """

    J: float
    Cw: float
    xs: float
    ys: float
    error: dict[str, float]
    triangles: int
    converged: bool

    def values(self) -> dict[str, float]:
        return {"J": self.J, "Cw": self.Cw, "xs": self.xs, "ys": self.ys}


def torsion_properties(section: Section, *, tolerance: float = _TOL, max_levels: int = _MAX_LEVELS) -> Torsion:
    """J, shear centre and Cw of `section` by quadratic finite elements.

    Parameters
    ----------
    section : Section
        The geometry [mm].
    tolerance : float
        Relative change of J and Cw between two mesh levels at which refinement stops.
    max_levels : int
        Most mesh levels to try.

    Returns
    -------
    Torsion

    Examples
    --------
    A circle twists without warping: J = Ip = π d⁴ / 32 (closed form).

    >>> from tracer.section.shapes import round_bar
    >>> t = torsion_properties(round_bar(d=20, chord_angle=0.05))
    >>> abs(t.J / (math.pi * 20**4 / 32) - 1) < 1e-3, t.converged
    (True, True)
    """
    return TorsionModel(section).converge(tolerance=tolerance, max_levels=max_levels)


@dataclass(frozen=True)
class TorsionUncertainty:
    """u of J, Cw, xs, ys (k = 1, mm units), their 5th percentiles, and how they were found."""

    u: dict[str, float]
    p05: dict[str, float]
    draws: int
    seed: int


def evaluate_torsion(section: Section, model=None, *, draws: int = TORSION_DRAWS,
                     seed: int | None = None) -> tuple[Torsion, TorsionUncertainty | None]:
    """Torsion properties of `section` and, given an error model, their uncertainty.

    The Monte Carlo draws of :mod:`tracer.uncertainty` move the section's vertices; the converged
    mesh follows them (:meth:`TorsionModel.draws`). u is the RMS deviation of the draws about the
    value, with the remaining discretisation error added in quadrature as a rectangular
    half-width (error/√3).
    """
    from ..uncertainty import DEFAULT_SEED, draw_vertices

    tm = TorsionModel(section)
    tor = tm.converge()
    if not model:
        return tor, None
    seed = DEFAULT_SEED if seed is None else seed
    x, y = draw_vertices(section, model, draws=draws, seed=seed)
    vals = tm.draws(x, y)
    base = np.array([tor.values()[k] for k in TORSION_KEYS])
    with np.errstate(invalid="ignore"):
        rms = np.sqrt(np.nanmean((vals - base[:, None]) ** 2, axis=1))
        p05 = np.nanpercentile(vals, 5.0, axis=1)
    u = {k: float(math.hypot(rms[i], tor.error[k] / math.sqrt(3.0))) for i, k in enumerate(TORSION_KEYS)}
    return tor, TorsionUncertainty(u=u, p05={k: float(p05[i]) for i, k in enumerate(TORSION_KEYS)},
                                   draws=draws, seed=seed)


class TorsionModel:
    """The finite-element torsion problem of one section, reusable for perturbed copies.

    Holds the section and, once :meth:`solve` has run at a mesh size, that mesh, its quadratic
    degrees of freedom and the factorised stiffness, so that Monte Carlo draws can move the nodes
    with the section's vertices and re-solve cheaply (:meth:`draws`).
    """

    def __init__(self, section: Section) -> None:
        p = section_properties(section)
        self.source = section
        self.start_size = min(math.sqrt(p.A / 300.0), p.A / p.perimeter)
        self.section, self.vertex_map = _mesh_geometry(section, self.start_size)
        self.props = section_properties(self.section)
        self.geometry_change = max(abs(self.props.A / p.A - 1.0), abs(self.props.Ip / p.Ip - 1.0))
        self.cw_scale = p.Ip * p.A
        self.mesh: Mesh | None = None

    def converge(self, *, tolerance: float = _TOL, max_levels: int = _MAX_LEVELS) -> Torsion:
        """Refine the mesh until J and Cw settle; the last mesh stays for :meth:`draws`."""
        previous = None
        size = self.start_size
        for _ in range(max_levels):
            current = self.solve(size)
            if previous is not None:
                dJ = abs(current.J - previous.J)
                dCw = abs(current.Cw - previous.Cw)
                cw_scale = max(abs(current.Cw), 1e-4 * self.cw_scale)
                if dJ <= tolerance * abs(current.J) and dCw <= tolerance * cw_scale:
                    return _with_error(current, previous, converged=True, geometry=self.geometry_change)
            previous = current
            size /= math.sqrt(2.0)
        return _with_error(current, previous, converged=False, geometry=self.geometry_change)

    def solve(self, size: float) -> Torsion:
        """Mesh at `size` [mm] and solve; keeps the mesh for :meth:`draws`."""
        from scipy.sparse.linalg import splu

        mesh = triangulate(self.section, size)
        self.mesh = mesh
        self._dofs = _p2_dofs(mesh.triangles)
        K, f = _assemble(mesh.nodes, mesh.triangles, self._dofs, (self.props.cx, self.props.cy))
        self._lu = splu(K[1:, 1:].tocsc())
        omega = np.concatenate([[0.0], self._lu.solve(f[1:])])
        return _results(mesh.nodes, mesh.triangles, self._dofs, omega, f, self.props, len(mesh.triangles))

    def draws(self, x: np.ndarray, y: np.ndarray) -> np.ndarray:
        """J, Cw, xs, ys of copies whose section vertices moved to `x`, `y` (D, N) [mm].

        `x`, `y` are the vertices of the section the model was made for. The mesh keeps its
        topology: boundary nodes ride on their edges, interior nodes follow by a harmonic
        extension (one factorisation, reused), and each copy is solved by conjugate gradients
        preconditioned with the base factorisation. Where the mesh geometry is a simplified copy
        of the section, the kept vertices carry the motion.

        Returns
        -------
        ndarray, shape (4, D)
        """
        from scipy.sparse.linalg import LinearOperator, cg, splu

        mesh = self.mesh
        if mesh is None:
            raise RuntimeError("solve() first")
        if self.vertex_map is not None:
            x, y = x[:, self.vertex_map], y[:, self.vertex_map]
        xy0, _ = self.section.vertices()
        b = mesh.boundary
        i, j, t = mesh.on_edge[:, 0].astype(int), mesh.on_edge[:, 1].astype(int), mesh.on_edge[:, 2]
        n_nodes = len(mesh.nodes)
        interior = np.setdiff1d(np.arange(n_nodes), b)
        L = _p1_laplacian(mesh.nodes, mesh.triangles)
        L_ii = splu(L[interior][:, interior].tocsc()) if len(interior) else None
        L_ib = L[interior][:, b]
        out = np.empty((4, x.shape[0]))
        pre = LinearOperator(self._lu.shape, matvec=self._lu.solve)
        for d in range(x.shape[0]):
            dv = np.column_stack([x[d] - xy0[:, 0], y[d] - xy0[:, 1]])
            moved = mesh.nodes.copy()
            db = (1 - t)[:, None] * dv[i] + t[:, None] * dv[j]
            moved[b] += db
            if L_ii is not None:
                moved[interior] += -L_ii.solve(np.asarray(L_ib @ db))
            with trusted_geometry():       # a small perturbation of the validated section
                props = section_properties(self.section.with_vertices(np.column_stack([x[d], y[d]])))
            K, f = _assemble(moved, mesh.triangles, self._dofs, (props.cx, props.cy))
            sol, info = cg(K[1:, 1:].tocsr(), f[1:], M=pre, rtol=1e-12, maxiter=200)
            omega = np.concatenate([[0.0], sol])
            r = _results(moved, mesh.triangles, self._dofs, omega, f, props, len(mesh.triangles))
            out[:, d] = (r.J, r.Cw, r.xs, r.ys)
        return out


# ---------------------------------------------------------------------------------------------
def _mesh_geometry(section: Section, size: float) -> tuple[Section, np.ndarray | None]:
    """The geometry to mesh: the section itself, or, where its vertices are much denser than the
    mesh (a traced outline, a finely divided arc), a copy simplified by Douglas-Peucker (which
    keeps a subset of the vertices) with the largest tolerance, from size/200 down, that changes
    A and Ip by at most 1e-4; and the index of each kept vertex in the section."""
    xy, starts = section.vertices()
    edges = np.hypot(*np.diff(np.vstack([xy, xy[:1]]), axis=0).T)
    if np.median(edges) > size / 4:
        return section, None
    p = section_properties(section)
    shape = section.to_shapely()
    tol = size / 200.0
    for _ in range(10):
        simple = Section.from_shapely(shape.simplify(tol, preserve_topology=True))
        q = section_properties(simple)
        if abs(q.A / p.A - 1) <= _GEOMETRY_TOL and abs(q.Ip / p.Ip - 1) <= _GEOMETRY_TOL:
            break
        tol /= 2
    else:
        return section, None
    kept, _ = simple.vertices()
    index = {(float(a), float(b)): i for i, (a, b) in enumerate(xy)}
    return simple, np.array([index[(float(a), float(b))] for a, b in kept])


def _with_error(current: Torsion, previous: Torsion, *, converged: bool, geometry: float = 0.0) -> Torsion:
    """The change over the last level, plus, for J and Cw, the mesh geometry's share of change."""
    err = {k: abs(current.values()[k] - previous.values()[k]) for k in TORSION_KEYS}
    # A relative change g of the mesh geometry's A or Ip (length^2, length^4) moves J (length^4)
    # by about 2g and Cw (length^6) by about 3g.
    err["J"] += 2 * geometry * abs(current.J)
    err["Cw"] += 3 * geometry * abs(current.Cw)
    return Torsion(current.J, current.Cw, current.xs, current.ys, err, current.triangles, converged)


def _p2_dofs(triangles: np.ndarray) -> np.ndarray:
    """Degrees of freedom of quadratic triangles: 3 vertices, then the midpoints of edges
    01, 12, 20 (numbered after the vertices, one per edge of the mesh)."""
    n = int(triangles.max()) + 1
    edges = np.stack([triangles[:, [0, 1]], triangles[:, [1, 2]], triangles[:, [2, 0]]], axis=1)   # (T,3,2)
    key = np.sort(edges, axis=2)
    flat = key[..., 0].astype(np.int64) * n + key[..., 1]
    _, mid = np.unique(flat.ravel(), return_inverse=True)
    return np.concatenate([triangles, n + mid.reshape(-1, 3)], axis=1)


def _shape(L: np.ndarray, gradL: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """P2 shape functions at barycentric point L (3,) and their gradients (T, 6, 2)."""
    l0, l1, l2 = L
    N = np.array([l0 * (2 * l0 - 1), l1 * (2 * l1 - 1), l2 * (2 * l2 - 1), 4 * l0 * l1, 4 * l1 * l2, 4 * l2 * l0])
    g0, g1, g2 = gradL[:, 0], gradL[:, 1], gradL[:, 2]
    G = np.stack([(4 * l0 - 1) * g0, (4 * l1 - 1) * g1, (4 * l2 - 1) * g2,
                  4 * (l1 * g0 + l0 * g1), 4 * (l2 * g1 + l1 * g2), 4 * (l0 * g2 + l2 * g0)], axis=1)
    return N, G


def _geometry(nodes: np.ndarray, triangles: np.ndarray):
    p = nodes[triangles]                                   # (T, 3, 2)
    x, y = p[..., 0], p[..., 1]
    area2 = (x[:, 1] - x[:, 0]) * (y[:, 2] - y[:, 0]) - (x[:, 2] - x[:, 0]) * (y[:, 1] - y[:, 0])
    gradL = np.stack([np.stack([y[:, 1] - y[:, 2], x[:, 2] - x[:, 1]], axis=1),
                      np.stack([y[:, 2] - y[:, 0], x[:, 0] - x[:, 2]], axis=1),
                      np.stack([y[:, 0] - y[:, 1], x[:, 1] - x[:, 0]], axis=1)], axis=1) / area2[:, None, None]
    return p, 0.5 * area2, gradL


def _assemble(nodes: np.ndarray, triangles: np.ndarray, dofs: np.ndarray, centroid: tuple[float, float]):
    """Global stiffness K and load f of the warping problem (coordinates from `centroid`)."""
    from scipy.sparse import coo_matrix

    p, area, gradL = _geometry(nodes, triangles)
    px, py = p[..., 0] - centroid[0], p[..., 1] - centroid[1]
    Ke = np.zeros((len(triangles), 6, 6))
    fe = np.zeros((len(triangles), 6))
    points, weights = _Q3
    for L, w in zip(points, weights):
        _, G = _shape(L, gradL)
        wa = (w * area)[:, None]
        Ke += wa[:, :, None] * np.einsum("tai,tbi->tab", G, G)
        xq, yq = px @ L, py @ L
        fe += wa * (yq[:, None] * G[..., 0] - xq[:, None] * G[..., 1])
    n = int(dofs.max()) + 1
    rows = np.broadcast_to(dofs[:, :, None], Ke.shape).ravel()
    cols = np.broadcast_to(dofs[:, None, :], Ke.shape).ravel()
    K = coo_matrix((Ke.ravel(), (rows, cols)), shape=(n, n)).tocsr()
    f = np.bincount(dofs.ravel(), weights=fe.ravel(), minlength=n)
    return K, f


def _results(nodes, triangles, dofs, omega, f, props, n_triangles) -> Torsion:
    """J, shear centre and Cw from the warping function ω (any additive constant)."""
    p, area, _ = _geometry(nodes, triangles)
    px, py = p[..., 0] - props.cx, p[..., 1] - props.cy
    J = props.Ip - float(omega @ f)
    w_e = omega[dofs]                                      # (T, 6)
    points, weights = _Q6
    vals = []
    for L, w in zip(points, weights):
        N = np.array([L[0] * (2 * L[0] - 1), L[1] * (2 * L[1] - 1), L[2] * (2 * L[2] - 1),
                      4 * L[0] * L[1], 4 * L[1] * L[2], 4 * L[2] * L[0]])
        vals.append((w * area, px @ L, py @ L, w_e @ N))
    wa = np.stack([v[0] for v in vals])
    xq = np.stack([v[1] for v in vals])
    yq = np.stack([v[2] for v in vals])
    wq = np.stack([v[3] for v in vals])
    A = wa.sum()
    wq = wq - (wa * wq).sum() / A                           # ∫ ω dA = 0
    Iwx, Iwy = (wa * xq * wq).sum(), (wa * yq * wq).sum()
    Ix, Iy, Ixy = props.Ix, props.Iy, props.Ixy
    D = Ix * Iy - Ixy * Ixy
    xs = (Ixy * Iwx - Iy * Iwy) / D
    ys = (Ix * Iwx - Ixy * Iwy) / D
    ws = wq - ys * xq + xs * yq
    Cw = float((wa * ws * ws).sum())
    return Torsion(J=J, Cw=Cw, xs=props.cx + xs, ys=props.cy + ys, error={}, triangles=n_triangles, converged=True)


def _p1_laplacian(nodes: np.ndarray, triangles: np.ndarray):
    """Linear-element Laplacian of the mesh (for moving interior nodes harmonically)."""
    from scipy.sparse import coo_matrix

    _, area, gradL = _geometry(nodes, triangles)
    Ke = np.abs(area)[:, None, None] * np.einsum("tai,tbi->tab", gradL, gradL)
    rows = np.broadcast_to(triangles[:, :, None], Ke.shape).ravel()
    cols = np.broadcast_to(triangles[:, None, :], Ke.shape).ravel()
    n = len(nodes)
    return coo_matrix((Ke.ravel(), (rows, cols)), shape=(n, n)).tocsr()
