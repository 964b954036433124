import os
import re

import numpy as np
import pytest
from astropy import units as u
from astropy.io import fits

from photpipe.frames import (
    FrameError,
    calibrate_frame,
    read_calibrated,
    read_frame_info,
    write_calibrated,
)
from photpipe.frames.types import CalibratedFrame


@pytest.fixture
def frame(scenario_night):
    info = scenario_night["plan"].science[3]
    frame = calibrate_frame(info, scenario_night["masters"])
    frame.history.append("note: " + "a long line that must survive the 72-character FITS "
                         "card limit without being cut or split into two entries")
    return frame


def test_round_trip(frame, tmp_path):
    path = write_calibrated(frame, tmp_path / "cal" / "sci.fits")
    back = read_calibrated(path)
    np.testing.assert_array_equal(back.data, frame.data)
    np.testing.assert_array_equal(back.variance, frame.variance)
    np.testing.assert_array_equal(back.quality, frame.quality)
    assert back.info == frame.info
    assert back.history == frame.history and back.flags == frame.flags == ("dark_scaled",)
    assert back.name == frame.name == "sci_0004"
    # the WCS maps pixels to the same sky positions
    xy = np.array([[0.0, 0.0], [100.0, 50.0]])
    np.testing.assert_allclose(back.wcs.all_pix2world(xy, 0), frame.wcs.all_pix2world(xy, 0),
                               atol=1e-10)
    with fits.open(path) as hdul:
        assert [h.name for h in hdul] == ["PRIMARY", "DATA", "VARIANCE", "QUALITY"]
        assert hdul["DATA"].header["BUNIT"] == "electron"
        assert hdul["VARIANCE"].header["BUNIT"] == "electron2"
        assert hdul["QUALITY"].header["QBIT3"] == "COSMIC_RAY"
        assert hdul[0].header["PPRAW"] == frame.info.path
        assert hdul[0].header["EXPTIME"] == frame.info.exptime.to_value(u.s)


def test_failed_write_leaves_old_file_and_no_temporary(frame, tmp_path, monkeypatch):
    path = tmp_path / "sci.fits"
    path.write_bytes(b"previous result")

    def broken(self, fileobj, **kw):
        fileobj.write(b"half a file")
        raise OSError("disk full")
    monkeypatch.setattr(fits.HDUList, "writeto", broken)
    with pytest.raises(OSError, match="disk full"):
        write_calibrated(frame, path)
    assert path.read_bytes() == b"previous result"
    assert os.listdir(tmp_path) == ["sci.fits"]


def test_read_raw_frame_is_refused(scenario_night):
    raw = scenario_night["plan"].science[0].path
    with pytest.raises(FrameError, match=re.escape("not a photpipe calibrated frame")):
        read_calibrated(raw)


def test_products_are_not_taken_for_raw_frames(frame, scenario_night, tmp_path):
    path = write_calibrated(frame, tmp_path / "sci_cal.fits")
    with pytest.raises(FrameError, match=re.escape("is a photpipe calibrated frame, not a raw")):
        read_frame_info(path)
    (master, *_) = scenario_night["masters"].masters
    with pytest.raises(FrameError, match=re.escape("is a photpipe master calibration, not")):
        read_frame_info(master.path)


def test_write_wrong_type(tmp_path):
    with pytest.raises(TypeError, match="'frame' must be a CalibratedFrame, got dict"):
        write_calibrated({}, tmp_path / "x.fits")


def test_mismatched_planes_rejected(frame):
    with pytest.raises(ValueError, match="data, variance and quality planes differ in shape"):
        CalibratedFrame(frame.info, frame.data, frame.variance[:-1], frame.quality)


def test_a_night_in_a_non_ascii_folder_is_calibrated_and_written(scenario_night, tmp_path):
    # FITS cards hold printable ASCII only (FITS Standard 4.0, Pearson et al. 2016, sect.
    # 4.2.1): the paths go in percent-encoded (RFC 3986, sect. 2.1) and come back exactly
    import shutil

    from photpipe.frames import build_masters, plan_calibrations, scan_night

    folder = tmp_path / "Nächte" / "2026-12-01 Kiruna–Ost 彗星"
    folder.mkdir(parents=True)
    for name in os.listdir(scenario_night["folder"]):
        if name.endswith((".fits", ".fz")) and not name.startswith(("sci_0002", "sci_0003")):
            shutil.copy(scenario_night["folder"] / name, folder / name)
    plan = plan_calibrations(scan_night(folder))
    masters = build_masters(plan, folder / "masters")
    frame = calibrate_frame(plan.science[0], masters)
    path = write_calibrated(frame, folder / "calibrated" / f"{frame.name}.fits")
    back = read_calibrated(path)
    assert back.info.path == frame.info.path and "彗星" in back.info.path
    assert back.history == frame.history
    with fits.open(path) as hdul:
        raw = hdul[0].header["PPRAW"]
        assert raw.isascii() and "%E5%BD%97%E6%98%9F" in raw     # 彗星 in UTF-8
    with fits.open(masters.masters[0].path) as hdul:
        assert all(str(text).isascii() for text in hdul[0].header["HISTORY"])
