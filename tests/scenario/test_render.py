import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.time import Time

from photpipe.scenario import (
    CometSpec,
    DetectorSpec,
    Instrument,
    SceneSpec,
    ScienceExposure,
    Seeing,
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
                               scene=SceneSpec(pointing=CENTER, stars=stars, comet=comet),
                               detector=DetectorSpec(cosmic_rays=False), rng=11)
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
                               scene=SceneSpec(pointing=CENTER, comet=comet),
                               detector=DetectorSpec(cosmic_rate=5.0), rng=2)
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


def _moments(image, x, y):
    """Flux and second central moments (xx, yy) of ``image`` around (x, y)."""
    yy, xx = np.mgrid[: image.shape[0], : image.shape[1]]
    f = image.sum()
    return f, (image * (xx - x) ** 2).sum() / f, (image * (yy - y) ** 2).sum() / f


def _moving_comet(ra_rate):
    # east-west motion only: 36"/h for 300 s is 3", 2.5 pixels of 1.2" towards -x (east left)
    return CometSpec(ra=CENTER.ra, dec=CENTER.dec, nucleus_mag=15.0 * u.mag,
                     ra_rate=ra_rate * u.arcsec / u.h, dec_rate=0 * u.arcsec / u.h)


@pytest.mark.parametrize("tracking", ["sidereal", "comet"])
def test_moving_comet_trails_the_comet_or_the_stars(instrument, tracking):
    # one star 60" north of the comet, so each source is alone in its box
    stars = make_star_field(CENTER, 0.05 * u.deg, n_stars=1, rng=5)
    stars["ra"], stars["dec"] = [CENTER.ra], [CENTER.dec + 60 * u.arcsec]
    seeing = Seeing(fwhm=3.0 * u.arcsec)
    frames = {}
    for rate in (0.0, 36.0):
        scene = SceneSpec(pointing=CENTER, comet=_moving_comet(rate), stars=stars,
                          sky_rate=0 * u.electron / u.s, seeing=seeing, tracking=tracking)
        frames[rate] = render_frame("science", instrument, time=T0, exptime=300 * u.s,
                                    scene=scene, detector=DetectorSpec(cosmic_rays=False),
                                    rng=1)[1]
    still, moving = frames[0.0], frames[36.0]
    assert still.comet_trail == still.star_trail == (0.0, 0.0)
    expected = (-2.5, 0.0)
    trailed, fixed = ((moving.comet_trail, moving.star_trail) if tracking == "sidereal"
                      else (moving.star_trail, moving.comet_trail))
    sign = 1 if tracking == "sidereal" else -1
    assert trailed == pytest.approx((sign * expected[0], 0.0), abs=1e-3)
    assert fixed == (0.0, 0.0)
    # a source smeared evenly along a segment of length L gains L²/12 of variance along it
    # (the variance of a uniform distribution, common practice) and none across it; the
    # total light is unchanged
    cx, cy = int(round(moving.comet_x)), int(round(moving.comet_y))
    sx, sy = (int(round(v)) for v in (moving.stars["x"][0], moving.stars["y"][0]))
    box = {"comet": (cx, cy, moving.comet_x, moving.comet_y),
           "star": (sx, sy, float(moving.stars["x"][0]), float(moving.stars["y"][0]))}
    smeared = "comet" if tracking == "sidereal" else "star"
    for name, (ix, iy, x, y) in box.items():
        cut = np.s_[iy - 12: iy + 13, ix - 12: ix + 13]
        f0, vx0, vy0 = _moments(still.signal[cut], x - ix + 12, y - iy + 12)
        f1, vx1, vy1 = _moments(moving.signal[cut], x - ix + 12, y - iy + 12)
        extra = 2.5**2 / 12 if name == smeared else 0.0
        assert f1 == pytest.approx(f0, rel=1e-3)
        assert vx1 - vx0 == pytest.approx(extra, abs=0.01)
        assert vy1 - vy0 == pytest.approx(0.0, abs=0.01)


def test_tracking_must_be_known():
    with pytest.raises(ValueError, match="'tracking' must be one of"):
        SceneSpec(tracking="none")
