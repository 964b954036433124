import numpy as np
import pytest

from photpipe.nucleus import PSFModel, nucleus_coma_components, nucleus_coma_image


def test_components_match_the_slow_oracle(oracle):
    # oracle: 7x oversampled rendering of the same scene (tests/nucleus/conftest.py)
    psf = PSFModel.from_moffat(3.0, beta=3.0)
    comps, names = nucleus_coma_components((61, 61), 30.3, 29.8, 1.0, psf)
    assert names == ["nucleus_flux", "coma_k", "sky"]
    # pad 15 = the production kernel half-width (5 FWHM), so both truncate the PSF alike
    ref_c = oracle((61, 61), 30.3, 29.8, nucleus_flux=0.0, coma_k=1.0, fwhm=3.0, pad=15)
    ref_n = oracle((61, 61), 30.3, 29.8, nucleus_flux=1.0, coma_k=0.0, fwhm=3.0, pad=15)
    core = (slice(25, 36), slice(25, 36))
    # the refined core keeps the coma within 0.3 % of the oracle (a coarse convolution is off by
    # ~1 % there)
    np.testing.assert_allclose(comps[1][core], ref_c[core], rtol=3e-3)
    np.testing.assert_allclose(comps[1], ref_c, rtol=3e-3)
    np.testing.assert_allclose(comps[0][core], ref_n[core] / ref_n[core].sum()
                               * comps[0][core].sum(), rtol=2e-3)
    assert np.all(comps[2] == 1.0)


def test_model_is_linear_in_amplitudes():
    psf = PSFModel.from_moffat(3.0)
    kw = {"psf": psf, "gamma": 1.3}
    a = nucleus_coma_image((41, 41), 20.2, 20.1, nucleus_flux=100.0, coma_k=0.0, **kw)
    b = nucleus_coma_image((41, 41), 20.2, 20.1, nucleus_flux=0.0, coma_k=3.0, sky=2.0, **kw)
    c = nucleus_coma_image((41, 41), 20.2, 20.1, nucleus_flux=100.0, coma_k=3.0, sky=2.0, **kw)
    np.testing.assert_allclose(a + b, c, rtol=1e-12)


def test_modulation_adds_a_dipole():
    psf = PSFModel.from_moffat(3.0)
    base = nucleus_coma_image((41, 41), 20.0, 20.0, nucleus_flux=0.0, coma_k=10.0, psf=psf)
    mod = nucleus_coma_image((41, 41), 20.0, 20.0, nucleus_flux=0.0, coma_k=10.0, psf=psf,
                             modulation=[(0.3, 0.0)])
    # cos θ term: brighter towards +x, fainter towards -x, unchanged on the y axis
    assert mod[20, 30] > base[20, 30] and mod[20, 10] < base[20, 10]
    assert mod[30, 20] == pytest.approx(base[30, 20], rel=1e-9)
