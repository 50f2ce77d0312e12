"""The one thing every input becomes: a :class:`Measurement`.

A Measurement is the section geometry in millimetres plus what is known about how it was
measured: where it came from (provenance) and the stated uncertainty of its readings. Nothing
downstream knows whether the geometry came from calipers or a photo except through these.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any, Mapping

from .geometry import Section

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
        The stated uncertainty of the readings, lengths in mm: ``{"reading": u}`` or
        ``{"resolution": r}``; empty when none was stated.
    """

    section: Section
    name: str
    source: Mapping[str, Any] = field(default_factory=dict)
    uncertainty: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "source", MappingProxyType(dict(self.source)))
        object.__setattr__(self, "uncertainty", MappingProxyType(dict(self.uncertainty)))

    def with_section(self, section: Section, **source_updates: Any) -> Measurement:
        """The same measurement with new geometry, the change recorded in the provenance."""
        return replace(self, section=section, source={**self.source, **source_updates})
