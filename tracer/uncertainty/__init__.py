"""How far the numbers can be trusted: the error model's kinds, linear (JCGM 100) and Monte Carlo
(JCGM 101) propagation, and the ensemble of perturbed sections."""

from .propagation import (affine_jacobian, BoundaryOffset, BUDGET_KEYS, DEFAULT_SEED, draw_vertices,
                          ErrorModel, evaluate_uncertainty, HomographyError, LinearUncertainty,
                          MonteCarloUncertainty, PointNoise, propagate_linear, propagate_monte_carlo,
                          Readings, resolution_u, rotate_model, ScaleError, TiltAllowance, Uncertainty)

__all__ = ["Readings", "PointNoise", "BoundaryOffset", "ScaleError", "HomographyError", "TiltAllowance",
           "ErrorModel", "LinearUncertainty", "MonteCarloUncertainty", "Uncertainty", "BUDGET_KEYS",
           "DEFAULT_SEED", "affine_jacobian", "draw_vertices", "rotate_model", "propagate_linear",
           "propagate_monte_carlo", "evaluate_uncertainty", "resolution_u"]
