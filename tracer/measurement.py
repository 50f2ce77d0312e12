"""The one thing every input becomes: a :class:`Measurement`.

A Measurement is the section geometry in millimetres plus what is known about how it was
measured: where it came from (provenance) and the stated uncertainty of its readings. Nothing
downstream knows whether the geometry came from calipers or a photo except through these.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any, Mapping

from .section.geometry import Section
from .uncertainty import ErrorModel

__all__ = ["Measurement"]


@dataclass(frozen=True)
class Measurement:
    """A measured section and its provenance.

    Attributes
    ----------
    section : Section
        The geometry [mm], in the input's own coordinates (DESIGN.md).
    name : str
        The member's name, e.g. ``"bay 3 joist"``.
    source : mapping
        Provenance for the result JSON's ``source`` record (kind, path, sha256, …).
    uncertainty : mapping
        The uncertainty as stated in the input, lengths in mm (``{"reading": u}``,
        ``{"resolution": r}``, ``{"scale": u_rel}``); empty when none was stated.
    error_model : ErrorModel
        How the geometry may differ from the truth; empty when no uncertainty was stated.
    mc_proxy : (Section, ErrorModel), optional
        A coarser discretisation of the same geometry and its error model, for Monte Carlo
        draws (parametric shapes).
    warnings : tuple of str
        What the input stage found that a person must know (e.g. a missing lens profile).
    """

    section: Section
    name: str
    source: Mapping[str, Any] = field(default_factory=dict)
    uncertainty: Mapping[str, float] = field(default_factory=dict)
    error_model: ErrorModel = field(default_factory=ErrorModel)
    mc_proxy: tuple[Section, ErrorModel] | None = None
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "source", MappingProxyType(dict(self.source)))
        object.__setattr__(self, "uncertainty", MappingProxyType(dict(self.uncertainty)))

    def rotated(self, angle: float, origin: tuple[float, float]) -> Measurement:
        """The measurement turned by `angle` [deg] about `origin` [mm], its error model with it.

        Vertex order is kept, so per-vertex error models turn with the geometry.
        """
        from .uncertainty import rotate_model

        def turn(section: Section) -> Section:
            return section.rotated(angle, origin=origin)

        proxy = None
        if self.mc_proxy is not None:
            proxy = (turn(self.mc_proxy[0]), rotate_model(self.mc_proxy[1], angle, origin))
        return replace(self, section=turn(self.section), error_model=rotate_model(self.error_model, angle, origin),
                       mc_proxy=proxy,
                       source={**self.source, "aligned": {"to": "principal axes", "rotation_deg": angle}})
