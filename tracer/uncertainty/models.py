"""The error model: how a measured geometry may differ from the truth, as a sum of independent
*components*.

Each component can (a) give the variance it adds to every property, from the exact
sensitivities of :mod:`tracer.section.sensitivity` (law of propagation of uncertainty,
JCGM 100:2008, 5.1.2), and (b) draw perturbed geometries for Monte Carlo propagation
(JCGM 101:2008); :mod:`.propagation` does both. The kinds:

- :class:`Readings` — dimensions or coordinates read with an instrument, each with its own u
  (a ``reading`` u, or a ``resolution`` r with u = r/√12, rectangular, JCGM 100:2008, 4.3.7);
  the geometry depends on them linearly through a Jacobian.
- :class:`PointNoise` — independent per-vertex errors, optionally correlated along the boundary
  over a correlation length, in x and y or along the boundary's normal.
- :class:`BoundaryOffset` — a systematic offset of the whole boundary (dilation or erosion),
  which dominates a traced outline: it does not average away over many vertices.
- :class:`ScaleError` — a relative error of the length scale.
- :class:`HomographyError` — the covariance of a fitted plane-to-plane homography.
- :class:`TiltAllowance` — the one-sided cosine error of an unknown tilt of the section plane.

References
----------
.. [1] JCGM 100:2008, *Evaluation of measurement data - Guide to the expression of uncertainty
       in measurement*. doi: 10.59161/JCGM100-2008E.
.. [2] JCGM 101:2008, *Evaluation of measurement data - Supplement 1 to the GUM - Propagation
       of distributions using a Monte Carlo method*. doi: 10.59161/JCGM101-2008.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

from ..errors import InputError
from ..section.geometry import Section
from ..section.properties import Properties
from ..section.sensitivity import ring_neighbours

__all__ = ["Readings", "PointNoise", "BoundaryOffset", "ScaleError", "HomographyError", "TiltAllowance",
           "ErrorModel", "affine_jacobian", "rotate_model", "resolution_u"]

_SQRT3 = math.sqrt(3.0)


def resolution_u(resolution: float) -> float:
    """Standard uncertainty of a reading from an instrument's resolution, r/√12.

    A rectangular distribution of half-width r/2 (JCGM 100:2008, 4.3.7 and F.2.2.1).

    >>> round(resolution_u(0.01), 6)
    0.002887
    """
    return resolution / math.sqrt(12.0)


# ---------------------------------------------------------------------------------------------
# components
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class _Context:
    """What every component needs to know about the base geometry."""

    section: Section
    xy: np.ndarray
    starts: np.ndarray
    normals: np.ndarray    # unit outward normal at each vertex, (2, N)
    miters: np.ndarray     # displacement moving both adjacent edges out by 1, (2, N)
    centroid: tuple[float, float]

    @classmethod
    def of(cls, section: Section, props: Properties) -> _Context:
        xy, starts = section.vertices()
        nxt, prv = ring_neighbours(starts)
        e = xy[nxt] - xy
        n_edge = np.stack([e[:, 1], -e[:, 0]]) / np.hypot(e[:, 0], e[:, 1])   # right-hand = outward
        a, b = n_edge[:, prv], n_edge
        s = a + b
        normals = s / np.maximum(np.hypot(s[0], s[1]), 1e-300)
        miters = s / np.maximum(1.0 + np.einsum("ij,ij->j", a, b), 0.1)       # capped at spikes
        return cls(section, xy, starts, normals, miters, (props.cx, props.cy))


@dataclass(frozen=True)
class Readings:
    """Readings that the geometry depends on linearly: dimensions, station readings, points.

    Parameters
    ----------
    names : sequence of str
        A name per reading, as a person would look for it (``shape.tf``, ``stations.rows[3].x_left``).
    u : sequence of float
        Standard uncertainty of each reading [mm].
    jacobian : ndarray, shape (P, 2, N)
        d(vertex coordinate)/d(reading) for the section's vertices (:meth:`Section.vertices`).
    distribution : {"normal", "rectangular"}
        Shape of each reading's error for Monte Carlo: normal with standard deviation u, or
        rectangular of half-width √3 u (an instrument's resolution).
    """

    names: tuple[str, ...]
    u: np.ndarray
    jacobian: np.ndarray
    distribution: str = "normal"

    def __post_init__(self) -> None:
        object.__setattr__(self, "names", tuple(self.names))
        object.__setattr__(self, "u", np.asarray(self.u, dtype=float))
        _check_distribution(self.distribution)
        _check_u("Readings.u", self.u)
        if self.jacobian.shape[0] != len(self.names) or len(self.u) != len(self.names):
            raise InputError("Readings: names, u and jacobian must have one entry per reading")

    def linear(self, grads: np.ndarray, ctx: _Context) -> list[tuple[str, np.ndarray]]:
        s = np.einsum("kan,pan->kp", grads, self.jacobian)        # (K, P) sensitivities
        return [(name, (s[:, j] * self.u[j]) ** 2) for j, name in enumerate(self.names)]

    def additive(self, rng: np.random.Generator, ctx: _Context, x: np.ndarray, y: np.ndarray) -> None:
        e = _standard(rng, (x.shape[0], len(self.names)), self.distribution) * self.u
        x += e @ self.jacobian[:, 0]
        y += e @ self.jacobian[:, 1]


@dataclass(frozen=True)
class PointNoise:
    """Independent errors of the vertices, optionally correlated along the boundary.

    Parameters
    ----------
    u : float or array of shape (N,)
        Standard uncertainty of each vertex coordinate (``direction="xy"``) or of each vertex's
        position across the boundary (``"normal"``) [mm].
    correlation_length : float
        Distance along the boundary over which errors are alike [mm]: two vertices d apart have
        correlation exp(-d² / (2 ℓ²)). 0 makes them independent. The vertices of a ring are taken
        as evenly spaced at its mean spacing (true of traced contours).
    direction : {"xy", "normal"}
        Errors in x and y independently, or along the outward normal only.
    distribution : {"normal", "rectangular"}
        For Monte Carlo draws; rectangular only without correlation.
    label : str
        Name in the uncertainty budget.
    """

    u: float | np.ndarray
    correlation_length: float = 0.0
    direction: str = "xy"
    distribution: str = "normal"
    label: str = "outline points"

    def __post_init__(self) -> None:
        _check_distribution(self.distribution)
        _check_u("PointNoise.u", np.atleast_1d(self.u))
        if self.direction not in ("xy", "normal"):
            raise InputError(f"PointNoise.direction = {self.direction!r}; use 'xy' or 'normal'")
        if not (self.correlation_length >= 0 and math.isfinite(self.correlation_length)):
            raise InputError(f"PointNoise.correlation_length = {self.correlation_length!r} must be >= 0")
        if self.correlation_length > 0 and self.distribution != "normal":
            raise InputError("PointNoise: correlated errors are drawn from a normal distribution only")

    def linear(self, grads: np.ndarray, ctx: _Context) -> list[tuple[str, np.ndarray]]:
        u = np.broadcast_to(np.asarray(self.u, dtype=float), ctx.xy.shape[:1])
        if self.direction == "xy":
            parts = [grads[:, 0] * u, grads[:, 1] * u]
        else:
            parts = [np.einsum("kan,an->kn", grads, ctx.normals) * u]
        var = np.zeros(grads.shape[0])
        for s in parts:
            for a, b, eigen in self._rings(ctx):
                var += _circulant_quadform(s[:, a:b], eigen)
        return [(self.label, var)]

    def additive(self, rng: np.random.Generator, ctx: _Context, x: np.ndarray, y: np.ndarray) -> None:
        draws, n = x.shape
        u = np.broadcast_to(np.asarray(self.u, dtype=float), (n,))
        for target in ((x,), (y,)) if self.direction == "xy" else ((x, y),):
            w = _standard(rng, (draws, n), self.distribution)
            for a, b, eigen in self._rings(ctx):
                if eigen is not None:   # the circulant square root of the correlation, by FFT
                    root = np.sqrt(eigen[: (b - a) // 2 + 1])
                    w[:, a:b] = np.fft.irfft(np.fft.rfft(w[:, a:b], axis=1) * root, n=b - a, axis=1)
            w *= u
            if len(target) == 1:
                np.add(target[0], w, out=target[0])
            else:
                x += w * ctx.normals[0]
                y += w * ctx.normals[1]

    def _rings(self, ctx: _Context):
        """Per ring: its vertex range and the eigenvalues of its correlation matrix (None: white)."""
        for a, b in zip(ctx.starts[:-1], ctx.starts[1:]):
            eigen = None
            if self.correlation_length > 0:
                ring = ctx.xy[a:b]
                spacing = np.hypot(*(np.roll(ring, -1, axis=0) - ring).T).mean()
                k = np.arange(b - a)
                lag = np.minimum(k, (b - a) - k) * spacing
                row = np.exp(-0.5 * (lag / self.correlation_length) ** 2)
                eigen = np.maximum(np.fft.fft(row).real, 0.0)
            yield int(a), int(b), eigen


@dataclass(frozen=True)
class BoundaryOffset:
    """A systematic offset of the whole boundary along its outward normal [mm].

    Positive is a dilation (material added all round; holes shrink). Every vertex moves along its
    miter vector, so that every edge moves by the same distance: dA/d(offset) = perimeter.
    """

    u: float
    distribution: str = "normal"
    label: str = "boundary offset"

    def __post_init__(self) -> None:
        _check_distribution(self.distribution)
        _check_u("BoundaryOffset.u", np.atleast_1d(self.u))

    def linear(self, grads: np.ndarray, ctx: _Context) -> list[tuple[str, np.ndarray]]:
        s = np.einsum("kan,an->k", grads, ctx.miters)
        return [(self.label, (s * self.u) ** 2)]

    def additive(self, rng: np.random.Generator, ctx: _Context, x: np.ndarray, y: np.ndarray) -> None:
        e = _standard(rng, (x.shape[0], 1), self.distribution) * self.u
        x += e * ctx.miters[0]
        y += e * ctx.miters[1]


@dataclass(frozen=True)
class ScaleError:
    """A relative error of the length scale, about `origin` [mm] (u_rel dimensionless)."""

    u_rel: float
    origin: tuple[float, float] = (0.0, 0.0)
    distribution: str = "normal"
    label: str = "scale"

    def __post_init__(self) -> None:
        _check_distribution(self.distribution)
        _check_u("ScaleError.u_rel", np.atleast_1d(self.u_rel))

    def linear(self, grads: np.ndarray, ctx: _Context) -> list[tuple[str, np.ndarray]]:
        arm = (ctx.xy - np.asarray(self.origin)).T
        s = np.einsum("kan,an->k", grads, arm)
        return [(self.label, (s * self.u_rel) ** 2)]

    def affine(self, rng: np.random.Generator, draws: int, ctx: _Context) -> tuple[np.ndarray, np.ndarray]:
        """Per draw, the map p -> M p + t of a scale (1 + e) about the origin."""
        e = 1.0 + _standard(rng, (draws,), self.distribution) * self.u_rel
        M = e[:, None, None] * np.eye(2)
        return M, np.asarray(self.origin) - M @ np.asarray(self.origin)


@dataclass(frozen=True)
class HomographyError:
    """Uncertainty of a fitted homography H from a source plane to the section's mm plane.

    Parameters
    ----------
    H : 3 x 3 array_like
        The fitted mapping, normalised so that ``H[2, 2] = 1``.
    covariance : 8 x 8 array_like
        Covariance of its entries ``h00 h01 h02 h10 h11 h12 h20 h21``.
    """

    H: np.ndarray
    covariance: np.ndarray
    label: str = "homography"

    def __post_init__(self) -> None:
        H = np.asarray(self.H, dtype=float)
        C = np.asarray(self.covariance, dtype=float)
        if H.shape != (3, 3) or C.shape != (8, 8) or not np.isfinite(H).all() or not np.isfinite(C).all():
            raise InputError("HomographyError: H must be 3 x 3 and covariance 8 x 8, finite")
        if abs(H[2, 2]) < 1e-300:
            raise InputError("HomographyError: H[2, 2] must not be zero")
        object.__setattr__(self, "H", H / H[2, 2])
        object.__setattr__(self, "covariance", 0.5 * (C + C.T))

    def linear(self, grads: np.ndarray, ctx: _Context) -> list[tuple[str, np.ndarray]]:
        J = self._jacobian(ctx.xy)                              # (8, 2, N)
        s = np.einsum("kan,pan->kp", grads, J)
        return [(self.label, np.einsum("kp,pq,kq->k", s, self.covariance, s))]

    def transform(self, x: np.ndarray, y: np.ndarray, rng: np.random.Generator, ctx: _Context) -> None:
        Hinv = np.linalg.inv(self.H)
        w = Hinv[2, 0] * x + Hinv[2, 1] * y + Hinv[2, 2]
        u = (Hinv[0, 0] * x + Hinv[0, 1] * y + Hinv[0, 2]) / w
        v = (Hinv[1, 0] * x + Hinv[1, 1] * y + Hinv[1, 2]) / w
        h = rng.multivariate_normal(self.H.ravel()[:8], self.covariance, size=x.shape[0], method="eigh")
        h = np.concatenate([h, np.ones((x.shape[0], 1))], axis=1)[:, :, None]
        den = h[:, 6] * u + h[:, 7] * v + h[:, 8]
        x[:] = (h[:, 0] * u + h[:, 1] * v + h[:, 2]) / den
        y[:] = (h[:, 3] * u + h[:, 4] * v + h[:, 5]) / den

    def _jacobian(self, xy: np.ndarray) -> np.ndarray:
        """d(mm-plane point)/d(h) at every vertex (quotient rule on the projective map)."""
        Hinv = np.linalg.inv(self.H)
        src = np.column_stack([xy, np.ones(len(xy))]) @ Hinv.T
        u, v = src[:, 0] / src[:, 2], src[:, 1] / src[:, 2]
        w = self.H[2, 0] * u + self.H[2, 1] * v + 1.0
        X, Y = xy[:, 0], xy[:, 1]
        J = np.zeros((8, 2, len(xy)))
        J[0, 0], J[1, 0], J[2, 0] = u / w, v / w, 1 / w
        J[3, 1], J[4, 1], J[5, 1] = u / w, v / w, 1 / w
        J[6, 0], J[7, 0] = -X * u / w, -X * v / w
        J[6, 1], J[7, 1] = -Y * u / w, -Y * v / w
        return J


@dataclass(frozen=True)
class TiltAllowance:
    """The one-sided cosine error of an unknown tilt of the section plane.

    Without a perspective correction the section may lie tilted by up to `max_tilt_deg` to the
    image plane, about an axis of unknown direction; lengths across that axis then appear
    shortened by cos θ. The true geometry is the measured one stretched by e = 1/cos θ - 1 along
    a direction φ (about the centroid). Monte Carlo draws θ uniform in [0, θmax] and φ uniform in
    [0°, 180°). The linear path carries the exact second moments of the stretch tensor
    E = e n nᵀ about zero, so its u includes the offset that is not corrected for.
    """

    max_tilt_deg: float
    label: str = "unknown tilt"

    def __post_init__(self) -> None:
        if not (0 < self.max_tilt_deg < 60):
            raise InputError(f"TiltAllowance.max_tilt_deg = {self.max_tilt_deg!r} must be in (0, 60) degrees")

    def stretch_moments(self) -> tuple[float, float]:
        """E[e] and E[e²] for θ uniform in [0, θmax] (closed forms of ∫ sec θ and ∫ sec² θ)."""
        t = math.radians(self.max_tilt_deg)
        lsec = math.log(1 / math.cos(t) + math.tan(t))       # ∫_0^t sec
        m1 = lsec / t - 1.0
        m2 = (math.tan(t) - 2.0 * lsec + t) / t               # E[(sec θ - 1)^2]
        return m1, m2

    def linear(self, grads: np.ndarray, ctx: _Context) -> list[tuple[str, np.ndarray]]:
        dx = ctx.xy[:, 0] - ctx.centroid[0]
        dy = ctx.xy[:, 1] - ctx.centroid[1]
        s = np.stack([grads[:, 0] @ dx, grads[:, 1] @ dy, grads[:, 0] @ dy + grads[:, 1] @ dx], axis=1)
        _, m2 = self.stretch_moments()
        # E[n_x^4] = E[n_y^4] = 3/8, E[n_x^2 n_y^2] = 1/8 for phi uniform.
        M = m2 * np.array([[3 / 8, 1 / 8, 0.0], [1 / 8, 3 / 8, 0.0], [0.0, 0.0, 1 / 8]])
        return [(self.label, np.einsum("kp,pq,kq->k", s, M, s))]

    def affine(self, rng: np.random.Generator, draws: int, ctx: _Context) -> tuple[np.ndarray, np.ndarray]:
        """Per draw, the map p -> M p + t stretching by e along a random direction n (about the centroid)."""
        theta = rng.uniform(0.0, math.radians(self.max_tilt_deg), draws)
        phi = rng.uniform(0.0, math.pi, draws)
        e = 1.0 / np.cos(theta) - 1.0
        n = np.stack([np.cos(phi), np.sin(phi)], axis=1)
        M = np.eye(2) + e[:, None, None] * n[:, :, None] * n[:, None, :]    # stretch along n
        c = np.asarray(ctx.centroid)
        return M, c - M @ c


@dataclass(frozen=True)
class ErrorModel:
    """How a measured geometry may differ from the truth: independent components, summed.

    An empty model states no uncertainty; then none is reported.
    """

    components: tuple = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "components", tuple(self.components))

    def __bool__(self) -> bool:
        return bool(self.components)



def affine_jacobian(build: Callable[[np.ndarray], Section], values: Sequence[float],
                    *, step: float = 1e-3) -> np.ndarray:
    """d(vertex coordinates)/d(parameter) of a builder that is affine in its parameters.

    Every parametric shape of :mod:`tracer.section.shapes` places its vertices at affine functions of
    its dimensions (all corners are right angles, so every arc's angles are fixed); central
    differences are then exact up to rounding, and a mismatch of the one-sided differences
    would show a builder that is not affine.

    Parameters
    ----------
    build : callable
        Parameters [mm] to a Section with a fixed number of vertices.
    values : sequence of float
        The parameters [mm].
    step : float
        Difference step [mm].

    Returns
    -------
    ndarray, shape (P, 2, N)
    """
    from ..section.geometry import trusted_geometry

    p0 = np.asarray(values, dtype=float)
    base, _ = build(p0).vertices()
    J = np.empty((len(p0), 2, len(base)))
    for j in range(len(p0)):
        e = np.zeros_like(p0)
        e[j] = step
        with trusted_geometry():          # tiny steps of a validated shape
            plus, _ = build(p0 + e).vertices()
            minus, _ = build(p0 - e).vertices()
        if plus.shape != base.shape or minus.shape != base.shape:
            raise ValueError(f"parameter {j}: the vertex count changes with it; it cannot be a linear reading")
        fwd, bwd = (plus - base) / step, (base - minus) / step
        if not np.allclose(fwd, bwd, rtol=1e-6, atol=1e-6):
            raise ValueError(f"parameter {j}: the geometry is not affine in it")
        J[j] = (0.5 * (fwd + bwd)).T
    return J


def rotate_model(model: ErrorModel, angle: float, origin: tuple[float, float]) -> ErrorModel:
    """The error model of the geometry turned by `angle` [deg] about `origin` [mm]."""
    from dataclasses import replace

    a = math.radians(angle)
    R = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
    o = np.asarray(origin, dtype=float)
    out = []
    for comp in model.components:
        if isinstance(comp, Readings):
            comp = replace(comp, jacobian=np.einsum("ab,pbn->pan", R, comp.jacobian))
        elif isinstance(comp, ScaleError):
            comp = replace(comp, origin=tuple(R @ (np.asarray(comp.origin) - o) + o))
        elif isinstance(comp, HomographyError):
            T = np.eye(3)
            T[:2, :2], T[:2, 2] = R, o - R @ o
            comp = _rotated_homography(comp, T)
        out.append(comp)     # point noise, offsets and tilt are the same in every orientation
    return ErrorModel(tuple(out))


def _rotated_homography(comp: HomographyError, T: np.ndarray) -> HomographyError:
    """H' = T H; its covariance by the linear map of the eight free entries (normalised)."""
    H2 = T @ comp.H
    J = np.empty((8, 8))
    for j in range(8):   # d(normalised T H)/d(h_j): T H is linear in H, the normalisation by H'[2, 2]
        dH = np.zeros(9)
        dH[j] = 1.0
        d = (T @ dH.reshape(3, 3)).ravel()
        J[:, j] = (d[:8] * H2[2, 2] - H2.ravel()[:8] * d[8]) / H2[2, 2] ** 2
    return HomographyError(H2 / H2[2, 2], J @ comp.covariance @ J.T, label=comp.label)


# ---------------------------------------------------------------------------------------------
def _standard(rng: np.random.Generator, shape, distribution: str) -> np.ndarray:
    """Draws with mean 0 and standard deviation 1."""
    if distribution == "normal":
        return rng.standard_normal(shape)
    return rng.uniform(-_SQRT3, _SQRT3, shape)


def _circulant_quadform(s: np.ndarray, eigen: np.ndarray | None) -> np.ndarray:
    """Σ_ij s_i s_j C_ij for each row of s, with C circulant of eigenvalues `eigen` (None: C = I)."""
    if eigen is None:
        return np.einsum("kn,kn->k", s, s)
    S = np.fft.fft(s, axis=1)
    return (np.abs(S) ** 2 @ eigen) / s.shape[1]


def _check_distribution(distribution: str) -> None:
    if distribution not in ("normal", "rectangular"):
        raise InputError(f"distribution = {distribution!r}; use 'normal' or 'rectangular'")


def _check_u(name: str, u: np.ndarray) -> None:
    u = np.asarray(u, dtype=float)
    if not np.all(np.isfinite(u)) or np.any(u <= 0):
        raise InputError(f"{name} must be positive and finite; got {u.ravel()[:3].tolist()}")
