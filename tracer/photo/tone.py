"""The sRGB tone curve: grey levels as stored in a photo, and the light they stand for.

A lens blurs light, not stored levels: a camera (or scanner) records the blurred light and then
encodes it with a tone curve, close to sRGB for phones, cameras and scanners. The halfway level
of a blurred edge lies on the true edge only in light; in sRGB levels it lies towards the dark
side, by 0.2 to 0.7 σ for the contrasts of members on their grounds (σ the blur).
:func:`halfway_shift` gives that shift for an edge's two levels and its blur.

References
----------
.. [1] IEC 61966-2-1:1999, *Multimedia systems and equipment - Colour measurement and
       management - Part 2-1: Default RGB colour space - sRGB*, the transfer function.
"""

from __future__ import annotations

import numpy as np

__all__ = ["to_light", "to_levels", "halfway_shift", "LIGHT_OF_8BIT"]


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


def halfway_shift(level_a: float, level_b: float, blur_px: float) -> float:
    """How far [px] the halfway level between two sRGB levels (0..1) of a Gaussian-blurred edge
    lies from the true edge, towards the darker side, when the blur (σ = `blur_px`) acted on
    light: σ |Φ⁻¹((L(mid) - L_dark) / (L_bright - L_dark))|, L the light of a level [1]."""
    from statistics import NormalDist

    lo, hi = sorted((float(level_a), float(level_b)))
    l_lo, l_hi = (float(to_light(np.float32(v))) for v in (lo, hi))
    if l_hi - l_lo <= 1e-9:
        return 0.0
    share = (float(to_light(np.float32(0.5 * (lo + hi)))) - l_lo) / (l_hi - l_lo)
    return abs(blur_px * NormalDist().inv_cdf(min(max(share, 1e-6), 1 - 1e-6)))
