import numpy as np
import pytest

from photpipe.rotation.trigsums import direct_trig_sums, trig_sums


def test_direct_sums_exact_small_case():
    # Σ exp(2πi f t) for t = (0, 1/4) at f = 1: 1 + i (exact arithmetic)
    s = direct_trig_sums(np.array([0.0, 0.25]), np.array([1.0, 1.0]), 1.0, 1.0, 1)
    assert s[0] == pytest.approx(1 + 1j, abs=1e-12)


@pytest.mark.parametrize("harmonic", [pytest.param(h, id=f"h{h}") for h in (1, 3, 8)])
def test_fft_sums_match_direct(harmonic):
    # The slow direct sum is the oracle (Press & Rybicki 1989, ApJ 338, 277, eq. 5)
    rng = np.random.default_rng(11)
    t = np.sort(rng.uniform(-15, 25, 700))
    w = np.vstack([rng.uniform(0.5, 2.0, 700), rng.normal(size=700)])
    fast = trig_sums(t, w, harmonic * 0.3, harmonic * 0.004, 3000)
    slow = direct_trig_sums(t, w, harmonic * 0.3, harmonic * 0.004, 3000)
    scale = np.abs(w).sum(axis=1, keepdims=True)
    assert np.max(np.abs(fast - slow) / scale) < 1e-7
