"""How far the numbers can be trusted: error models, linear and Monte Carlo propagation.

An :class:`ErrorModel` says how a measured geometry may differ from the truth, as a sum of
independent *components*. Each component can (a) give the variance it adds to every property,
from the exact sensitivities of :mod:`tracer.section.sensitivity` (law of propagation of uncertainty,
JCGM 100:2008, 5.1.2), and (b) draw perturbed geometries for Monte Carlo propagation
(JCGM 101:2008). The kinds:

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

Every reported ``u`` is the root-mean-square deviation of the property about its reported value
(k = 1). For symmetric inputs that is the standard deviation; a one-sided allowance is not
corrected for, and its offset is carried inside u.

References
----------
.. [1] JCGM 100:2008, *Evaluation of measurement data - Guide to the expression of uncertainty
       in measurement*. doi: 10.59161/JCGM100-2008E.
.. [2] JCGM 101:2008, *Evaluation of measurement data - Supplement 1 to the GUM - Propagation
       of distributions using a Monte Carlo method*. doi: 10.59161/JCGM101-2008.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from ..errors import InputError
from ..section.geometry import Section
from ..section.properties import PROPERTY_KEYS, Properties, section_properties
from ..section.sensitivity import property_gradients, ring_neighbours

__all__ = [
    "Readings",
    "PointNoise",
    "BoundaryOffset",
    "ScaleError",
    "HomographyError",
    "TiltAllowance",
    "ErrorModel",
    "LinearUncertainty",
    "MonteCarloUncertainty",
    "Uncertainty",
    "BUDGET_KEYS",
    "DEFAULT_SEED",
    "affine_jacobian",
    "draw_vertices",
    "rotate_model",
    "propagate_linear",
    "propagate_monte_carlo",
    "evaluate_uncertainty",
    "resolution_u",
]

#: Properties whose uncertainty budget is reported.
BUDGET_KEYS = ("A", "Ix", "Iy")
#: Random seed of the Monte Carlo draws unless another is asked for: reruns print the same numbers.
DEFAULT_SEED = 20261202
# Linear and Monte Carlo u must agree within this share of u, or Monte Carlo is reported.
_AGREE = 0.10
_SQRT3 = math.sqrt(3.0)
# A spread below this share of a property's size is floating-point rounding, not uncertainty.
_ROUNDING = 1e-9


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


# ---------------------------------------------------------------------------------------------
# propagation
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class LinearUncertainty:
    """Law of propagation of uncertainty (JCGM 100:2008, 5.1.2).

    Attributes
    ----------
    u : ndarray, shape (K,)
        Standard uncertainty of each property of :data:`PROPERTY_KEYS` (NaN where the property
        is not differentiable there).
    contributions : list of (label, ndarray (K,))
        The variance each input adds, for the uncertainty budget.
    """

    u: np.ndarray
    contributions: list[tuple[str, np.ndarray]]


@dataclass(frozen=True)
class MonteCarloUncertainty:
    """Propagation of distributions (JCGM 101:2008), for every property.

    Attributes
    ----------
    u : ndarray (K,)
        RMS deviation of the draws about the reported value.
    low, high : ndarray (K,)
        Probabilistically symmetric 95 % coverage interval (2.5 and 97.5 percentiles).
    p05 : ndarray (K,)
        5th percentile: the low characteristic value.
    draws : int
    converged : bool
        False when the adaptive rule stopped at its cap.
    """

    u: np.ndarray
    low: np.ndarray
    high: np.ndarray
    p05: np.ndarray
    draws: int
    converged: bool


@dataclass(frozen=True)
class Uncertainty:
    """What is reported: per property u, the method used, the budget, warnings."""

    u: dict[str, float]
    method: dict[str, str]
    budget: dict[str, list[dict[str, float | str]]]
    p05: dict[str, float]
    draws: int
    seed: int
    converged: bool
    warnings: tuple[str, ...] = field(default_factory=tuple)


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


def draw_vertices(section: Section, model: ErrorModel, *, draws: int, seed: int = DEFAULT_SEED,
                  props: Properties | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Vertex coordinates (D, N) of `draws` copies of `section` perturbed by `model` [mm].

    For Monte Carlo evaluations outside this module (the torsion analysis).
    """
    p = props if props is not None else section_properties(section)
    return _draw(_Context.of(section, p), model, np.random.default_rng(seed), draws)


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


def propagate_linear(section: Section, model: ErrorModel, props: Properties | None = None) -> LinearUncertainty:
    """Linear propagation with exact sensitivities (JCGM 100:2008, 5.1.2).

    Parameters
    ----------
    section : Section
    model : ErrorModel
    props : Properties, optional
        The section's properties, if already computed.
    """
    p = props if props is not None else section_properties(section)
    grads = property_gradients(section, p)
    ctx = _Context.of(section, p)
    contributions: list[tuple[str, np.ndarray]] = []
    for comp in model.components:
        contributions += comp.linear(grads, ctx)
    var = np.sum([v for _, v in contributions], axis=0) if contributions else np.zeros(len(PROPERTY_KEYS))
    u = np.sqrt(var)
    return LinearUncertainty(u=np.where(u <= _ROUNDING * _magnitudes(p), 0.0, u), contributions=contributions)


