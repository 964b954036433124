"""Truth recovery over a grid of nucleus fractions and signal-to-noise (issue 5 checks).

Truth comes from renderers independent of the fitter: the slow 5x-oversampled oracle of
conftest.py, and the project's synthetic-sky generator (photpipe.scenario). The reference for the
scatter is the Cramér-Rao bound at the true parameters (Kay 1993, eq. 3.31).
"""

import warnings

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.nucleus import PSFModel, fisher_bound, fit_nucleus, measure_psf

SCALE = 1.0 * u.arcsec / u.pix
N_SEEDS = 16
FREE = ("nucleus_flux", "coma_k", "sky", "x0", "y0")


def _run(signal, truth_xy, flux, psf, frame_maker, *, seeds, seed0, gamma=1.0, star_xy=None,
         cutout=101):
    x0, y0 = truth_xy
    got = []
    for seed in range(seeds):
        frame = frame_maker(signal, np.random.default_rng(seed0 + seed))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", PoorResultWarning)
            fit = fit_nucleus(frame, round(x0) + 0.4, round(y0) - 0.4, psf, pixel_scale=SCALE,
                              gamma=gamma, bootstrap=0, profile=False, star_xy=star_xy,
                              cutout=cutout)
        got.append(fit.nucleus_flux_e)
    got = np.array(got)
    return (got.mean() / flux - 1.0), got.std(ddof=1)


def _crb(signal, truth_xy, flux, k, sky, psf, *, cutout=101, free=FREE):
    x0, y0 = truth_xy
    half = cutout // 2
    ix, iy = int(round(x0)), int(round(y0))
    box = signal[iy - half:iy + half + 1, ix - half:ix + half + 1]
    var = np.clip(box, 0, None) + 25.0  # conftest.READ_NOISE = 5 e
    crb = fisher_bound(box.shape, x0=x0 - ix + half, y0=y0 - iy + half, nucleus_flux=flux,
                       coma_k=k, sky=sky, psf=psf, variance=var, free=free)
    return crb.sigma["nucleus_flux"]


@pytest.mark.slow
@pytest.mark.parametrize("fraction", [pytest.param(f, id=f"nucleus{int(f * 100)}%")
                                      for f in (0.1, 0.5, 0.9)])
@pytest.mark.parametrize("flux", [pytest.param(2e4, id="F2e4"), pytest.param(2e5, id="F2e5")])
def test_oracle_grid_bias_and_scatter(fraction, flux, oracle, make_frame, k_for_fraction):
    fwhm, sky = 3.0, 200.0
    psf = PSFModel.from_moffat(fwhm, beta=3.0)
    k = k_for_fraction(fraction, flux, fwhm)
    xy = (70.3, 69.8)
    signal = oracle((141, 141), *xy, nucleus_flux=flux, coma_k=k, fwhm=fwhm, sky=sky, n=5)
    bound = _crb(signal, (xy[0], xy[1]), flux, k, sky, psf)
    seed0 = int(1000 * fraction + flux / 100)  # independent noise in each cell
    bias, scatter = _run(signal, xy, flux, psf, make_frame, seeds=N_SEEDS, seed0=seed0)
    print(f"f={fraction} F={flux:g} S/N={flux / bound:.0f} bias={bias:+.4f} "
          f"scatter/CRB={scatter / bound:.2f}")
    # issue 5: bias under 2 %, scatter within 1.5 times the Cramér-Rao bound
    assert abs(bias) < 0.02
    assert scatter < 1.5 * bound


@pytest.mark.slow
@pytest.mark.parametrize("fraction", [pytest.param(f, id=f"nucleus{int(f * 100)}%")
                                      for f in (0.5, 0.9)])
def test_scenario_generator_bias_and_scatter(fraction, scenario, make_frame, k_for_fraction):
    # the synthetic-sky generator renders the coma on the pixel grid and convolves it there; its
    # own error in the central pixels (~1-2 % at FWHM 3-4 px, measured against the oracle) is why
    # the coma-dominated 10 % case is checked against the oracle above
    flux = 5e4
    fwhm = 4.0
    k = k_for_fraction(fraction, flux, fwhm)
    truth = scenario(nucleus_flux_e=flux, coma_k_e=k, fwhm_pix=fwhm, seed=7)
    psf = PSFModel.from_moffat(truth.fwhm_pix, beta=3.0)
    xy = (truth.comet_x, truth.comet_y)
    bound = _crb(truth.signal, xy, flux, k, truth.sky_e, psf)
    bias, scatter = _run(truth.signal, xy, flux, psf, make_frame, seeds=12,
                         seed0=int(5000 * fraction))
    print(f"scenario f={fraction} S/N={flux / bound:.0f} bias={bias:+.4f} "
          f"scatter/CRB={scatter / bound:.2f}")
    assert abs(bias) < 0.02
    assert scatter < 1.5 * bound


@pytest.mark.slow
def test_scenario_end_to_end_with_measured_psf(scenario, make_frame, k_for_fraction):
    # stars and comet from the generator; PSF measured from the stars; stars masked in the fit
    flux, fwhm = 5e4, 4.0
    k = k_for_fraction(0.5, flux, fwhm)
    truth = scenario(nucleus_flux_e=flux, coma_k_e=k, fwhm_pix=fwhm, seed=3, n_stars=40,
                     shape=(241, 241))
    frame = make_frame(truth.signal, np.random.default_rng(31))
    xy = np.column_stack([truth.stars["x"], truth.stars["y"]])
    psf = measure_psf(frame, xy, exclude_xy=(truth.comet_x, truth.comet_y), exclude_radius=30.0)
    assert psf.flags == ()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        fit = fit_nucleus(frame, truth.comet_x + 0.5, truth.comet_y - 0.3, psf,
                          pixel_scale=SCALE, gamma="free", bootstrap=10,
                          rng=np.random.default_rng(2), star_xy=xy)
    print(f"end-to-end: F/F_true-1={fit.nucleus_flux_e / flux - 1:+.4f} "
          f"err={fit.nucleus_flux_err_e / flux:.4f} gamma={fit.coma_gamma:.3f} "
          f"psf={psf.method} fwhm={psf.fwhm_pix:.3f}")
    assert fit.nucleus_flux_e == pytest.approx(flux, abs=3 * fit.nucleus_flux_err_e)
    assert fit.coma_gamma == pytest.approx(1.0, abs=3 * fit.coma_gamma_err)
    assert "profile_disagrees" not in fit.flags


@pytest.mark.slow
def test_oracle_free_gamma_bias_and_scatter(oracle, make_frame, k_for_fraction):
    fwhm, sky, flux = 3.0, 200.0, 1e5
    psf = PSFModel.from_moffat(fwhm, beta=3.0)
    k = k_for_fraction(0.5, flux, fwhm)
    xy = (70.3, 69.8)
    signal = oracle((141, 141), *xy, nucleus_flux=flux, coma_k=k, fwhm=fwhm, sky=sky, n=5)
    bound = _crb(signal, xy, flux, k, sky, psf, free=FREE + ("gamma",))
    bias, scatter = _run(signal, xy, flux, psf, make_frame, seeds=12, seed0=777, gamma="free")
    print(f"free gamma f=0.5 S/N={flux / bound:.0f} bias={bias:+.4f} "
          f"scatter/CRB={scatter / bound:.2f}")
    assert abs(bias) < 0.02
    assert scatter < 1.5 * bound
