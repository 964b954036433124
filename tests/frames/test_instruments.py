"""Instrument profiles: keyword mapping, configured values, conflicts, time reference, sites."""

import gzip
import shutil

import numpy as np
import pytest
from astropy import units as u
from astropy.io import fits
from astropy.time import Time

from photpipe.frames import (
    FrameError,
    InstrumentProfile,
    profile_from_mapping,
    read_frame_info,
    scan_night,
    site_from_header,
)

from . import _synthetic as S


def _write(path, hdr, data=None):
    data = np.full((8, 12), 1000, np.uint16) if data is None else data
    return S.write(path, data, hdr)


def _plain_header(**cards):
    """A small observatory's header: no GAIN/RDNOISE/SATURATE, EXPOSURE, 'Light Frame'."""
    hdr = fits.Header({"IMAGETYP": "Light Frame", "DATE-OBS": "2026-12-01T03:00:00",
                       "EXPOSURE": 120.0, "FILTER": "R", "INSTRUME": "Cam A"})
    for k, v in cards.items():
        hdr[k] = v
    return hdr


CAM_A = profile_from_mapping("cam_a", {
    "match_values": ["Cam A"], "gain": 1.3, "read_noise": 9.0, "saturation": 50000.0,
    "pixel_scale": 0.9, "keywords": {"exptime": ["EXPOSURE"]},
    "frame_types": {"science": ["Light Frame"]}})


def test_profile_supplies_missing_values(tmp_path):
    info = read_frame_info(_write(tmp_path / "a.fit", _plain_header()), profiles=[CAM_A])
    assert info.instrument == "cam_a"
    assert info.gain == 1.3 * u.electron / u.adu
    assert info.read_noise == 9.0 * u.electron
    assert info.saturation == 50000.0 * u.adu
    assert info.exptime == 120.0 * u.s
    assert info.pixel_scale == 0.9 * u.arcsec


def test_binning_scales_the_pixel_scale(tmp_path):
    info = read_frame_info(_write(tmp_path / "a.fit", _plain_header(XBINNING=2, YBINNING=2)),
                           profiles=[CAM_A])
    assert info.pixel_scale.to_value(u.arcsec) == pytest.approx(1.8)


def test_configured_value_wins_and_the_conflict_is_reported_once_per_night(tmp_path):
    for i in range(3):
        _write(tmp_path / f"s{i}.fits", _plain_header(GAIN=2.0))
    night = scan_night(tmp_path, profiles=[CAM_A])
    assert all(f.gain == 1.3 * u.electron / u.adu for f in night.frames)
    assert night.notes == ["gain: header GAIN = 2, instrument 'cam_a' says 1.3 (used) in 3 "
                           "frames"]


def test_header_wins_where_configured(tmp_path):
    trusting = InstrumentProfile(name="t", match_values=("Cam A",), gain=1.3,
                                 trust_header=("gain",), read_noise=9.0)
    info = read_frame_info(_write(tmp_path / "a.fits", _plain_header(GAIN=2.0)),
                           profiles=[trusting])
    assert info.gain == 2.0 * u.electron / u.adu
    assert info.conflicts == ()


def test_night_profile_when_the_header_names_no_camera(tmp_path):
    hdr = _plain_header()
    del hdr["INSTRUME"]
    path = _write(tmp_path / "a.fits", hdr)
    assert read_frame_info(path, profiles=[CAM_A], night_profile="cam_a").gain.value == 1.3
    with pytest.raises(FrameError, match="header has no GAIN or EGAIN"):
        read_frame_info(path, profiles=[CAM_A])


def test_time_reference_middle_and_jd(tmp_path):
    mid = InstrumentProfile(name="m", match_values=("Cam A",), gain=1.0, read_noise=5.0,
                            time_reference="middle")
    hdr = _plain_header()
    del hdr["DATE-OBS"]
    hdr["JD"] = 2461375.625  # 2026-12-01 03:00 UTC (JD = MJD + 2400000.5)
    info = read_frame_info(_write(tmp_path / "a.fits", hdr), profiles=[mid])
    assert abs((info.time_mid - Time("2026-12-01T03:00:00", scale="utc")).sec) < 1e-3


