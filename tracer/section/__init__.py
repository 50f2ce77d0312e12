"""The cross-section itself: its validated geometry, parametric shapes, widths at stations, exact
properties and their sensitivities to the vertices."""
