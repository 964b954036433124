import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.models.moffat import moffat_pixel_image
from photpipe.nucleus import SHARED_RESIDUAL_SIGMA, PSFModel, measure_psf


@pytest.mark.slow
def test_moffat_psf_recovers_scenario_fwhm(star_frame):
    frame, xy, truth = star_frame
    psf = measure_psf(frame, xy, epsf="always")
    assert psf.n_stars >= 5
    assert psf.flags == ()
    assert set(psf.scores) == {"moffat", "epsf"}
    # truth: the generator's FWHM (4.0 px) and β = 3, round PSF
    assert psf.fwhm_pix == pytest.approx(truth.fwhm_pix, rel=0.03)
    assert psf.ellipticity < 0.05
    if psf.method == "moffat":
        assert psf.beta == pytest.approx(3.0, rel=0.15)


def _grid_frame(make_frame, halo, seed, flux=3e4):
    """Stars on a grid: a Moffat (FWHM 3 px, β = 3), plus a broad halo of that share of the flux."""
    rng = np.random.default_rng(seed)
    signal = np.full((200, 200), 200.0)
    xy = [(x + rng.uniform(-0.5, 0.5), y + rng.uniform(-0.5, 0.5))
          for x in range(20, 190, 30) for y in range(20, 190, 30)]
    for x, y in xy:
        signal += flux * ((1.0 - halo) * moffat_pixel_image(signal.shape, x, y, fwhm=3.0, beta=3.0)
                         + halo * moffat_pixel_image(signal.shape, x, y, fwhm=9.0, beta=2.0))
    return make_frame(signal, rng), xy


def test_epsf_not_built_when_the_moffat_fits_to_the_noise(make_frame):
    frame, xy = _grid_frame(make_frame, 0.0, 8)
    both = measure_psf(frame, xy, epsf="always")
    psf = measure_psf(frame, xy)
    # the stars are Moffats: the Moffat leaves no residual shared by them, only it is scored
    assert psf.shared_residual_z < SHARED_RESIDUAL_SIGMA
    assert set(both.scores) == {"moffat", "epsf"} and both.method == "moffat"
    assert set(psf.scores) == {"moffat"} and psf.method == "moffat"
    assert psf.scores["moffat"] == both.scores["moffat"]
    assert (psf.fwhm_pix, psf.beta) == (both.fwhm_pix, both.beta)
    # truth: the rendered FWHM 3 px
    assert psf.fwhm_pix == pytest.approx(3.0, rel=0.02)


@pytest.mark.parametrize("flux", [pytest.param(3e5, id="bright"),
                                  pytest.param(3e4, id="faint: stars' chi2 near noise")])
def test_epsf_built_when_the_moffat_misfits(make_frame, flux):
    # a core plus a broad halo (the sum of two Moffats) is no single Moffat; at the fainter
    # flux each star's χ²/dof stays within 2 % of 1, yet the misfit is shared by all the stars
    frame, xy = _grid_frame(make_frame, 0.3, 8, flux=flux)
    psf = measure_psf(frame, xy)
    assert psf.shared_residual_z > SHARED_RESIDUAL_SIGMA
    assert set(psf.scores) == {"moffat", "epsf"}
    with pytest.raises(ValueError, match="'epsf' must be one of"):
        measure_psf(frame, xy, epsf="sometimes")


@pytest.mark.slow
def test_epsf_alone_gives_a_usable_psf(star_frame):
    frame, xy, truth = star_frame
    psf = measure_psf(frame, xy, methods=("epsf",))
    assert psf.method == "epsf"
    assert psf.fwhm_pix == pytest.approx(truth.fwhm_pix, rel=0.08)
    k = psf.kernel(21)
    assert k.sum() == pytest.approx(1.0, rel=1e-12)
    assert psf.render((61, 61), 30.2, 29.7).sum() == pytest.approx(1.0, rel=1e-3)


def test_too_few_stars_falls_back_and_flags(make_frame):
    frame = make_frame(np.full((80, 80), 100.0), np.random.default_rng(1))
    with pytest.warns(PoorResultWarning, match="only 0 usable PSF stars"):
        psf = measure_psf(frame, [(40.0, 40.0)], fallback_fwhm=3.6 * u.arcsec,
                          pixel_scale=1.2 * u.arcsec / u.pix)
    assert psf.method == "fallback"
    assert psf.flags == ("psf_fallback",)
    assert psf.fwhm_pix == pytest.approx(3.0, rel=1e-12)


