"""The comet's position per frame and its error, against scenario frames with a known position.

The frames are the small campaign-like frames of ``tests/photometry/test_small_frame.py``
(1.5"/pix, seeing 2.6", 75 stars of 15-19 mag, a 1/ρ coma of Afρ 235 cm), with the comet moved
by a random offset and the header WCS off by up to 3 pixels; the photometry stage measures the
comet's centre of light and refines the WCS on the stars, as in a run.
"""

import warnings

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.table import QTable
from photometry._synthetic import make_synthetic
from scipy.stats import median_abs_deviation

from photpipe.orbit import (
    ades_records,
    centre_of_light_covariance,
    comet_position_row,
    plate_error_arcsec,
    read_ades,
    write_ades_psv,
)
from photpipe.photometry import measure_comet_frame
from photpipe.photometry.locate import refine_comet_centre

_SMALL = dict(shape=(160, 160), pixel_scale=1.5 * u.arcsec, afrho=235 * u.cm, r_h=1.35 * u.au,
              delta=0.55 * u.au, n_stars=75, mag_range=(15.0, 19.0), zero_point=23.8,
              exptime=40 * u.s, sky_rate=43 * u.electron / u.s, fwhm=2.6 * u.arcsec)
_APERTURES = dict(apertures_km=[2000, 4000] * u.km, apertures_arcsec=[4.0] * u.arcsec,
                  min_stars=3)


def _frame_position(seed):
    """(row, truth SkyCoord, truth pixel, centroid covariance) of one scenario frame."""
    rng = np.random.default_rng(100 + seed)
    syn = make_synthetic(**_SMALL, seed=seed, comet_offset_arcsec=tuple(rng.uniform(-20, 20, 2)),
                         wcs_offset_pix=tuple(rng.uniform(-3, 3, 2)))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        phot = measure_comet_frame(syn.frame, syn.stars, syn.geometry, **_APERTURES)
    d = phot.details
    x, y = float(phot.comet["x_pix"][0].value), float(phot.comet["y_pix"][0].value)
    sx, sy = phot.wcs.world_to_pixel_values(syn.stars["ra"].to_value(u.deg),
                                            syn.stars["dec"].to_value(u.deg))
    flux = 40.0 * 10 ** (-0.4 * (np.asarray(syn.stars["R"], float) - phot.zero_point.zp))
    cov = centre_of_light_covariance(
        syn.frame.data, syn.frame.variance, x, y, sky=d["centroid_sky"],
        box=d["centroid_box_pix"], mask=d["centroid_mask"], star_xy=np.column_stack([sx, sy]),
        star_flux=flux, moffat=(d["psf_moffat"]["alpha_pix"], d["psf_moffat"]["beta"]))
    wcs_fit = d["wcs_correction"]
    row = comet_position_row(x, y, cov, wcs=phot.wcs, star_rms_pix=wcs_fit["rms"],
                             n_stars=wcs_fit["n_matched"], time_mid=syn.frame.info.time_mid,
                             station="Z01", object_id="C/2026 Q1", catalogue="scenario")
    truth = SkyCoord(syn.geometry["ra"], syn.geometry["dec"])
    return row, truth, (syn.truth.comet_x, syn.truth.comet_y), cov


@pytest.mark.slow
def test_astrometric_pulls_over_seeds():
    pulls, centroid = [], []
    for seed in range(40):
        row, truth, (tx, ty), cov = _frame_position(seed)
        d_ra = (row["ra_deg"] - truth.ra.deg) * np.cos(truth.dec.rad) * 3600.0
        d_dec = (row["dec_deg"] - truth.dec.deg) * 3600.0
        pulls.append((d_ra / row["ra_err_arcsec"], d_dec / row["dec_err_arcsec"]))
        centroid.append(((row["x_pix"] - tx) / np.sqrt(cov[0, 0]),
                         (row["y_pix"] - ty) / np.sqrt(cov[1, 1])))
    pulls, centroid = np.array(pulls), np.array(centroid)
    # honest errors: (estimate - truth) / error has σ ≈ 1 (common practice; measured 1.00 and
    # 0.76 for RA and Dec over these 40 seeds, the Dec error a little conservative)
    sigma = pulls.std(axis=0)
    assert np.all((sigma > 0.65) & (sigma < 1.3)), sigma
    assert np.all(np.abs(pulls.mean(axis=0)) < 0.35)
    # the centroid's own error, field stars' light and the mask's lopsidedness included
    # (robust σ 0.91 and 0.97 measured)
    robust = median_abs_deviation(centroid, axis=0, scale="normal")
    assert np.all((robust > 0.7) & (robust < 1.4)), robust


def test_centroid_error_of_a_coma_against_repeated_noise():
    # a self-centred window on a 1/ρ coma: the error is about twice the fixed-box formula's;
    # the oracle is the scatter of the centroid itself over 200 noise draws
    from scipy.ndimage import gaussian_filter

    rng = np.random.default_rng(1)
    yy, xx = np.mgrid[:61, :61]
    rho = np.hypot(xx - 30.3, yy - 29.8)
    signal = gaussian_filter(300 / np.maximum(rho, 0.3), 1.3) + 100.0
    found, predicted = [], []
    for k in range(200):
        data = signal + rng.normal(0, 1, signal.shape) * np.sqrt(signal + 64)
        x, y, _ = refine_comet_centre(data, np.zeros(data.shape, bool), 30, 30, sky=100.0,
                                      box=11, max_shift=5)
        found.append((x, y))
        if k < 10:
            cov = centre_of_light_covariance(data, signal + 64, x, y, sky=100.0, box=11)
            predicted.append(np.sqrt(np.diag(cov)))
    np.testing.assert_allclose(np.mean(predicted, axis=0), np.std(found, axis=0), rtol=0.15)


def test_plate_error_hand_value():
    # s = rms/√2 per axis; s √(2/N) = 0.3/√2 · √(2/18) · 1.5 arcsec = 0.45/√18 = 0.10607
    # (hand calculation)
    assert plate_error_arcsec(0.3, 18, 1.5) == pytest.approx(0.10607, rel=1e-4)
    assert np.isnan(plate_error_arcsec(0.3, 2, 1.5))


def test_ades_file_of_positions_reads_back(tmp_path):
    rows = QTable({"mjd_utc_mid": [61009.1, 61009.2], "ra_deg": [52.001, 52.002] * u.deg,
                   "dec_deg": [18.0, 18.001] * u.deg, "ra_err_arcsec": [0.1, 0.2] * u.arcsec,
                   "dec_err_arcsec": [0.15, 0.25] * u.arcsec, "radec_corr": [0.0, 0.1],
                   "lon_deg": [-17.9] * 2 * u.deg, "lat_deg": [28.7] * 2 * u.deg,
                   "height_m": [2300.0] * 2 * u.m, "stn": ["Hilltop"] * 2,
                   "object": ["C/2026 Q1"] * 2, "ast_cat": ["scenario"] * 2})
    path = tmp_path / "astrometry.psv"
    write_ades_psv(ades_records(rows), path)
    back = read_ades([str(path)])
    table = back.table
    assert back.problems == []
    assert len(table) == 2
    np.testing.assert_allclose(table["rms_dec_arcsec"], [0.15, 0.25])
    np.testing.assert_allclose(table["pos1"], [342.1, 342.1])
    assert list(table["sys"]) == ["WGS84", "WGS84"]
