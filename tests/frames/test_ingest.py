import os
import re

import numpy as np
import pytest
from astropy import units as u
from astropy.io import fits
from astropy.time import Time

from photpipe.frames import FrameError, kind_map_from_mapping, read_frame_info, scan_night

from . import _synthetic as S


def _write(path, hdr, data=None, *, compress=False):
    data = np.full((8, 12), 1000, np.uint16) if data is None else data
    return S.write(path, data, hdr, compress=compress)


@pytest.fixture
def science_header():
    return S.header("science", exptime=120.0, start="2026-12-01T03:00:00", filt="R")


@pytest.mark.parametrize("compress", [pytest.param(False, id="plain"),
                                      pytest.param(True, id="compressed")])
def test_reads_header_facts(tmp_path, science_header, compress):
    science_header["CCDSUM"] = "1 1"
    path = _write(tmp_path / ("a.fits.fz" if compress else "a.fits"), science_header,
                  compress=compress)
    info = read_frame_info(path)
    assert info.kind == "science"
    # mid-exposure = DATE-OBS + EXPTIME/2 (common practice)
    assert abs((info.time_mid - Time("2026-12-01T03:01:00", scale="utc")).sec) < 1e-6
    assert info.time_mid.scale == "utc"
    assert info.exptime == 120.0 * u.s
    assert info.gain == S.GAIN * u.electron / u.adu
    assert info.read_noise == S.READ_NOISE * u.electron
    assert info.saturation == S.SATURATE * u.adu
    assert info.filter == "R"
    assert info.binning == (1, 1)
    assert info.shape == (8, 12)
    assert info.object_name == "test field"
    assert info.name == "a"


def test_mjd_obs_ccdsum_and_aliases(tmp_path):
    hdr = fits.Header({"IMAGETYP": "object", "MJD-OBS": 61010.5, "EXPOSURE": 30.0,
                       "EGAIN": 2.0, "READNOIS": 7.0, "CCDSUM": "2 2", "FILTER": "V"})
    info = read_frame_info(_write(tmp_path / "b.fits", hdr))
    # MJD 61010.5 + 15 s
    assert abs(info.time_mid.mjd - (61010.5 + 15.0 / 86400.0)) < 1e-9
    assert info.binning == (2, 2)
    assert info.gain == 2.0 * u.electron / u.adu
    assert info.read_noise == 7.0 * u.electron
    # no SATURATE: full scale of unsigned 16-bit data
    assert info.saturation == 65535 * u.adu


def test_date_and_time_obs_split(tmp_path, science_header):
    science_header["DATE-OBS"] = "2026-12-01"
    science_header["TIME-OBS"] = "03:00:00"
    info = read_frame_info(_write(tmp_path / "c.fits", science_header))
    assert info.time_mid.isot == "2026-12-01T03:01:00.000"


def test_timesys_tt_converted_to_utc(tmp_path, science_header):
    science_header["TIMESYS"] = "TT"
    info = read_frame_info(_write(tmp_path / "d.fits", science_header))
    # TT - UTC = 32.184 s + 37 leap seconds = 69.184 s since 2017 (IERS Bulletin C)
    expected = Time("2026-12-01T03:01:00", scale="utc") - 69.184 * u.s
    assert abs((info.time_mid - expected).sec) < 1e-3
    assert info.time_mid.scale == "utc"


def test_bias_has_no_filter(tmp_path):
    hdr = S.header("bias", exptime=0.0)
    hdr["FILTER"] = "R"
    info = read_frame_info(_write(tmp_path / "bias.fits", hdr))
    assert info.kind == "bias" and info.filter is None


def test_custom_kind_map(tmp_path, science_header):
    science_header["FRAMETYP"] = "TARGET"
    km = kind_map_from_mapping({"type_keyword": "FRAMETYP", "science": ["target"]})
    assert read_frame_info(_write(tmp_path / "e.fits", science_header), kind_map=km).kind == \
        "science"


def test_defaults_fill_missing_detector_values(tmp_path, science_header):
    del science_header["GAIN"]
    del science_header["RDNOISE"]
    path = _write(tmp_path / "f.fits", science_header)
    with pytest.raises(FrameError, match=re.escape("header has no GAIN or EGAIN")):
        read_frame_info(path)
    info = read_frame_info(path, defaults={"gain": 1.2 * u.electron / u.adu,
                                           "read_noise": 9 * u.electron})
    assert info.gain == 1.2 * u.electron / u.adu and info.read_noise == 9 * u.electron


def test_image_in_extension_keywords_in_primary(tmp_path, science_header):
    path = tmp_path / "g.fits"
    fits.HDUList([fits.PrimaryHDU(header=science_header),
                  fits.ImageHDU(np.zeros((5, 7), np.float32))]).writeto(path)
    info = read_frame_info(path)
    assert info.shape == (5, 7) and info.exptime == 120 * u.s


