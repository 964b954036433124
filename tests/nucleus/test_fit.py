import io
import re

import numpy as np
import pytest
from _schema_check import assert_in_schema
from astropy import units as u
from matplotlib.figure import Figure

from photpipe import schema
from photpipe._warnings import PoorResultWarning
from photpipe.frames.types import Quality
from photpipe.nucleus import (
    NUCLEUS_COLUMNS,
    PSFModel,
    fit_nucleus,
    nucleus_table,
    plot_nucleus_fit,
)

SCALE = 1.0 * u.arcsec / u.pix
PSF = PSFModel.from_moffat(3.0, beta=3.0)


def _signal(oracle, *, flux, k, shape=(121, 121), x0=60.3, y0=59.8, sky=200.0):
    return oracle(shape, x0, y0, nucleus_flux=flux, coma_k=k, fwhm=3.0, sky=sky, n=5)


def test_recovers_nucleus_and_coma(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=3e4, k=100.0), np.random.default_rng(11))
    fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=20,
                      rng=np.random.default_rng(1), zero_point=25.0 * u.mag,
                      zero_point_err=0.02 * u.mag)
    # truth of the oracle rendering (conftest.oracle_comet)
    assert fit.nucleus_flux_e == pytest.approx(3e4, abs=4 * fit.nucleus_flux_err_e)
    assert fit.coma_k_e_s * fit.exptime_s == pytest.approx(100.0, abs=4 * fit.coma_k_err_e_s
                                                           * fit.exptime_s)
    assert (fit.x, fit.y) == pytest.approx((60.3, 59.8), abs=0.05)
    assert fit.chi2_red == pytest.approx(1.0, abs=0.05)
    assert fit.flags == ()
    # the bootstrap and the covariance measure the same spread (within sampling of 20 refits)
    assert 0.5 < fit.nucleus_flux_err_boot_e / fit.nucleus_flux_err_cov_e < 1.6
    # mag = zp - 2.5 log10(F / t)  (DEVELOPERS.md zero-point convention)
    assert fit.nucleus_mag == pytest.approx(25.0 - 2.5 * np.log10(fit.nucleus_flux_e / 100.0),
                                            rel=1e-12)
    rel = fit.nucleus_flux_err_e / fit.nucleus_flux_e
    assert fit.nucleus_mag_err == pytest.approx(np.hypot(2.5 / np.log(10) * rel, 0.02), rel=1e-9)
    assert fit.profile is not None
    assert fit.profile.nucleus_flux == pytest.approx(3e4, abs=4 * fit.profile.nucleus_flux_err)
    row = fit.to_row()
    assert tuple(row) == NUCLEUS_COLUMNS
    assert row["method"] == "2d:moffat" and row["flags"] == ""
    hdul = fit.to_hdulist()
    assert [h.name for h in hdul[1:]] == ["DATA", "MODEL", "RESIDUAL", "GOOD"]


def test_free_gamma_recovers_index(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=1e4, k=300.0), np.random.default_rng(5))
    fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma="free", bootstrap=0)
    # the oracle renders a steady-state coma, γ = 1 (A'Hearn et al. 1984)
    assert fit.coma_gamma == pytest.approx(1.0, abs=4 * fit.coma_gamma_err)
    assert fit.coma_gamma_err < 0.05


def test_pure_coma_gives_nucleus_consistent_with_zero(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=0.0, k=200.0), np.random.default_rng(8))
    with pytest.warns(PoorResultWarning, match="upper_limit"):
        fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0,
                          zero_point=25.0)
    assert abs(fit.nucleus_flux_e) < 3 * fit.nucleus_flux_err_e
    assert "upper_limit" in fit.flags and fit.is_upper_limit
    # the limit is max(F, 0) + 3σ, reported in electron/s, and its magnitude has no error bar
    expected = (max(fit.nucleus_flux_e, 0) + 3 * fit.nucleus_flux_err_e) / fit.exptime_s
    assert fit.nucleus_flux_e_s == pytest.approx(expected, rel=1e-12)
    assert np.isnan(fit.nucleus_mag_err) and np.isfinite(fit.nucleus_mag)


