"""Nights written in other header styles reduce to the same numbers as the clean style."""

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.table import QTable
from astropy.time import Time

from photpipe.frames import (
    build_masters,
    calibrate_frame,
    plan_calibrations,
    profile_from_mapping,
    scan_night,
)
from photpipe.photometry import measure_comet_frame, solve_frame
from photpipe.scenario import CometSpec, Instrument, ScienceExposure, make_star_field, render_night
from photpipe.scenario.header_styles import HEADER_STYLES, restyle_night

POINTING = SkyCoord(52.0 * u.deg, 18.0 * u.deg)
INSTRUMENT = Instrument(shape=(384, 384), pixel_scale=1.0 * u.arcsec, pattern_seed=5)
#: What a user configures for the camera of the styled nights (the scenario's own values).
CAMERA = profile_from_mapping("scenario", {
    "match_values": [INSTRUMENT.name], "gain": 1.6, "read_noise": 8.0, "saturation": 60000.0,
    "pixel_scale": 1.0})


@pytest.fixture(scope="module")
def clean_night(tmp_path_factory):
    folder = tmp_path_factory.mktemp("clean")
    stars = make_star_field(POINTING, 0.1 * u.deg, n_stars=110, mag_range=(12.5, 18.5),
                            rng=np.random.default_rng(4))
    comet = CometSpec(ra=POINTING.ra, dec=POINTING.dec, afrho=150 * u.cm, r_h=1.5 * u.au,
                      delta=1.0 * u.au)
    t0 = Time("2026-12-01T03:00:00")
    science = [ScienceExposure(time=t0 + i * 5 * u.min, exptime=60 * u.s, pointing=POINTING,
                               comet=comet) for i in range(2)]
    truth = render_night(folder, INSTRUMENT, science, stars=stars, n_bias=5, n_dark=3,
                         n_flat=4, dark_exptime=60 * u.s, rng=8)
    return truth, stars, _reduce(__import__("pathlib").Path(truth.folder), stars, solve=False)


def _reduce(folder, stars, *, solve, camera=CAMERA):
    night = scan_night(folder, profiles=[camera])
    assert not night.skipped, night.skipped
    masters = build_masters(plan_calibrations(night), folder / "masters")
    geometry = QTable({"r_h": [1.5] * u.au, "delta": [1.0] * u.au, "phase": [30.0] * u.deg,
                       "elong": [95.0] * u.deg, "ra": [52.0] * u.deg, "dec": [18.0] * u.deg,
                       "pa_sun": [250.0] * u.deg, "pa_neg_velocity": [120.0] * u.deg})[0]
    out = []
    for info in night.of_kind("science"):
        frame = calibrate_frame(info, masters)
        if solve:
            frame, sol, _ = solve_frame(frame, stars, band="R", pixel_scale=info.pixel_scale)
            assert sol.median_arcsec < 0.2
        res = measure_comet_frame(frame, stars, geometry, apertures_km=(10000, 20000) * u.km)
        out.append((res.zero_point.zp, res.zero_point.zp_err,
                    res.comet["mag"].to_value(u.mag), res.comet["mag_err"].to_value(u.mag)))
    return out


@pytest.mark.slow
@pytest.mark.parametrize("style", ["small-observatory", "overscan", "pointing-degrees"])
def test_styled_night_reduces_like_the_clean_one(clean_night, tmp_path, style):
    truth, stars, clean = clean_night
    paths = restyle_night(truth, tmp_path / style, style, rng=3)
    styled = _reduce(tmp_path / style, stars, solve=HEADER_STYLES[style].drop_wcs)
    assert len(paths) == 5 + 3 + 4 + 2
    for (zp_a, zpe_a, m_a, me_a), (zp_b, zpe_b, m_b, me_b) in zip(clean, styled, strict=True):
        # the same pixels: zero points and magnitudes agree well within their errors
        assert abs(zp_a - zp_b) < 0.5 * np.hypot(zpe_a, zpe_b) + 1e-3
        assert np.all(np.abs(m_a - m_b) < 0.5 * np.hypot(me_a, me_b) + 1e-3)


@pytest.mark.slow
def test_overscan_from_the_configuration(clean_night, tmp_path):
    # The overscan night with BIASSEC/TRIMSEC taken out of every header: the camera's
    # configured sections must give the same numbers as the keywords did.
    truth, stars, clean = clean_night
    paths = restyle_night(truth, tmp_path, "overscan", rng=3)
    sections = None
    for path in paths.values():
        with fits.open(path, mode="update") as hdul:
            for hdu in hdul:  # a compressed file repeats the cards in its primary header
                sections = (hdu.header.pop("TRIMSEC", sections and sections[0]),
                            hdu.header.pop("BIASSEC", sections and sections[1]))
    camera = profile_from_mapping("scenario", {
        "match_values": [INSTRUMENT.name], "gain": 1.6, "read_noise": 8.0,
        "saturation": 60000.0, "pixel_scale": 1.0, "sections": sections})
    # without the sections the overscan columns would count as image
    assert {f.shape for f in scan_night(tmp_path, profiles=[CAMERA]).frames} != {
        INSTRUMENT.shape}
    assert {f.shape for f in scan_night(tmp_path, profiles=[camera]).frames} == {
        INSTRUMENT.shape}
    styled = _reduce(tmp_path, stars, solve=False, camera=camera)
    for (zp_a, zpe_a, m_a, me_a), (zp_b, zpe_b, m_b, me_b) in zip(clean, styled, strict=True):
        assert abs(zp_a - zp_b) < 0.5 * np.hypot(zpe_a, zpe_b) + 1e-3
        assert np.all(np.abs(m_a - m_b) < 0.5 * np.hypot(me_a, me_b) + 1e-3)


def test_small_observatory_header_looks_the_part(clean_night, tmp_path):
    truth, _, _ = clean_night
    paths = restyle_night(truth, tmp_path, "small-observatory", rng=1)
    sci = [p for o, p in paths.items() if "sci_" in o][0]
    assert sci.endswith(".fit")
    hdr = fits.getheader(sci)
    for key in ("GAIN", "RDNOISE", "SATURATE", "CTYPE1", "CRVAL1", "EXPTIME"):
        assert key not in hdr
    assert hdr["IMAGETYP"] == "Light Frame"
    assert hdr["EXPOSURE"] == 60.0
    assert len(hdr["DATE-OBS"]) == 10 and ":" in hdr["TIME-OBS"]
    assert len(hdr["OBJCTRA"].split()) == 3
