import re

import numpy as np
import pytest

from photpipe.nucleus import PSFModel, fisher_bound, fisher_information


def test_fisher_of_a_straight_line():
    # μ = a + b x, unit variance: F = [[N, Σx], [Σx, Σx²]] (Kay 1993, example 3.4 with σ = 1)
    x = np.arange(5.0)
    j = np.column_stack([np.ones_like(x), x])
    np.testing.assert_allclose(fisher_information(j, np.ones(5)), [[5, 10], [10, 30]])


def test_bound_on_flat_sky_is_sigma_over_root_n():
    # DC level in white Gaussian noise: var(Â) >= σ²/N (Kay 1993, example 3.3)
    psf = PSFModel.from_moffat(3.0)
    crb = fisher_bound((31, 31), x0=15.0, y0=15.0, nucleus_flux=0.0, coma_k=0.0, sky=50.0,
                       psf=psf, variance=np.full((31, 31), 400.0), free=("sky",))
    assert crb.sigma["sky"] == pytest.approx(20.0 / 31.0, rel=1e-12)


def test_bound_on_point_source_flux_with_known_position():
    # a known template P of unknown amplitude: var(F̂) >= 1 / Σ P²/σ² (Kay 1993, eq. 3.31
    # specialised to one linear parameter)
    psf = PSFModel.from_moffat(3.0)
    var = np.full((41, 41), 100.0)
    crb = fisher_bound((41, 41), x0=20.3, y0=19.8, nucleus_flux=1e4, coma_k=0.0, sky=0.0,
                       psf=psf, variance=var, free=("nucleus_flux",))
    p = psf.render((41, 41), 20.3, 19.8)
    assert crb.sigma["nucleus_flux"] == pytest.approx(1.0 / np.sqrt(np.sum(p**2 / var)),
                                                      rel=1e-12)


def test_unknown_parameter_raises():
    with pytest.raises(ValueError, match=re.escape("unknown parameter(s) ['flux'] in 'free'")):
        fisher_bound((21, 21), x0=10.0, y0=10.0, nucleus_flux=1.0, coma_k=0.0, sky=0.0,
                     psf=PSFModel.from_moffat(3.0), variance=np.ones((21, 21)), free=("flux",))