def test_pure_point_source_gives_coma_consistent_with_zero(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=5e4, k=0.0), np.random.default_rng(9))
    fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0)
    assert abs(fit.coma_k_e_s) < 3 * fit.coma_k_err_e_s
    assert fit.nucleus_flux_e == pytest.approx(5e4, abs=4 * fit.nucleus_flux_err_e)
    assert fit.nucleus_fraction > 0.97


def test_field_stars_and_bad_pixels_are_masked(oracle, make_frame):
    sig = _signal(oracle, flux=3e4, k=100.0)
    star = oracle(sig.shape, 90.2, 30.7, nucleus_flux=2e5, coma_k=0.0, fwhm=3.0, n=3)
    q = np.zeros(sig.shape, np.uint16)
    q[70:73, 40:90] = Quality.COSMIC_RAY
    frame = make_frame(sig + star, np.random.default_rng(3), quality=q)
    frame.data[70:73, 40:90] += 5e4
    fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0,
                      star_xy=[(90.2, 30.7)])
    ox, oy = fit.x_origin, fit.y_origin
    assert not fit.good[31 - oy, 90 - ox] and not fit.good[71 - oy, 50 - ox]
    assert fit.good[31 - oy, 80 - ox]
    assert fit.nucleus_flux_e == pytest.approx(3e4, abs=4 * fit.nucleus_flux_err_e)
    assert fit.chi2_red < 1.1


def test_position_at_bound_and_no_convergence_are_flagged(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=3e4, k=100.0), np.random.default_rng(2))
    with pytest.warns(PoorResultWarning, match="fit_at_bound"):
        fit = fit_nucleus(frame, 58.5, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0,
                          max_shift=0.5, search_radius=0.0)
    # a centre held off the nucleus cannot give its flux: the value is a limit
    assert "fit_at_bound" in fit.flags and fit.is_upper_limit
    assert fit.upper_limit_e > fit.nucleus_flux_e
    with pytest.warns(PoorResultWarning, match="no_convergence"):
        fit = fit_nucleus(frame, 59.0, 61.0, PSF, pixel_scale=SCALE, gamma="free",
                          bootstrap=0, max_nfev=3)
    assert "no_convergence" in fit.flags


def test_fallback_psf_flag_is_carried(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=3e4, k=100.0), np.random.default_rng(2))
    psf = PSFModel.from_moffat(3.0, method="fallback", flags=("psf_fallback",))
    with pytest.warns(PoorResultWarning, match="psf_fallback"):
        fit = fit_nucleus(frame, 60.0, 60.0, psf, pixel_scale=SCALE, gamma=1.0, bootstrap=0)
    assert fit.flags[0] == "psf_fallback" and fit.method == "2d:fallback"


def test_edge_of_frame_is_flagged(oracle, make_frame):
    sig = oracle((101, 101), 80.0, 50.0, nucleus_flux=3e4, coma_k=50.0, fwhm=3.0, sky=200.0,
                 n=3)
    frame = make_frame(sig, np.random.default_rng(4))
    fit = fit_nucleus(frame, 80.0, 50.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0,
                      cutout=61)
    assert "edge" in fit.flags
    assert fit.nucleus_flux_e == pytest.approx(3e4, abs=4 * fit.nucleus_flux_err_e)


