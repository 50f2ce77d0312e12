"""Assessing a measured member: a capacity screen, section loss against a nominal, shape fits.

Three jobs, one per public entry point, each carrying the measurement's uncertainty through by
Monte Carlo draws of the measured section (:func:`tracer.uncertainty.draw_vertices`):

- :func:`screen_capacity` (:mod:`.screen`) — the bending moment, stress, utilisation and deflection of the member
  used as a single-span beam, the longest span that meets both strength and deflection, and
  which way up it is stiffest.
- :func:`compare_sections` (:mod:`.loss`) — the measured section registered onto a nominal one, the loss of A,
  Ix, Iy, Sx, Zx and J in per cent, and the local thickness of each plate element against the
  nominal and its rolling tolerance (:mod:`tracer.assess.register`, :mod:`tracer.assess.tolerances`).
- :func:`fit_shape` — the dimensions of a parametric kind fitted to the measured outline
  (:mod:`tracer.assess.fit`).

Every output carries :data:`ASSESS_CAUTIONS`. These are screens, not design checks.
"""

from .fit import fit_json
from .loss import LOSS_KEYS, Comparison, compare_json, compare_sections
from .nominal import nominal_input, shape_of
from .screen import (CHECK_KEYS, CHECK_UNITS, GRAVITY, Screen, bending_stress_factor, orientation_advice,
                     screen_capacity, screen_json)
from .shared import ASSESS_CAUTIONS, percentile_with_u, quantity, section_draws

__all__ = ["ASSESS_CAUTIONS", "CHECK_KEYS", "CHECK_UNITS", "GRAVITY", "Screen", "screen_capacity",
           "screen_json", "bending_stress_factor", "orientation_advice", "quantity", "section_draws",
           "percentile_with_u", "LOSS_KEYS", "Comparison", "compare_sections", "compare_json",
           "nominal_input", "shape_of", "fit_json"]
