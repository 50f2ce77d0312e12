"""Linear (JCGM 100) and Monte Carlo (JCGM 101) propagation of an :class:`~.models.ErrorModel`,
and what is reported: per property u, the method that gave it, the budget and warnings.

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

import numpy as np

from ..errors import InputError
from ..section.geometry import Section
from ..section.properties import PROPERTY_KEYS, Properties, section_properties
from ..section.sensitivity import property_gradients
from .models import ErrorModel, _Context

__all__ = ["LinearUncertainty", "MonteCarloUncertainty", "Uncertainty", "BUDGET_KEYS", "DEFAULT_SEED",
           "draw_vertices", "propagate_linear", "propagate_monte_carlo", "evaluate_uncertainty"]

#: Properties whose uncertainty budget is reported.
BUDGET_KEYS = ("A", "Ix", "Iy")
#: Random seed of the Monte Carlo draws unless another is asked for: reruns print the same numbers.
DEFAULT_SEED = 20261202
# Linear and Monte Carlo u must agree within this share of u, or Monte Carlo is reported.
_AGREE = 0.10
# A spread below this share of a property's size is floating-point rounding, not uncertainty.
_ROUNDING = 1e-9



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


def draw_vertices(section: Section, model: ErrorModel, *, draws: int, seed: int = DEFAULT_SEED,
                  props: Properties | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Vertex coordinates (D, N) of `draws` copies of `section` perturbed by `model` [mm].

    For Monte Carlo evaluations outside this module (the torsion analysis).
    """
    p = props if props is not None else section_properties(section)
    return _draw(_Context.of(section, p), model, np.random.default_rng(seed), draws)


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
