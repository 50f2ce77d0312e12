"""How far the numbers can be trusted: the error model's kinds (:mod:`.models`), linear (JCGM 100)
and Monte Carlo (JCGM 101) propagation (:mod:`.propagation`), and every property of many perturbed
sections at once (:mod:`.ensemble`)."""

from .models import (BoundaryOffset, ErrorModel, HomographyError, PointNoise, Readings, ScaleError, TiltAllowance,
                     affine_jacobian, resolution_u, rotate_model)
from .propagation import (BUDGET_KEYS, DEFAULT_SEED, LinearUncertainty, MonteCarloUncertainty, Uncertainty,
                          draw_vertices, evaluate_uncertainty, propagate_linear, propagate_monte_carlo)

__all__ = ["Readings", "PointNoise", "BoundaryOffset", "ScaleError", "HomographyError", "TiltAllowance",
           "ErrorModel", "LinearUncertainty", "MonteCarloUncertainty", "Uncertainty", "BUDGET_KEYS",
           "DEFAULT_SEED", "affine_jacobian", "draw_vertices", "rotate_model", "propagate_linear",
           "propagate_monte_carlo", "evaluate_uncertainty", "resolution_u"]
