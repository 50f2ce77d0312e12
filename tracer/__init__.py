"""tracer: exact section properties of members that no catalogue describes.

The public API, gathered from the modules that define it.
"""

from ._version import __version__

from .errors import (GeometryError, InputError, MeasurementError, ShapeError, SheetError, TracerError,
                     UnitError)
from .inputs.sheet import parse_sheet, read_sheet, sheet_text, write_sheet
from .measurement import Measurement
from .result import Result, measure, result_json
from .section.geometry import Part, Section
from .section.properties import (PROPERTY_KEYS, PROPERTY_NAMES, Moments, Properties, area_moments, plastic_moduli,
                         section_properties)
from .section.shapes import (ALPHA_MAX, SHAPE_KINDS, angle, arc_points, box, channel, i_section, make_shape, rectangle,
                     round_bar, tee, tube)
from .section.stations import stations_section
from .torsion import TORSION_KEYS, Torsion, evaluate_torsion, torsion_properties
from .uncertainty import (BoundaryOffset, ErrorModel, HomographyError, PointNoise, Readings, ScaleError,
                          TiltAllowance, Uncertainty, evaluate_uncertainty, propagate_linear, propagate_monte_carlo)

__all__ = [
    "__version__",
    "TracerError", "InputError", "GeometryError", "ShapeError", "SheetError", "UnitError", "MeasurementError",
    "Section", "Part", "Measurement",
    "Moments", "Properties", "PROPERTY_KEYS", "PROPERTY_NAMES", "area_moments", "plastic_moduli",
    "section_properties",
    "Result", "measure", "result_json",
    "ALPHA_MAX", "SHAPE_KINDS", "arc_points", "make_shape", "rectangle", "i_section", "channel", "angle", "tee",
    "round_bar", "tube", "box",
    "read_sheet", "parse_sheet", "sheet_text", "write_sheet",
    "stations_section",
    "TORSION_KEYS", "Torsion", "evaluate_torsion", "torsion_properties",
    "ErrorModel", "Readings", "PointNoise", "BoundaryOffset", "ScaleError", "HomographyError", "TiltAllowance",
    "Uncertainty", "evaluate_uncertainty", "propagate_linear", "propagate_monte_carlo",
]