def test_too_few_stars_without_fallback_raises(make_frame):
    frame = make_frame(np.full((80, 80), 100.0), np.random.default_rng(1), name="sci_0003")
    with pytest.raises(ValueError, match="frame 'sci_0003': cannot measure the PSF"):
        measure_psf(frame, [])


def test_bad_arguments(make_frame):
    frame = make_frame(np.full((40, 40), 100.0), np.random.default_rng(1))
    with pytest.raises(TypeError, match="'frame' must be a CalibratedFrame"):
        measure_psf(np.zeros((4, 4)), [])
    with pytest.raises(ValueError, match="unknown PSF method 'gauss'"):
        measure_psf(frame, [], methods=("gauss",))
    with pytest.raises(ValueError, match="'pixel_scale' is needed"):
        measure_psf(frame, [], fallback_fwhm=3 * u.arcsec)


def test_psf_model_render_and_kernel_agree():
    psf = PSFModel.from_moffat(3.0, beta=2.5, ellipticity=0.2, angle_deg=30.0)
    img = psf.render((71, 71), 35.0, 35.0)
    k = psf.kernel(2 * psf.half_size + 1)
    # both unit sum over the same square; the point-sampled kernel and pixel integrals differ by
    # the pixel box only (≈ 1/24 ∇²PSF: it lowers the peak by several per cent at FWHM 2.4-3 px)
    h = psf.half_size
    assert img.sum() == pytest.approx(1.0, rel=1e-9)
    assert 0.88 < img[35 - h:36 + h, 35 - h:36 + h].max() / k.max() < 1.0
    with pytest.raises(ValueError, match="PSF 'fwhm' must be finite and positive"):
        PSFModel.from_moffat(-1.0)


def _noise_free(cf):
    """The case frame with its noise-free signal as data (same variance plane)."""
    from photpipe.frames.types import CalibratedFrame

    f = cf.frame
    return CalibratedFrame(f.info, cf.signal.copy(), f.variance, f.quality)


@pytest.mark.parametrize("seed", [0, 3, 5])
def test_coma_under_the_stars_does_not_steepen_the_moffat(seed):
    # Stars 25-80 px from a coma holding 90 % of the core's light, noise-free. The truth is the
    # generator's Moffat (1969) profile, β = 3 and its FWHM (FWHM = 2α√(2^(1/β) - 1), Moffat
    # 1969; Trujillo et al. 2001, MNRAS 328, 977, eq. 5). A sloping sky alone cannot follow the
    # coma's curvature (K/ρ³) and gave β 3.02-3.05 on these frames (3.06-3.08 before faint
    # neighbours were left out); with the comet's light taken out of the stamps β is within
    # 0.01 and the FWHM within 0.3 %.
    from photpipe.scenario import render_case

    cf = render_case("faint_nucleus", seed)
    frame = _noise_free(cf)
    kw = dict(methods=("moffat",), star_trail=cf.star_trail, exclude_radius=20.0)
    psf = measure_psf(frame, cf.star_xy, exclude_xy=(cf.x_start, cf.y_start), **kw)
    assert psf.beta == pytest.approx(cf.beta, abs=0.01)
    assert psf.fwhm_major_pix == pytest.approx(cf.fwhm_pix, rel=0.003)
    # without the comet's position nothing is taken out: the old bias shows
    blind = measure_psf(frame, cf.star_xy, **kw)
    assert blind.beta - cf.beta > 0.015


@pytest.mark.parametrize("seed", [2, 4, 6])
def test_faint_neighbours_of_the_psf_stars_are_left_out(seed):
    # Poor-seeing frames (FWHM 3-4 px) with stars below the catalogue limit beside some PSF
    # stars, noise-free, no coma; the truth is the generator's Moffat (1969) β = 3. Their cores
    # are under 5σ a pixel: left in, they gave β 3.02-3.04 on these seeds; found by the matched
    # filter and left out, β is within 0.015.
    from dataclasses import replace

    from photpipe.scenario import NIGHT_CASES, render_case

    cf = render_case(replace(NIGHT_CASES["poor_seeing"], nucleus_fraction=None), seed)
    psf = measure_psf(_noise_free(cf), cf.star_xy, exclude_xy=(cf.x_start, cf.y_start),
                      exclude_radius=20.0, methods=("moffat",))
    assert psf.beta == pytest.approx(cf.beta, abs=0.015)
    assert psf.fwhm_major_pix == pytest.approx(cf.fwhm_pix, rel=0.003)
