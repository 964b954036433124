import numpy as np
import pytest
from astropy.timeseries import LombScargle

from photpipe.rotation.harmonic_sums import harmonic_chi2


@pytest.fixture
def data():
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(0, 18, 250))
    dy = rng.uniform(0.02, 0.05, 250)
    y = 0.2 * np.cos(2 * np.pi * 3.1 * t) + 0.06 * np.sin(2 * np.pi * 1.55 * t + 1)
    return t, y + rng.normal(0, dy), dy


@pytest.mark.parametrize("nterms", [pytest.param(n, id=f"nterms{n}") for n in (1, 2, 3)])
def test_power_agrees_with_astropy(data, nterms):
    # Reference: astropy.timeseries.LombScargle (VanderPlas 2018, ApJS 236, 16), exact
    # 'slow'/'chi2' methods, floating mean, standard normalisation 1 - χ²/χ²_ref
    t, y, dy = data
    f0, df, nf = 0.5, 0.01, 800
    chi2, ref = harmonic_chi2(t, y, dy, f0, df, nf, max_order=3)
    freq = f0 + df * np.arange(nf)
    method = "slow" if nterms == 1 else "chi2"
    expected = LombScargle(t, y, dy, nterms=nterms).power(freq, method=method)
    np.testing.assert_allclose(1 - chi2[nterms - 1] / ref, expected, atol=2e-6)


def test_fft_and_direct_engines_agree(data):
    t, y, dy = data
    fast, _ = harmonic_chi2(t, y, dy, 0.5, 0.01, 500, max_order=4)
    slow, _ = harmonic_chi2(t, y, dy, 0.5, 0.01, 500, max_order=4, engine="direct")
    np.testing.assert_allclose(fast, slow, rtol=1e-6)


def test_chi2_falls_with_order(data):
    t, y, dy = data
    chi2, ref = harmonic_chi2(t, y, dy, 0.5, 0.01, 300, max_order=4)
    assert np.all(np.diff(chi2, axis=0) <= 1e-6 * ref)
