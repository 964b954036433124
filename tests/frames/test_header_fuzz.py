"""Seeded header fuzz: reading and calibrating a frame raise only FrameError, whatever the header.

Each variant takes a good science frame of the scenario night and spoils one to three cards with
values real headers have held: INF, NaN, blanks, complex numbers, 1E30, text, logical values,
negative and huge numbers, odd dates. The night's other frames are untouched.
"""

import numpy as np
import pytest
from astropy.io import fits

from photpipe.frames import FrameError, calibrate_frame, read_frame_info

KEYS = ["EXPTIME", "EXPOSURE", "MJD-OBS", "DATE-OBS", "TIME-OBS", "JD", "XBINNING", "YBINNING",
        "CCDSUM", "GAIN", "RDNOISE", "SATURATE", "BSCALE", "BZERO", "TIMESYS", "FILTER",
        "IMAGETYP", "SITELAT", "SITELONG", "SITEELEV", "OBSGEO-X", "OBSGEO-B", "TRIMSEC",
        "BIASSEC", "PIXSCALE", "XPIXSZ", "FOCALLEN", "INSTRUME", "OBJECT"]
VALUES = [float("inf"), float("-inf"), float("nan"), "", " ", 1e30, -1e30, 0, -1, 2 ** 62,
          1.5, "INF", "nan", "abc", True, False, complex(1, 2), "2026-13-45", "2026-12-01",
          "12:99:00", "1 2 3", "[0:5,1:2]", "[1:99999,1:2]", 1e-30, "  R  ", "TT", "XYZ"]
N_VARIANTS = 400  # thousands were run while developing; 400 keeps the suite quick


def _variant(header, rng):
    hdr = header.copy()
    for _ in range(int(rng.integers(1, 4))):
        key = KEYS[int(rng.integers(len(KEYS)))]
        value = VALUES[int(rng.integers(len(VALUES)))]
        try:
            hdr[key] = value
        except (ValueError, TypeError):
            hdr[key] = str(value)
    return hdr


@pytest.mark.slow
def test_fuzzed_headers_raise_only_frame_error(scenario_night, tmp_path):
    rng = np.random.default_rng(19)
    info = scenario_night["night"].of_kind("science")[0]
    with fits.open(info.path) as hdul:
        index = 1 if len(hdul) > 1 else 0
        data = hdul[index].data.copy()
        primary = hdul[0].header.copy()
        image_header = hdul[index].header.copy()
    base = primary.copy()
    for card in image_header.cards:
        if card.keyword not in ("XTENSION", "ZIMAGE", "PCOUNT", "GCOUNT", "EXTNAME", "") \
                and not card.keyword.startswith(("Z", "TTYPE", "TFORM", "NAXIS", "BITPIX")):
            base[card.keyword] = card.value
    masters = scenario_night["masters"]
    outcomes = {"read": 0, "calibrated": 0, "frame_error": 0}
    for i in range(N_VARIANTS):
        path = tmp_path / f"fuzz_{i:04d}.fits"
        hdr = _variant(base, rng)
        try:
            fits.PrimaryHDU(data, header=hdr).writeto(path, output_verify="silentfix")
        except Exception:  # noqa: BLE001 - astropy refused to write this variant at all
            continue
        try:
            got = read_frame_info(path)
            outcomes["read"] += 1
            calibrate_frame(got, masters, detect_cosmics=False)
            outcomes["calibrated"] += 1
        except FrameError as exc:
            assert str(exc).startswith(str(path))
            outcomes["frame_error"] += 1
        path.unlink()
    assert outcomes["frame_error"] > 50
    assert outcomes["calibrated"] > 50
