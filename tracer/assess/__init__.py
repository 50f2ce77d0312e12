"""Assessing a measured member: capacity screen, section loss against a nominal, shape fit, and
the tables, materials and tolerances they use. Screening only, never a design check."""

from .screen import (ASSESS_CAUTIONS, bending_stress_factor, CHECK_KEYS, CHECK_UNITS, compare_json,
                     compare_sections, Comparison, fit_json, GRAVITY, LOSS_KEYS, nominal_input,
                     orientation_advice, percentile_with_u, quantity, Screen, screen_capacity, screen_json,
                     section_draws, shape_of)

__all__ = ["ASSESS_CAUTIONS", "CHECK_KEYS", "CHECK_UNITS", "GRAVITY", "Screen", "screen_capacity",
           "screen_json", "bending_stress_factor", "orientation_advice", "quantity", "section_draws",
           "percentile_with_u", "LOSS_KEYS", "Comparison", "compare_sections", "compare_json",
           "nominal_input", "shape_of", "fit_json"]
