"""What the assessments share: their cautions, the Monte Carlo copies of the measured section,
quantities with u as the JSON gives them, a percentile with its u, and the JSON documents' head."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .._version import __version__
from ..measurement import Measurement
from ..section.properties import PROPERTY_KEYS, Properties, section_properties
from ..uncertainty import DEFAULT_SEED

__all__ = ["ASSESS_CAUTIONS", "quantity", "section_draws", "percentile_with_u", "props_rows", "json_head"]

#: Fixed text shown with every table, JSON and figure of the assessment commands (DESIGN.md, cautions).
ASSESS_CAUTIONS: tuple[str, ...] = (
    "Screening only; this is not a design check.",
    "Lateral-torsional buckling, local buckling, shear, bearing, connections, defects and durability are not "
    "checked; a section measured at one place says nothing of the rest of the member.",
    "A qualified engineer must assess any member for reuse under the local building code.",
)


def quantity(value: float, u: float | None, unit: str) -> dict[str, Any]:
    """``{value, u, unit}`` as in the result JSON; None for a value or u that is not finite or known."""
    return {"value": _finite(value), "u": None if u is None else _finite(u), "unit": unit}


def section_draws(measurement: Measurement, *, draws: int, seed: int = DEFAULT_SEED):
    """Monte Carlo copies of the measured section.

    Returns
    -------
    section : Section
        The geometry drawn from (the measurement's coarse copy for parametric shapes).
    x, y : ndarray (D, N)
        Vertices of the draws [mm].
    rows : dict of ndarray (D,)
        Every property of :data:`PROPERTY_KEYS` of every draw.
    base : dict of ndarray (1,)
        The same of the undisturbed `section`.
    """
    from ..uncertainty.ensemble import ensemble_properties
    from ..uncertainty import draw_vertices

    sec, model = measurement.mc_proxy or (measurement.section, measurement.error_model)
    p = section_properties(sec)
    x, y = draw_vertices(sec, model, draws=draws, seed=seed, props=p)
    table = ensemble_properties(sec, x, y, base=p)
    return sec, x, y, dict(zip(PROPERTY_KEYS, table)), props_rows(p)


def percentile_with_u(samples: np.ndarray, q: float) -> tuple[float, float]:
    """The `q`-th percentile of Monte Carlo samples and its sampling standard uncertainty.

    The u is half the distance between the order statistics at q ± 100·√(p(1-p)/D), the
    distribution-free interval of a quantile (binomial count of draws below it, normal
    approximation; e.g. W. J. Conover, *Practical Nonparametric Statistics*, 3rd ed., 1999,
    sec. 3.2, from memory).
    """
    s = np.asarray(samples, dtype=float)
    s = s[np.isfinite(s)]
    p = q / 100.0
    d = 100.0 * math.sqrt(p * (1 - p) / max(len(s), 1))
    lo, mid, hi = np.percentile(s, [max(q - d, 0.0), q, min(q + d, 100.0)])
    return float(mid), float(0.5 * (hi - lo))


def props_rows(p: Properties) -> dict[str, np.ndarray]:
    return {k: np.array([v]) for k, v in p.values().items()}


def json_head(schema: str, measurement: Measurement) -> dict[str, Any]:
    return {"schema": schema, "tool": {"name": "tracer", "version": __version__}, "name": measurement.name,
            "source": dict(measurement.source)}


def _finite(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None