@pytest.mark.parametrize("clock", ["TIME-OBS", "UT", "UTSTART"])
def test_date_only_with_clock_keyword(tmp_path, clock):
    hdr = _plain_header(GAIN=1.0, RDNOISE=5.0, **{"DATE-OBS": "2026-12-01", clock: "03:00:00"})
    info = read_frame_info(_write(tmp_path / "a.fits", hdr))
    assert info.time_mid.isot == "2026-12-01T03:01:00.000"


def test_date_only_without_clock_is_an_error_not_midnight(tmp_path):
    hdr = _plain_header(GAIN=1.0, RDNOISE=5.0, **{"DATE-OBS": "2026-12-01"})
    path = _write(tmp_path / "night1_sci.fits", hdr)
    with pytest.raises(FrameError, match=r"night1_sci.fits: DATE-OBS = '2026-12-01' holds a "
                                         r"date only and no TIME-OBS"):
        read_frame_info(path)


@pytest.mark.parametrize("name", ["a.fit", "a.fts", "a.FITS", "a.fit.gz", "a.fits.gz"])
def test_every_fits_ending_is_read(tmp_path, name):
    plain = _write(tmp_path / "plain.fits", _plain_header(GAIN=1.0, RDNOISE=5.0))
    folder = tmp_path / "night"
    folder.mkdir()
    target = folder / name
    if name.endswith(".gz"):
        with open(plain, "rb") as src, gzip.open(target, "wb") as dst:
            shutil.copyfileobj(src, dst)
    else:
        shutil.copy(plain, target)
    night = scan_night(folder)
    assert [f.path for f in night.frames] == [str(target)]


def test_trim_and_overscan_sections(tmp_path):
    data = np.full((8, 14), 1000, np.uint16)
    data[:, 12:] = 990  # overscan strip at 990 adu
    data[:, :12] += np.arange(12, dtype=np.uint16)
    hdr = _plain_header(GAIN=1.0, RDNOISE=5.0, BIASSEC="[13:14,1:8]", TRIMSEC="[1:12,1:8]")
    path = _write(tmp_path / "a.fits", hdr, data)
    info = read_frame_info(path)
    assert info.shape == (8, 12)
    from photpipe.frames._fitsfile import stored_image
    with stored_image(path) as (raw, bscale, bzero):
        phys = np.asarray(raw, float) * bscale + bzero
    np.testing.assert_allclose(phys[0], 10.0 + np.arange(12))


@pytest.mark.parametrize(("cards", "lat", "lon", "height"), [
    pytest.param({"SITELAT": 31.5, "SITELONG": -110.25, "SITEELEV": 1500.0}, 31.5, -110.25,
                 1500.0, id="site-degrees"),
    pytest.param({"SITELAT": "+31 30 00", "SITELONG": "-110 15 00"}, 31.5, -110.25, 0.0,
                 id="site-sexagesimal"),
    pytest.param({"OBSGEO-B": -24.5, "OBSGEO-L": 290.0, "OBSGEO-H": 2400.0}, -24.5, -70.0,
                 2400.0, id="obsgeo-blh"),
])
def test_site_from_header(cards, lat, lon, height):
    loc = site_from_header("a.fits", cards)
    assert loc.lat.deg == pytest.approx(lat, abs=1e-9)
    assert loc.lon.wrap_at(180 * u.deg).deg == pytest.approx(lon, abs=1e-9)
    assert loc.height.to_value(u.m) == pytest.approx(height, abs=1e-6)


def test_site_from_geocentric_matches_astropy():
    # astropy's EarthLocation (WGS84, IERS conventions) as the reference
    from astropy.coordinates import EarthLocation
    ref = EarthLocation.from_geodetic(-70.7 * u.deg, -30.2 * u.deg, 2200 * u.m)
    cards = {"OBSGEO-X": ref.x.to_value(u.m), "OBSGEO-Y": ref.y.to_value(u.m),
             "OBSGEO-Z": ref.z.to_value(u.m)}
    loc = site_from_header("a.fits", cards)
    assert loc.lat.deg == pytest.approx(-30.2, abs=1e-9)
    assert loc.height.to_value(u.m) == pytest.approx(2200.0, abs=1e-3)


