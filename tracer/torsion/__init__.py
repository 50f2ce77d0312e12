"""Torsion and warping by finite elements: the mesh, then J, the shear centre and Cw."""

from .warping import (evaluate_torsion, Torsion, TORSION_DRAWS, TORSION_KEYS, torsion_properties,
                      TorsionModel, TorsionUncertainty)

__all__ = ["Torsion", "TORSION_KEYS", "TORSION_DRAWS", "torsion_properties", "TorsionModel",
           "TorsionUncertainty", "evaluate_torsion"]
