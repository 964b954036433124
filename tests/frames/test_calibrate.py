import re

import numpy as np
import pytest
from astropy import units as u
from astropy.io import fits

from photpipe.frames import (
    FrameError,
    Prepared,
    apply_calibration,
    build_masters,
    calibrate_frame,
    plan_calibrations,
    scan_night,
)
from photpipe.frames.types import Quality
from photpipe.scenario import DetectorSpec, Instrument, SceneSpec, render_frame

from . import _synthetic as S
from .conftest import POINTING


def _calibrated(scenario_night, i=0, **kw):
    info = scenario_night["plan"].science[i]
    frame = calibrate_frame(info, scenario_night["masters"], **kw)
    return frame, scenario_night["truth"].science[info.path]


def test_patterns_removed_to_the_noise(scenario_night):
    inst = scenario_night["instrument"]
    frame, truth = _calibrated(scenario_night)
    # the master flat is normalised to its median, the scenario's to its mean: one constant
    scale = np.median(inst.patterns.flat)
    good = frame.good & ~truth.cosmic
    z = ((frame.data - scale * truth.signal) / np.sqrt(frame.variance))[good]
    assert abs(z.mean()) < 0.05
    assert z.std() == pytest.approx(1.0, rel=0.03)
    # no trace of the bias, dark or flat patterns is left in the residual (regression slopes
    # consistent with zero at 4 sigma)
    resid = (frame.data - scale * truth.signal)[good]
    for pattern in (inst.patterns.bias, inst.patterns.flat, inst.patterns.dark_rate):
        x = pattern[good] - pattern[good].mean()
        if x.std() == 0:
            continue
        slope = np.sum(x * resid) / np.sum(x * x)
        slope_err = np.sqrt(np.sum(x * x * frame.variance[good])) / np.sum(x * x)
        assert abs(slope) < 4 * slope_err


def test_without_flat_division_the_test_would_see_the_flat(scenario_night):
    # sensitivity of the test above: undo the flat division and the regression on the flat
    # pattern must show it far beyond 4 sigma
    inst = scenario_night["instrument"]
    frame, truth = _calibrated(scenario_night)
    scale = np.median(inst.patterns.flat)
    good = frame.good & ~truth.cosmic
    resid = (frame.data * inst.patterns.flat / scale - scale * truth.signal)[good]
    x = inst.patterns.flat[good] - inst.patterns.flat[good].mean()
    slope = np.sum(x * resid) / np.sum(x * x)
    slope_err = np.sqrt(np.sum(x * x * frame.variance[good])) / np.sum(x * x)
    assert abs(slope) > 20 * slope_err


def test_hot_pixels_and_saturation_flagged(scenario_night):
    inst = scenario_night["instrument"]
    frame, truth = _calibrated(scenario_night)
    assert np.array_equal((frame.quality & Quality.HOT) > 0, inst.patterns.hot)
    assert np.array_equal((frame.quality & Quality.SATURATED) > 0, truth.saturated)
    assert np.all((frame.quality[inst.patterns.dead] & (Quality.LOW_FLAT | Quality.BAD)) > 0)


def test_cosmic_rays_flagged(scenario_night):
    found = injected = false = 0
    for i in range(4):
        frame, truth = _calibrated(scenario_night, i)
        hits = (frame.quality & Quality.COSMIC_RAY) > 0
        injected += truth.cosmic.sum()
        found += (hits & truth.cosmic).sum()
        false += (hits & ~truth.cosmic).sum()
    assert injected > 10
    assert found / injected > 0.9
    assert false / (4 * frame.data.size) < 5e-4


def test_cosmic_ray_detection_can_be_off(scenario_night):
    frame, _ = _calibrated(scenario_night, detect_cosmics=False)
    assert not np.any(frame.quality & Quality.COSMIC_RAY)
    assert not any(h.startswith("cosmic rays") for h in frame.history)


def test_history_flags_and_scaled_dark(scenario_night):
    frame, _ = _calibrated(scenario_night, 3)   # 120 s frame, 60 s darks
    assert frame.flags == ("dark_scaled",)
    assert "rate scaled from 60 s to 120 s" in frame.history[1]
    assert frame.history[0].startswith("bias: subtracted bias master master_bias_b1x1_160x192")
    assert frame.wcs is not None and frame.wcs.has_celestial
    assert frame.data.dtype == np.float32 and frame.variance.dtype == np.float32
    assert frame.quality.dtype == np.uint16


def test_scaled_dark_recovers_truth(scenario_night):
    inst = scenario_night["instrument"]
    frame, truth = _calibrated(scenario_night, 3)
    good = frame.good & ~truth.cosmic
    z = ((frame.data - np.median(inst.patterns.flat) * truth.signal)
         / np.sqrt(frame.variance))[good]
    assert abs(z.mean()) < 0.05 and z.std() == pytest.approx(1.0, rel=0.03)


