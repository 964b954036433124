import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.time import Time

from photpipe.scenario import (
    CometSpec,
    Instrument,
    ScienceExposure,
    coma_k_from_afrho,
    make_star_field,
    moffat_alpha,
    moffat_stamp,
    render_frame,
    render_night,
)

T0 = Time("2026-12-01T04:00:00", scale="utc")
CENTER = SkyCoord(52.0 * u.deg, 18.5 * u.deg)


@pytest.fixture(scope="module")
def instrument():
    return Instrument(shape=(160, 160), pixel_scale=1.2 * u.arcsec)


def test_moffat_half_maximum_at_half_fwhm():
    # Moffat (1969, A&A 3, 455): FWHM = 2 alpha sqrt(2^(1/beta) - 1), so the profile falls to
    # exactly one half at r = FWHM / 2.
    for beta in (1.5, 2.5, 4.765):
        alpha = moffat_alpha(3.0, beta)
        assert (1 + (1.5 / alpha) ** 2) ** (-beta) == pytest.approx(0.5, rel=1e-12)


def test_moffat_stamp_centroid_follows_offset():
    s = moffat_stamp(31, 0.3, -0.2, 3.0, 3.0, oversample=9)
    yy, xx = np.mgrid[:31, :31] - 15
    assert (s * xx).sum() == pytest.approx(0.3, abs=0.01)
    assert (s * yy).sum() == pytest.approx(-0.2, abs=0.01)


def test_coma_k_reproduces_ahearn_worked_value():
    # A'Hearn et al. (1984, AJ 89, 579) definition: Afrho = 4 r_h^2 Delta^2 / rho 10^(0.4(msun-m)).
    # Hand computation (common practice): m_R = 12.00, m_sun = -27.15 (Willmer 2018, ApJS 236, 47,
    # Cousins R, Vega), r_h = 1.5 AU, Delta = 1 AU, rho = 1e4 km gives Afrho = 440.7 cm.
    zp, scale = 25.0, 1.0 * u.arcsec
    k = coma_k_from_afrho(440.7 * u.cm, r_h=1.5 * u.au, delta=1 * u.au, pixel_scale=scale,
                          zero_point=zp, m_sun=-27.15)
    rho_pix = (1e4 * u.km / (1 * u.au)).to_value(u.dimensionless_unscaled) * u.rad.to(u.arcsec)
    flux = 2 * np.pi * k.to_value(u.electron / u.s) * rho_pix
    assert zp - 2.5 * np.log10(flux) == pytest.approx(12.00, abs=5e-4)


def test_bias_frame_level_and_noise(instrument):
    hdul, truth = render_frame("bias", instrument, time=T0, exptime=0 * u.s, rng=3)
    raw = hdul[0].data.astype(float)
    resid = raw - truth.bias
    gain = instrument.gain.to_value(u.electron / u.adu)
    rn_adu = instrument.read_noise.to_value(u.electron) / gain
    assert resid.mean() == pytest.approx(0.0, abs=0.05)
    # quantisation adds 1/12 ADU^2 of variance (common practice)
    assert resid.std() == pytest.approx(np.sqrt(rn_adu**2 + 1 / 12), rel=0.02)


def test_science_frame_calibrates_back_to_truth(instrument):
    stars = make_star_field(CENTER, 0.05 * u.deg, n_stars=40, rng=5)
    comet = CometSpec(ra=CENTER.ra + 5 * u.arcsec, dec=CENTER.dec, nucleus_mag=17.0 * u.mag,
                      afrho=300 * u.cm, r_h=1.5 * u.au, delta=0.8 * u.au)
    hdul, truth = render_frame("science", instrument, time=T0, exptime=120 * u.s,
                               pointing=CENTER, stars=stars, comet=comet, cosmic_rays=False,
                               rng=11)
    hdr = hdul[0].header
    for key in ("IMAGETYP", "DATE-OBS", "EXPTIME", "FILTER", "GAIN", "RDNOISE", "SATURATE"):
        assert key in hdr
    gain = hdr["GAIN"]
    electrons = (hdul[0].data - truth.bias) * gain - truth.dark_rate * 120.0
    calibrated = electrons / truth.flat
    ok = ~truth.saturated & ~truth.hot & (truth.flat > 0.5)
    var = (truth.flat * truth.signal + truth.dark_rate * 120 + hdr["RDNOISE"] ** 2
           + gain**2 / 12) / truth.flat**2
    chi = (calibrated - truth.signal)[ok] / np.sqrt(var[ok])
    assert abs(chi.mean()) < 0.05
    assert chi.std() == pytest.approx(1.0, abs=0.03)
    # the comet sits where the true WCS puts it
    x, y = truth.wcs.world_to_pixel(SkyCoord(comet.ra, comet.dec))
    assert (truth.comet_x, truth.comet_y) == pytest.approx((float(x), float(y)))
    assert truth.coma_k_e > 0 and truth.nucleus_flux_e == pytest.approx(
        10 ** (-0.4 * (17.0 - 25.0)) * 120)


def test_cosmic_rays_and_saturation_are_in_the_truth(instrument):
    comet = CometSpec(ra=CENTER.ra, dec=CENTER.dec, nucleus_mag=9.0 * u.mag)
    hdul, truth = render_frame("science", instrument, time=T0, exptime=300 * u.s,
                               pointing=CENTER, comet=comet, cosmic_rate=5.0, rng=2)
    assert truth.cosmic.sum() > 5
    assert truth.saturated[int(round(truth.comet_y)), int(round(truth.comet_x))]
    assert hdul[0].data.max() == int(instrument.saturation.to_value(u.adu))


def test_render_night_writes_readable_compressed_files(tmp_path, instrument):
    sci = [ScienceExposure(time=T0 + i * 5 * u.min, exptime=60 * u.s, pointing=CENTER)
           for i in range(2)]
    night = render_night(tmp_path / "n1", instrument, sci, n_bias=2, n_dark=2, n_flat=2, rng=1)
    assert {k: len(v) for k, v in night.files.items()} == {
        "bias": 2, "dark": 2, "flat": 2, "science": 2}
    with fits.open(night.files["science"][0]) as hdul:
        assert isinstance(hdul[1], fits.CompImageHDU)
        assert hdul[1].header["IMAGETYP"] == "Light Frame"
        assert hdul[1].data.shape == (160, 160)


@pytest.mark.parametrize("bad, match", [
    pytest.param(dict(kind="sky"), "'kind' must be one of", id="kind"),
    pytest.param(dict(exptime=-1 * u.s), "'exptime' must be >= 0", id="exptime"),
])
def test_bad_arguments(bad, match, instrument):
    kw = dict(kind="dark", time=T0, exptime=10 * u.s)
    kw.update(bad)
    kind = kw.pop("kind")
    with pytest.raises(ValueError, match=match):
        render_frame(kind, instrument, **kw)
