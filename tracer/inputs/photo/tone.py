"""The sRGB tone curve: grey levels as stored in a photo, and the light they stand for.

A lens blurs light, not stored levels: a camera (or scanner) records the blurred light and then
encodes it with a tone curve, close to sRGB for phones, cameras and scanners. The halfway level
of a blurred edge lies on the true edge only in light; in sRGB levels it lies towards the dark
side, by 0.2 to 0.7 σ for the contrasts of members on their grounds (σ the blur). So edges are
found on levels decoded to light, and the renderer of synthetic photos composites, blurs and
lights in light and then encodes.

References
----------
.. [1] IEC 61966-2-1:1999, *Multimedia systems and equipment - Colour measurement and
       management - Part 2-1: Default RGB colour space - sRGB*, the transfer function.
"""

from __future__ import annotations

import numpy as np

__all__ = ["to_light", "to_levels", "LIGHT_OF_8BIT"]


def to_light(levels: np.ndarray) -> np.ndarray:
    """sRGB levels (uint8 0..255, or floats 0..1) to relative light 0..1 (float32) [1]."""
    if levels.dtype == np.uint8:
        return LIGHT_OF_8BIT[levels]
    v = np.asarray(levels, dtype=np.float32)
    return np.where(v <= 0.04045, v / 12.92, ((np.maximum(v, 0.0) + 0.055) / 1.055) ** 2.4).astype(np.float32)


def to_levels(light: np.ndarray) -> np.ndarray:
    """Relative light 0..1 to sRGB levels 0..1 (float32), the inverse of :func:`to_light` [1]."""
    v = np.clip(np.asarray(light, dtype=np.float32), 0.0, None)
    return np.where(v <= 0.0031308, 12.92 * v, 1.055 * v ** (1 / 2.4) - 0.055).astype(np.float32)


#: Light of each 8-bit level (a lookup table).
LIGHT_OF_8BIT = to_light(np.arange(256, dtype=np.float32) / 255.0)