@pytest.mark.slow
def test_variance_matches_scatter_of_repeated_frames(tmp_path):
    """Repeat the whole night (calibrations and science) 40 times; compare the scatter."""
    inst = Instrument(shape=(24, 32), pattern_seed=5, hot_pixel_fraction=0.0,
                      dead_pixel_fraction=0.0)
    rng = np.random.default_rng(12)
    from astropy.time import Time
    t = Time("2026-12-01T03:00:00", scale="utc")
    values, variances = [], []
    for rep in range(40):
        folder = tmp_path / f"rep{rep}"
        folder.mkdir()
        frames = [("bias", 0.0, i) for i in range(5)] + [("dark", 30.0, i) for i in range(3)]
        frames += [("flat", 2.0, i) for i in range(4)] + [("science", 30.0, 0)]
        for kind, exptime, i in frames:
            hdul, _ = render_frame(
                kind, inst, time=t, exptime=exptime * u.s,
                scene=SceneSpec(pointing=POINTING, sky_rate=40 * u.electron / u.s),
                detector=DetectorSpec(cosmic_rays=False), rng=rng)
            hdul.writeto(folder / f"{kind}_{i}.fits")
        plan = plan_calibrations(scan_night(folder))
        frame = calibrate_frame(plan.science[0], build_masters(plan, folder / "m"),
                                detect_cosmics=False)
        values.append(frame.data)
        variances.append(frame.variance)
    values, variances = np.array(values, float), np.array(variances, float)
    empirical = values.var(axis=0, ddof=1)
    predicted = variances.mean(axis=0)
    # 40 repetitions of 768 pixels: the ratio of the means is known to about 0.8%
    assert empirical.mean() / predicted.mean() == pytest.approx(1.0, abs=0.03)
    # and pixel by pixel the ratio scatters as a chi-square with 39 degrees of freedom
    ratio = empirical / predicted
    assert np.median(ratio) == pytest.approx(1.0 - 2 / (3 * 39), abs=0.03)


def test_all_saturated_frame(tmp_path):
    det = S.make_detector((40, 48))
    paths = S.write_night(tmp_path, det, n_science=1)
    plan = plan_calibrations(scan_night(tmp_path))
    masters = build_masters(plan, tmp_path / "m")
    hdr = fits.getheader(paths["science"][0])
    S.write(paths["science"][0], np.full(det.shape, S.SATURATE), hdr)
    with pytest.raises(FrameError, match=re.escape("every pixel is saturated (raw >= 65535 adu)")):
        calibrate_frame(paths["science"][0], masters)
    half = np.full(det.shape, 2000.0)
    half[:30] = S.SATURATE
    S.write(paths["science"][0], half, hdr)
    with pytest.raises(FrameError, match=re.escape("75.0% of pixels are saturated")):
        calibrate_frame(paths["science"][0], masters)


def test_shape_mismatch(tmp_path):
    det = S.make_detector((40, 48))
    paths = S.write_night(tmp_path, det, n_science=1)
    masters = build_masters(plan_calibrations(scan_night(tmp_path)), tmp_path / "m")
    info = plan_calibrations(scan_night(tmp_path)).science[0]
    hdr = fits.getheader(paths["science"][0])
    S.write(paths["science"][0], np.full((40, 50), 1500.0), hdr)
    with pytest.raises(FrameError, match=re.escape("image shape (40, 50) differs from its "
                                                   "header's (40, 48)")):
        calibrate_frame(info, masters)
    # read afresh, the frame simply has no masters of its shape
    with pytest.raises(FrameError, match=re.escape("no bias frames with binning 1x1, 40x50")):
        calibrate_frame(paths["science"][0], masters)


def test_no_dark_available(tmp_path):
    det = S.make_detector((40, 48))
    S.write_night(tmp_path, det, n_science=1, n_dark=0)
    plan = plan_calibrations(scan_night(tmp_path))
    frame = calibrate_frame(plan.science[0], build_masters(plan, tmp_path / "m"))
    assert frame.flags == ("no_dark",)
    assert "dark: none available" in frame.history[1]


def _prepared(flat, *, bias=100.0, gain=2.0, read_noise=5.0):
    shape = flat.shape
    z = np.zeros(shape, np.float32)
    return Prepared(np.full(shape, bias, np.float32), z, None, None,
                    flat.astype(np.float32), z, np.zeros(shape, np.uint16), exptime=10.0,
                    gain=gain, read_noise=read_noise)


def test_zero_and_nan_flat_pixels():
    flat = np.ones((3, 4))
    flat[0, 0], flat[1, 1], flat[2, 2] = 0.0, np.nan, -0.5
    raw = np.full((3, 4), 600.0, np.float32)
    data, var, quality = apply_calibration(raw, _prepared(flat), saturation=65535.0)
    bad = ~(np.isfinite(flat) & (flat > 0))
    assert np.all(np.isnan(data[bad])) and np.all(np.isnan(var[bad]))
    assert np.all(quality[bad] & Quality.NONFINITE)
    assert np.all(data[~bad] == 1000.0) and np.all(quality[~bad] == 0)  # (600 - 100) * 2


def test_apply_calibration_exact_values():
    # one pixel by hand: raw 1100 adu, bias 100 adu, gain 2 e/adu, flat 0.8, read noise 5 e
    flat = np.full((1, 1), 0.8)
    data, var, quality = apply_calibration(np.array([[1100.0]], np.float32), _prepared(flat),
                                           saturation=1100.0)
    assert data[0, 0] == pytest.approx(2.0 * 1000 / 0.8)
    # (G x + RN^2 + G^2/12) / F^2 with x = 1000 adu (Merline & Howell 1995 terms)
    assert var[0, 0] == pytest.approx((2000 + 25 + 4 / 12) / 0.64, rel=1e-6)
    assert quality[0, 0] == Quality.SATURATED


def test_rebuilt_master_is_read_again(tmp_path):
    det = S.make_detector((40, 48))
    S.write_night(tmp_path, det, n_science=1)
    plan = plan_calibrations(scan_night(tmp_path))
    masters = build_masters(plan, tmp_path / "m")
    before = calibrate_frame(plan.science[0], masters, detect_cosmics=False)
    (flat,) = masters.of_kind("flat").values()
    with fits.open(flat.path) as hdul:
        hdul["DATA"].data = hdul["DATA"].data * np.float32(2.0)
        hdul.writeto(flat.path, overwrite=True)
    after = calibrate_frame(plan.science[0], masters, detect_cosmics=False)
    np.testing.assert_allclose(after.data, before.data / 2, rtol=1e-6)