@pytest.mark.parametrize("remove, match", [
    pytest.param("DATE-OBS", "header has no DATE-OBS or MJD-OBS", id="date-obs"),
    pytest.param("EXPTIME", "header has no EXPTIME or EXPOSURE", id="exptime"),
    pytest.param("IMAGETYP", "header has no IMAGETYP", id="imagetyp"),
    pytest.param("RDNOISE", "header has no RDNOISE or READNOIS or RON", id="rdnoise"),
])
def test_missing_keyword(tmp_path, science_header, remove, match):
    del science_header[remove]
    path = _write(tmp_path / "h.fits", science_header)
    with pytest.raises(FrameError, match=re.escape(match)) as info:
        read_frame_info(path)
    assert str(info.value).startswith(str(path) + ": ")


@pytest.mark.parametrize("key, value, match", [
    pytest.param("IMAGETYP", "focus", "IMAGETYP = 'focus' is not a known frame type",
                 id="unknown-kind"),
    pytest.param("EXPTIME", -1.0, "EXPTIME = -1.0 is not a finite number from 0 to 86400",
                 id="negative-exptime"),
    pytest.param("EXPTIME", "long", "EXPTIME = 'long' is not a finite number", id="text"),
    pytest.param("DATE-OBS", "yesterday", "DATE-OBS = 'yesterday' is not an ISO date and time",
                 id="bad-date"),
    pytest.param("GAIN", 0.0, "GAIN = 0.0 is not a finite number from 0.001 to 1000",
                 id="zero-gain"),
])
def test_bad_values(tmp_path, science_header, key, value, match):
    science_header[key] = value
    with pytest.raises(FrameError, match=re.escape(match)):
        read_frame_info(_write(tmp_path / "i.fits", science_header))


def test_bad_ccdsum(tmp_path, science_header):
    del science_header["XBINNING"], science_header["YBINNING"]
    science_header["CCDSUM"] = "2"
    with pytest.raises(FrameError, match=re.escape("CCDSUM = '2' is not two integers")):
        read_frame_info(_write(tmp_path / "j.fits", science_header))


@pytest.mark.parametrize("compress", [pytest.param(False, id="plain"),
                                      pytest.param(True, id="compressed")])
@pytest.mark.parametrize("cut", [pytest.param(3000, id="in-data"),
                                 pytest.param(20000, id="in-header")])
def test_truncated_file(tmp_path, science_header, compress, cut):
    data = np.random.default_rng(5).integers(0, 60000, (64, 80)).astype(np.uint16)
    path = _write(tmp_path / ("t.fits.fz" if compress else "t.fits"), science_header, data,
                  compress=compress)
    raw = open(path, "rb").read()
    with open(path, "wb") as fh:
        fh.write(raw[: len(raw) - cut])
    with pytest.raises(FrameError, match=re.escape("file is truncated")):
        read_frame_info(path)


def test_not_fits(tmp_path):
    path = tmp_path / "notes.fits"
    path.write_text("observing log, not an image\n" * 20)
    with pytest.raises(FrameError, match=re.escape("not a readable FITS file")):
        read_frame_info(path)


def test_missing_file(tmp_path):
    with pytest.raises(FrameError, match=re.escape("no such file")):
        read_frame_info(tmp_path / "absent.fits")


def test_header_only_file(tmp_path, science_header):
    path = tmp_path / "empty.fits"
    fits.PrimaryHDU(header=science_header).writeto(path)
    with pytest.raises(FrameError, match=re.escape("no HDU holds a 2-D image with data")):
        read_frame_info(path)


def test_scan_night_skips_and_goes_on(tmp_path, science_header):
    _write(tmp_path / "sci_1.fits", science_header)
    _write(tmp_path / "sci_2.fits.fz", science_header, compress=True)
    bad = science_header.copy()
    del bad["DATE-OBS"]
    _write(tmp_path / "sci_3.fits", bad)
    (tmp_path / "junk.fits").write_bytes(b"\x00" * 100)
    (tmp_path / "README.txt").write_text("not read: not a FITS name")
    night = scan_night(tmp_path)
    assert [f.name for f in night.frames] == ["sci_1", "sci_2"]
    reasons = {os.path.basename(s.item): s.reason for s in night.skipped}
    assert set(reasons) == {"junk.fits", "sci_3.fits"}
    assert reasons["sci_3.fits"] == "header has no DATE-OBS or MJD-OBS or JD (time of the exposure)"
    assert all(s.stage == "ingest" for s in night.skipped)
    assert night.counts() == {"bias": 0, "dark": 0, "flat": 0, "science": 2}
    table = night.to_table()
    assert list(table["name"]) == ["sci_1", "sci_2"]
    assert table["exptime"].unit == u.s


def test_scan_night_list_reads_every_file(tmp_path, science_header):
    txt = tmp_path / "log.txt"
    txt.write_text("hello")
    good = _write(tmp_path / "x.fits", science_header)
    night = scan_night([good, txt])
    assert len(night.frames) == 1 and night.skipped[0].item == str(txt)