def test_bad_input_raises(make_frame):
    frame = make_frame(np.full((60, 60), 100.0), np.random.default_rng(1), name="sci_0009")
    with pytest.raises(TypeError, match="'frame' must be a CalibratedFrame"):
        fit_nucleus(np.zeros((5, 5)), 1.0, 1.0, PSF, pixel_scale=SCALE)
    with pytest.raises(TypeError, match="'psf' must be a PSFModel"):
        fit_nucleus(frame, 30.0, 30.0, "moffat", pixel_scale=SCALE)
    with pytest.raises(ValueError, match="frame 'sci_0009': nucleus position (500.0, 30.0) is"
                       .replace("(", r"\(").replace(")", r"\)")):
        fit_nucleus(frame, 500.0, 30.0, PSF, pixel_scale=SCALE, cutout=41)
    with pytest.raises(ValueError, match="'cutout' must be an odd integer >= 21"):
        fit_nucleus(frame, 30.0, 30.0, PSF, pixel_scale=SCALE, cutout=40)
    with pytest.raises(ValueError, match=re.escape("'gamma' must lie in (0, 2)")):
        fit_nucleus(frame, 30.0, 30.0, PSF, pixel_scale=SCALE, gamma=2.5)
    with pytest.raises(TypeError, match="'pixel_scale' must be an astropy Quantity"):
        fit_nucleus(frame, 30.0, 30.0, PSF, pixel_scale=1.0)
    frame.quality[:, :] = Quality.SATURATED
    with pytest.raises(ValueError, match="frame 'sci_0009': only 0% of the 41x41 box"):
        fit_nucleus(frame, 30.0, 30.0, PSF, pixel_scale=SCALE, cutout=41)


def test_table_and_figure(oracle, make_frame):
    frame = make_frame(_signal(oracle, flux=3e4, k=100.0), np.random.default_rng(6))
    fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0,
                      zero_point=25.0)
    t = nucleus_table([fit, fit])
    assert t.colnames == list(NUCLEUS_COLUMNS)
    assert_in_schema(t, schema.NUCLEUS_COLUMNS, "nucleus")  # every column with its unit
    assert t["nucleus_flux_e_s"].unit == u.electron / u.s and t["fwhm_arcsec"].unit == u.arcsec
    assert t["fwhm_arcsec"][0].value == pytest.approx(3.0, rel=1e-12)
    fig = plot_nucleus_fit(fit)
    assert isinstance(fig, Figure) and len(fig.axes) == 4
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    assert buf.getvalue()[:8] == b"\x89PNG\r\n\x1a\n"


def test_azimuthal_modulation_is_recovered(make_frame):
    from photpipe.nucleus import nucleus_coma_image

    # truth from the pure model function with a sunward-like dipole a1 = 0.3 (cos θ along +x)
    sig = nucleus_coma_image((121, 121), 60.3, 59.8, nucleus_flux=3e4, coma_k=600.0, psf=PSF,
                             sky=200.0, modulation=[(0.3, 0.0)])
    frame = make_frame(sig, np.random.default_rng(12))
    fit = fit_nucleus(frame, 60.0, 60.0, PSF, pixel_scale=SCALE, gamma=1.0, bootstrap=0,
                      modulation=1)
    assert fit.modulation["a1"] == pytest.approx(0.3, abs=0.03)
    assert fit.modulation["b1"] == pytest.approx(0.0, abs=0.03)
    assert fit.nucleus_flux_e == pytest.approx(3e4, abs=4 * fit.nucleus_flux_err_e)


def test_leverage_sums_to_the_free_parameters():
    # The hat matrix J (JᵀJ)⁻¹ Jᵀ of a least-squares fit has trace p, the number of free
    # parameters (Hoaglin & Welsch 1978, Am. Stat. 32, 17, eq. 2.2), each entry within [0, 1].
    from lmfit import Parameters

    from photpipe.nucleus._separable import fit_separable

    x = np.linspace(0.0, 3.0, 40)
    rng = np.random.default_rng(3)
    y = 2.0 * np.exp(-1.3 * x) + 0.5 + rng.normal(0.0, 0.02, x.size)
    p = Parameters()
    p.add("rate", value=1.0, min=0.1, max=5.0)
    res = fit_separable(y, np.full(x.size, 0.02),
                        lambda t: np.vstack([np.exp(-t["rate"] * x), np.ones_like(x)]), p,
                        ["a", "c"], steps={"rate": 1e-5})
    h = res.leverage()
    assert h.sum() == pytest.approx(3.0, rel=1e-6)
    assert np.all((h >= 0.0) & (h <= 1.0))