@pytest.mark.parametrize(("cards", "match"), [
    pytest.param({"SITELAT": 134.0, "SITELONG": 10.0}, "SITELAT = 134.0 is not", id="lat"),
    pytest.param({"SITELAT": "north", "SITELONG": 10.0}, "SITELAT = 'north' cannot be read",
                 id="text"),
    pytest.param({"OBSGEO-X": 1.0, "OBSGEO-Y": 1.0, "OBSGEO-Z": 1.0}, "not on its surface",
                 id="xyz"),
])
def test_bad_site_values_name_the_keyword(cards, match):
    with pytest.raises(FrameError, match=match):
        site_from_header("a.fits", cards)


def test_frame_carries_its_header_site(tmp_path):
    hdr = _plain_header(GAIN=1.0, RDNOISE=5.0, SITELAT=45.0, SITELONG=7.0, SITEELEV=500.0)
    info = read_frame_info(_write(tmp_path / "a.fits", hdr))
    assert info.site.lat.deg == pytest.approx(45.0)


@pytest.mark.parametrize(("section", "match"), [
    pytest.param({"name": "x", "gain": "high"}, "gain must be a number", id="gain-text"),
    pytest.param({"name": "x", "time_reference": "end"}, "time_reference", id="time-ref"),
])
def test_bad_profiles(section, match):
    with pytest.raises(ValueError, match=match):
        InstrumentProfile(**section)


def test_unknown_profile_key_named():
    with pytest.raises(ValueError, match="unknown key"):
        profile_from_mapping("x", {"gian": 1.0})


@pytest.mark.parametrize("key", ["BSCALE", "BZERO"])
def test_non_numeric_scaling_named_at_ingest(tmp_path, key):
    path = _write(tmp_path / "a.fits", _plain_header(GAIN=1.0, RDNOISE=5.0))
    with fits.open(path, mode="update") as hdul:
        hdul[0].header[key] = "abc"
    with pytest.raises(FrameError, match=f"{key} = 'abc' is not a finite number"):
        read_frame_info(path)


def test_configured_sections_replace_missing_keywords(tmp_path):
    # The same 8 x 14 raw frame as above, its header without TRIMSEC/BIASSEC: the camera's
    # configured sections give the same image area and bias level (the keyword case above).
    data = np.full((8, 14), 1000, np.uint16)
    data[:, 12:] = 990
    data[:, :12] += np.arange(12, dtype=np.uint16)
    path = _write(tmp_path / "a.fits", _plain_header(GAIN=1.0, RDNOISE=5.0), data)
    cam = profile_from_mapping("cam", {"match_values": ["Cam A"],
                                       "sections": ("[1:12,1:8]", "[13:14,1:8]")})
    info = read_frame_info(path, profiles=[cam])
    assert info.shape == (8, 12) and info.sections == ("[1:12,1:8]", "[13:14,1:8]")
    from photpipe.frames._fitsfile import read_image, stored_image
    with stored_image(path, sections=info.sections) as (raw, bscale, bzero):
        phys = np.asarray(raw, float) * bscale + bzero
    np.testing.assert_allclose(phys[0], 10.0 + np.arange(12))
    np.testing.assert_allclose(read_image(path, sections=info.sections)[0], 10.0 + np.arange(12))


def test_bad_configured_section_named():
    with pytest.raises(ValueError, match=r"overscan_section must be a FITS section"):
        InstrumentProfile(name="x", sections=(None, "13:14,1:8"))


def test_config_sections_reach_the_profile(tmp_path):
    from photpipe.config import ConfigError, read_instruments

    (cam,) = read_instruments({"instruments": {"cam": {
        "trim_section": "[1:2048,1:2048]", "overscan_section": "[2049:2080,1:2048]"}}})
    assert cam.sections == ("[1:2048,1:2048]", "[2049:2080,1:2048]")
    with pytest.raises(ConfigError, match="trim_section must be a FITS section"):
        read_instruments({"_file": "c.toml", "instruments": {"cam": {"trim_section": "all"}}})
