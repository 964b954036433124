"""Calibration straight from the stored (memory-mapped, unscaled) image, block by block.

The oracle is the plain whole-array formula of `apply_calibration`'s Notes on the image as astropy
scales it (a slow, obviously correct implementation).
"""

import dataclasses
import mmap

import numpy as np
import pytest
from astropy.io import fits
from astropy.wcs import WCS

from photpipe.frames import calibrate as calibrate_module
from photpipe.frames import calibrate_frame, prepare_calibration
from photpipe.frames._fitsfile import stored_image
from photpipe.frames.types import Quality


def _oracle(raw, prepared, saturation):
    x = raw.astype(np.float64) - prepared.offset
    data = x * prepared.gain_over_flat
    var = (np.maximum(x, 0) * prepared.poisson_factor + prepared.constant_var
           + data**2 * prepared.flat_relvar)
    quality = prepared.quality.copy()
    quality[raw >= saturation] |= np.uint16(Quality.SATURATED)
    quality[~np.isfinite(raw)] |= np.uint16(Quality.NONFINITE)
    return data, var, quality


def _rewrite(info, tmp_path, name, encode):
    with fits.open(info.path) as hdul:
        hdu = hdul[-1] if len(hdul) > 1 else hdul[0]
        raw = hdu.data.astype(np.float64)
        header = hdu.header.copy()
    path = tmp_path / name
    data, keys = encode(raw.copy())
    out = fits.PrimaryHDU(data, header=header)
    for key in ("BZERO", "BSCALE"):
        out.header.remove(key, ignore_missing=True)
    out.header.update(keys)
    out.writeto(path)
    with fits.open(path) as hdul:
        scaled = hdul[0].data.astype(np.float64)
    return dataclasses.replace(info, path=str(path)), scaled


def _float_with_nan(raw):
    raw[5, 7] = np.nan
    return raw.astype(np.float32), {}


def _int32_bscale(raw):
    return np.round(raw / 2.0).astype(np.int32), {"BSCALE": 2.0, "BZERO": 10.0}


def _uint16(raw):
    # unsigned 16-bit as FITS stores it: int16 with BZERO = 32768 (FITS Standard 4.0, 5.3)
    return np.round(raw).astype(np.uint16), {}


@pytest.mark.parametrize("encode", [pytest.param(_float_with_nan, id="float32-nan"),
                                    pytest.param(_int32_bscale, id="int32-bscale"),
                                    pytest.param(_uint16, id="uint16-bzero")])
def test_stored_image_calibration_matches_the_whole_array_formula(scenario_night, tmp_path,
                                                                  monkeypatch, encode):
    # a block of 7 rows of 192 pixels: the 160 rows end in a partial block
    monkeypatch.setattr(calibrate_module, "_BLOCK_PIXELS", 7 * 192 + 5)
    info, raw = _rewrite(scenario_night["plan"].science[0], tmp_path, "raw.fits", encode)
    masters = scenario_night["masters"]
    frame = calibrate_frame(info, masters, detect_cosmics=False)
    bias, dark, flat, _ = masters.choose(info)
    prepared = prepare_calibration(bias, dark, flat, exptime=info.exptime.value,
                                   gain=info.gain.value, read_noise=info.read_noise.value)
    data, var, quality = _oracle(raw, prepared, info.saturation.value)
    np.testing.assert_allclose(frame.data, data, rtol=1e-5, atol=1e-2)
    np.testing.assert_allclose(frame.variance, var, rtol=1e-5, atol=1e-2)
    np.testing.assert_array_equal(frame.quality, quality)


def test_stored_image_is_a_memory_map_of_the_stored_integers(scenario_night, tmp_path):
    info, scaled = _rewrite(scenario_night["plan"].science[0], tmp_path, "raw.fits", _uint16)
    with stored_image(info.path) as (raw, bscale, bzero):
        assert raw.dtype == np.dtype(">i2") and (bscale, bzero) == (1.0, 32768.0)
        base, mapped = raw, False
        while base is not None and not mapped:
            mapped = isinstance(base, (np.memmap, mmap.mmap))
            base = getattr(base, "base", None)
        assert mapped
        np.testing.assert_array_equal(raw * bscale + bzero, scaled)


def test_compressed_image_is_decoded_but_not_scaled(scenario_night):
    info = scenario_night["plan"].science[0]     # the scenario writes tile-compressed files
    with stored_image(info.path) as (raw, bscale, bzero):
        assert raw.dtype.kind == "i" and (bscale, bzero) == (1.0, 32768.0)
        stored = raw * bscale + bzero
    with fits.open(info.path) as hdul:
        np.testing.assert_array_equal(stored, hdul[1].data)


def test_blank_pixels_are_read_as_nan(scenario_night, tmp_path):
    def with_blank(raw):
        data = np.round(raw).astype(np.int32)
        data[3, 4] = -999
        return data, {"BLANK": -999}
    info, raw = _rewrite(scenario_night["plan"].science[0], tmp_path, "blank.fits", with_blank)
    with stored_image(info.path) as (data, bscale, bzero):
        assert np.isnan(data[3, 4]) and (bscale, bzero) == (1.0, 0.0)
    frame = calibrate_frame(info, scenario_night["masters"], detect_cosmics=False)
    assert frame.quality[3, 4] & Quality.NONFINITE


def test_wcs_from_the_wcs_keywords_equals_the_whole_header(scenario_night):
    info = scenario_night["plan"].science[0]
    header = info.header.copy()
    header["A_ORDER"], header["B_ORDER"] = 2, 2
    header["A_2_0"], header["B_0_2"] = 1e-6, -2e-6
    header["CTYPE1"], header["CTYPE2"] = "RA---TAN-SIP", "DEC--TAN-SIP"
    for h in (info.header, header):
        wcs, why = calibrate_module._read_wcs(h)
        assert why is None
        full = WCS(h, naxis=2).celestial   # astropy on the whole header is the reference
        xy = np.array([[0.0, 0.0], [100.0, 150.0], [191.0, 159.0]])
        np.testing.assert_allclose(wcs.all_pix2world(xy, 0), full.all_pix2world(xy, 0),
                                   rtol=0, atol=1e-10)