def propagate_monte_carlo(section: Section, model: ErrorModel, props: Properties | None = None, *,
                          draws: int | None = None, seed: int = DEFAULT_SEED, batch: int = 1000,
                          max_draws: int = 50_000, digits: int = 1, percentile: bool = False) -> MonteCarloUncertainty:
    """Monte Carlo propagation of the model's distributions (JCGM 101:2008).

    Parameters
    ----------
    section : Section
    model : ErrorModel
    props : Properties, optional
    draws : int, optional
        A fixed number of draws. Without it the adaptive procedure of JCGM 101:2008, 7.9 runs:
        batches of `batch` draws until, for every property, twice the standard deviation of the
        batch values of each reported statistic, divided by √h, is below the numerical tolerance
        of u to `digits` significant digits (7.9.2), or `max_draws` is reached.
    seed : int
        Seed of the random generator; the same seed gives the same numbers.
    percentile : bool
        Also stabilise the 5th percentile (when the characteristic value is reported).

    Notes
    -----
    JCGM 101 checks the estimate, u and both ends of the coverage interval. tracer reports the
    value computed from the measured geometry, and u (k = 2 intervals are value ± 2u), so it
    stabilises u, and the 5th percentile when that is reported. JCGM 101 suggests batches of
    10^4 draws; batches of 10^3 serve here, the tolerance being checked on every property.
    """
    from .ensemble import ensemble_properties

    p = props if props is not None else section_properties(section)
    base = np.array([p.values()[k] for k in PROPERTY_KEYS])
    scale = _magnitudes(p)
    ctx = _Context.of(section, p)
    rng = np.random.default_rng(seed)
    fixed = draws is not None
    if fixed and draws < 2:
        raise InputError(f"draws = {draws}: at least 2 Monte Carlo draws are needed")
    size = draws if fixed else batch
    values: list[np.ndarray] = []
    stats: list[np.ndarray] = []
    converged = True
    total = 0
    while True:
        x, y = _draw(ctx, model, rng, size)
        v = ensemble_properties(section, x, y, base=p)
        values.append(v)
        total += size
        stats.append(_batch_stats(v, base, percentile))
        if fixed:
            break
        if len(stats) >= 2 and _stable(np.array(stats), np.concatenate(values, axis=1), base, scale, digits):
            break
        if total >= max_draws:
            converged = False
            break
    allv = np.concatenate(values, axis=1)
    with np.errstate(invalid="ignore"):
        u = np.sqrt(np.nanmean((allv - base[:, None]) ** 2, axis=1))
        low, high, p05 = np.nanpercentile(allv, [2.5, 97.5, 5.0], axis=1)
    u = np.where(u <= _ROUNDING * scale, 0.0, u)
    return MonteCarloUncertainty(u=u, low=low, high=high, p05=p05, draws=total, converged=converged)


def evaluate_uncertainty(section: Section, model: ErrorModel, props: Properties | None = None, *,
                         mc_section: Section | None = None, mc_model: ErrorModel | None = None,
                         draws: int | None = None, seed: int = DEFAULT_SEED, percentile: bool = False) -> Uncertainty:
    """Linear and Monte Carlo propagation together, and what to report.

    Linear propagation gives u wherever the property is differentiable; Monte Carlo checks it
    and covers the rest. Where the two differ by more than 10 % of u the Monte Carlo value is
    reported, with a warning. The budget comes from the linear contributions.

    Parameters
    ----------
    section, model : the measured geometry and its error model.
    props : Properties, optional
    mc_section, mc_model : optional
        A coarser discretisation of the same geometry and its model, for the Monte Carlo draws
        only (parametric shapes: the spread of a property does not depend on the chord count to
        the digits reported). Percentiles are shifted onto `section`'s values.
    draws : int, optional
        Fixed number of draws (else adaptive).
    seed : int
    percentile : bool
        Stabilise the 5th percentiles too (they are to be reported).
    """
    p = props if props is not None else section_properties(section)
    values = p.values()
    lin = propagate_linear(section, model, p)
    mc_sec = mc_section if mc_section is not None else section
    mc_props = p if mc_section is None else section_properties(mc_sec)
    mc = propagate_monte_carlo(mc_sec, mc_model if mc_model is not None else model, mc_props, draws=draws, seed=seed,
                               percentile=percentile)
    shift = {k: values[k] - mc_props.values()[k] for k in PROPERTY_KEYS}

    u: dict[str, float] = {}
    method: dict[str, str] = {}
    warnings: list[str] = []
    disagree = []
    for k, key in enumerate(PROPERTY_KEYS):
        u_lin, u_mc = float(lin.u[k]), float(mc.u[k])
        if not math.isfinite(u_mc):
            if math.isfinite(u_lin):
                u[key], method[key] = u_lin, "linear"
            continue
        if math.isfinite(u_lin) and abs(u_lin - u_mc) <= _AGREE * u_mc:
            u[key], method[key] = u_lin, "linear"
        else:
            u[key], method[key] = u_mc, "monte carlo"
            if math.isfinite(u_lin):
                disagree.append(f"{key} ({100 * (u_lin / u_mc - 1):+.0f} %)" if u_mc > 0 else key)
    if disagree:
        warnings.append("linear propagation is not adequate for " + ", ".join(disagree)
                        + ": the Monte Carlo u is reported for these")
    if not p.principal_unique:
        warnings.append("I1 = I2: the principal angle is undefined, so theta has no uncertainty")
    if not mc.converged:
        warnings.append(f"Monte Carlo stopped at {mc.draws} draws before its results were stable "
                        "to one significant digit; rerun with more --draws")

    budget = {}
    for key in BUDGET_KEYS:
        k = PROPERTY_KEYS.index(key)
        total = sum(float(v[k]) for _, v in lin.contributions)
        rows = [{"input": label, "share": float(v[k]) / total if total > 0 else 0.0, "u": math.sqrt(float(v[k]))}
                for label, v in lin.contributions]
        budget[key] = sorted(rows, key=lambda r: -r["share"])
    p05 = {key: values[key] if mc.u[k] == 0 else float(mc.p05[k] + shift[key])
           for k, key in enumerate(PROPERTY_KEYS) if math.isfinite(mc.p05[k])}
    return Uncertainty(u=u, method=method, budget=budget, p05=p05, draws=mc.draws, seed=seed,
                       converged=mc.converged, warnings=tuple(warnings))


