"""One small family of exceptions.

Every error tracer raises on purpose is a :class:`TracerError`. Its ``exit_status`` is the
command line's exit status for it (DESIGN.md): 2 for bad usage or unreadable input, 1 for input
that was readable but could not be measured. Input errors are also ``ValueError`` so that
library users can catch them the ordinary way.
"""

from __future__ import annotations

__all__ = [
    "TracerError",
    "InputError",
    "GeometryError",
    "ShapeError",
    "SheetError",
    "UnitError",
    "MeasurementError",
]


class TracerError(Exception):
    """Base of every error tracer raises on purpose."""

    exit_status = 1


class InputError(TracerError, ValueError):
    """The input is malformed: the user must change it (exit status 2)."""

    exit_status = 2


class GeometryError(InputError):
    """A ring, hole or part does not describe a valid cross-section."""


class ShapeError(InputError):
    """Dimensions of a parametric shape are missing, negative or impossible."""


class SheetError(InputError):
    """A section sheet cannot be read: the message names the field."""


class UnitError(InputError):
    """An unknown unit, or a length written without one."""


class MeasurementError(TracerError):
    """The input was readable but the job could not be done (exit status 1)."""
