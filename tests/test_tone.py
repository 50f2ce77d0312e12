"""The sRGB tone curve and the shift it gives the halfway level of a blurred edge."""

import math

import numpy as np
import pytest

from tracer.photo.tone import LIGHT_OF_8BIT, halfway_shift, to_levels, to_light


def test_the_curve_is_iec_61966_2_1():
    # IEC 61966-2-1:1999 transfer function, evaluated by hand: V = 0.5 -> ((0.5 + 0.055) / 1.055)^2.4
    # = 0.214041; V = 0.04 lies on the linear toe: 0.04 / 12.92 = 0.0030960.
    assert float(to_light(np.float32(0.5))) == pytest.approx(0.214041, abs=2e-6)
    assert float(to_light(np.float32(0.04))) == pytest.approx(0.0030960, abs=1e-7)
    v = np.linspace(0, 1, 101, dtype=np.float32)
    assert np.allclose(to_levels(to_light(v)), v, atol=2e-6)
    assert LIGHT_OF_8BIT[255] == pytest.approx(1.0) and LIGHT_OF_8BIT[0] == 0.0
    assert np.all(np.diff(LIGHT_OF_8BIT) > 0)


@pytest.mark.parametrize("dark,bright,sigma", [(0.47, 0.84, 2.0), (0.2, 0.8, 1.5), (0.1, 0.95, 0.7)])
def test_the_shift_is_where_an_encoded_blurred_step_crosses_its_halfway_level(dark, bright, sigma):
    # Closed form of a Gaussian-blurred step in light, L(x) = L0 + (L1 - L0) (1 + erf(x / (σ√2))) / 2
    # (textbook), encoded with the curve; the halfway level of the encoded profile is found by
    # bisection, and its distance from x = 0 (the true edge) must be halfway_shift's.
    l0, l1 = float(to_light(np.float32(dark))), float(to_light(np.float32(bright)))
    mid = 0.5 * (dark + bright)

    def level(x: float) -> float:
        return float(to_levels(np.float32(l0 + (l1 - l0) * 0.5 * (1 + math.erf(x / (sigma * math.sqrt(2)))))))

    lo, hi = -5 * sigma, 5 * sigma
    for _ in range(60):
        m = 0.5 * (lo + hi)
        lo, hi = (m, hi) if level(m) < mid else (lo, m)
    crossing = 0.5 * (lo + hi)
    assert crossing < 0                                      # on the dark side (x < 0)
    assert halfway_shift(dark, bright, sigma) == pytest.approx(-crossing, rel=1e-3)