# ---------------------------------------------------------------------------------------------
def _draw(ctx: _Context, model: ErrorModel, rng: np.random.Generator, draws: int) -> tuple[np.ndarray, np.ndarray]:
    """Vertex coordinates of `draws` perturbed copies: additive parts first, then transforms."""
    xy = ctx.xy
    x = np.repeat(xy[None, :, 0], draws, axis=0)
    y = np.repeat(xy[None, :, 1], draws, axis=0)
    for comp in model.components:
        if hasattr(comp, "additive"):
            comp.additive(rng, ctx, x, y)
    # Affine components (scale, tilt) compose into one map per draw, applied in one pass.
    M, t = np.broadcast_to(np.eye(2), (draws, 2, 2)), np.zeros((draws, 2))
    affine = False
    for comp in model.components:
        if hasattr(comp, "affine"):
            Mi, ti = comp.affine(rng, draws, ctx)
            M, t = Mi @ M, np.einsum("dab,db->da", Mi, t) + ti
            affine = True
    if affine:
        x, y = (M[:, 0, 0, None] * x + M[:, 0, 1, None] * y + t[:, 0, None],
                M[:, 1, 0, None] * x + M[:, 1, 1, None] * y + t[:, 1, None])
    for comp in model.components:
        if hasattr(comp, "transform"):
            comp.transform(x, y, rng, ctx)
    return x, y


def _batch_stats(v: np.ndarray, base: np.ndarray, percentile: bool) -> np.ndarray:
    """Per property, the reported statistics of one batch: u (RMS about the value), p05."""
    with np.errstate(invalid="ignore"):
        rows = [np.sqrt(np.nanmean((v - base[:, None]) ** 2, axis=1))]
        if percentile:
            rows.append(np.nanpercentile(v, 5.0, axis=1))
    return np.stack(rows)


def _stable(stats: np.ndarray, allv: np.ndarray, base: np.ndarray, scale: np.ndarray, digits: int) -> bool:
    """JCGM 101:2008, 7.9.4: every statistic's batch scatter within the tolerance of u (7.9.2)."""
    h = stats.shape[0]
    with np.errstate(invalid="ignore"):
        s = np.nanstd(stats, axis=0, ddof=1) / math.sqrt(h)           # (statistics, K)
        u = np.sqrt(np.nanmean((allv - base[:, None]) ** 2, axis=1))
    for k in range(len(base)):
        if not math.isfinite(u[k]) or u[k] <= _ROUNDING * scale[k]:
            continue                                                     # no spread but rounding
        exponent = math.floor(math.log10(u[k])) - (digits - 1)
        delta = 0.5 * 10.0 ** exponent
        if np.any(2 * s[:, k] > delta):
            return False
    return True


def _magnitudes(p: Properties) -> np.ndarray:
    """A size for each property (√A to its power of length; 180° for theta), to tell rounding."""
    from ..units import PROPERTY_DIMENSIONS

    root = math.sqrt(p.A)
    return np.array([180.0 if PROPERTY_DIMENSIONS[k] is None else root ** PROPERTY_DIMENSIONS[k]
                     for k in PROPERTY_KEYS])


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
