"""tracer: exact section properties of members that no catalogue describes.

The public API, gathered from the modules that define it.
"""

__version__ = "0.1.0"

from .errors import (GeometryError, InputError, MeasurementError, ShapeError, SheetError, TracerError,
                     UnitError)
from .geometry import Part, Section
from .properties import (PROPERTY_KEYS, PROPERTY_NAMES, Moments, Properties, area_moments, plastic_moduli,
                         section_properties)
from .shapes import (ALPHA_MAX, SHAPE_KINDS, angle, arc_points, box, channel, i_section, make_shape, rectangle,
                     round_bar, tee, tube)
from .stations import stations_section

__all__ = [
    "__version__",
    "TracerError", "InputError", "GeometryError", "ShapeError", "SheetError", "UnitError", "MeasurementError",
    "Section", "Part",
    "Moments", "Properties", "PROPERTY_KEYS", "PROPERTY_NAMES", "area_moments", "plastic_moduli",
    "section_properties",
    "ALPHA_MAX", "SHAPE_KINDS", "arc_points", "make_shape", "rectangle", "i_section", "channel", "angle", "tee",
    "round_bar", "tube", "box",
    "stations_section",
]
