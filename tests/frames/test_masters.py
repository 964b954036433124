import os
import pickle
import re

import numpy as np
import pytest
from astropy import units as u
from astropy.io import fits

from photpipe.frames import (
    FrameError,
    NightInventory,
    build_masters,
    load_master,
    plan_calibrations,
    scan_night,
)
from photpipe.frames.types import Quality

from . import _synthetic as S


def _master(masters, kind):
    (m,) = masters.of_kind(kind).values()
    return m


def test_night_is_complete(scenario_night):
    night, plan, masters = (scenario_night[k] for k in ("night", "plan", "masters"))
    assert night.skipped == [] and plan.skipped == [] and masters.skipped == []
    assert night.counts() == {"bias": 9, "dark": 5, "flat": 6, "science": 4}
    assert sorted(m.kind for m in masters.masters) == ["bias", "dark", "flat"]


def test_master_bias_recovers_truth(scenario_night):
    inst = scenario_night["instrument"]
    m = load_master(_master(scenario_night["masters"], "bias").path)
    truth = inst.patterns.bias
    sigma1 = (inst.read_noise / inst.gain).to_value(u.adu)   # one frame's noise, adu
    resid = m.value - truth
    # mean of 9 frames: noise sigma/sqrt(9); the rounding to whole adu adds 1/12 adu^2
    expected = np.sqrt((sigma1**2 + 1 / 12) / 9)
    assert abs(resid.mean()) < 4 * expected / np.sqrt(resid.size)
    assert resid.std() == pytest.approx(expected, rel=0.05)
    assert np.median(m.variance) == pytest.approx(sigma1**2 / 9, rel=0.02)


def test_master_dark_rate_recovers_truth(scenario_night):
    inst = scenario_night["instrument"]
    m = load_master(_master(scenario_night["masters"], "dark").path)
    gain = inst.gain.to_value(u.electron / u.adu)
    truth_adu_s = inst.patterns.dark_rate / gain
    z = (m.value - truth_adu_s) / np.sqrt(m.variance)
    assert np.mean(z) == pytest.approx(0.0, abs=0.03)
    assert np.std(z) == pytest.approx(1.0, rel=0.05)
    # the injected hot pixels are all found, and nothing else
    hot = (m.quality & Quality.HOT) > 0
    assert np.array_equal(hot, inst.patterns.hot)


def test_master_flat_recovers_truth(scenario_night):
    inst = scenario_night["instrument"]
    path = _master(scenario_night["masters"], "flat").path
    m = load_master(path)
    truth = inst.patterns.flat / np.median(inst.patterns.flat)  # normalised to the median
    ok = ~inst.patterns.dead
    z = ((m.value - truth) / np.sqrt(m.variance))[ok]
    assert np.mean(z) == pytest.approx(0.0, abs=0.05)
    assert np.std(z) == pytest.approx(1.0, rel=0.05)
    flagged = (m.quality & (Quality.LOW_FLAT | Quality.BAD)) > 0
    assert np.all(flagged[inst.patterns.dead])
    assert flagged[ok].mean() < 1e-3
    hdr = fits.getheader(path)
    assert hdr["NCOMBINE"] == 6 and hdr["PPMASTER"] == "flat" and hdr["FILTER"] == "R"
    assert hdr["DARKUSED"] is True and hdr["LVL0001"] > 0


def test_provenance_header(scenario_night):
    path = _master(scenario_night["masters"], "bias").path
    hdr = fits.getheader(path)
    assert hdr["NCOMBINE"] == 9 and hdr["COMBMETH"] == "clipped_mean"
    assert hdr["CLIPSIG"] == 3.0 and hdr["CLIPITER"] == 5
    assert [hdr[f"SRC{i:04d}"] for i in range(1, 10)] == [f"bias_{i:03d}.fits.fz"
                                                         for i in range(1, 10)]
    assert 0 <= hdr["REJFRAC"] < 0.01
    assert sum(1 for h in hdr["HISTORY"] if str(h).startswith("input: ")) == 9


def test_block_size_does_not_change_the_result(scenario_night, tmp_path):
    plan = scenario_night["plan"]
    small = build_masters(plan, tmp_path, block_rows=47)  # 4 blocks, the last short
    for kind in ("bias", "dark", "flat"):
        a = load_master(_master(scenario_night["masters"], kind).path)
        b = load_master(_master(small, kind).path)
        np.testing.assert_array_equal(a.value, b.value)
        np.testing.assert_array_equal(a.quality, b.quality)


def test_master_set_pickles_small(scenario_night):
    masters = scenario_night["masters"]
    blob = pickle.dumps(masters)
    assert len(blob) < 4000
    assert pickle.loads(blob) == masters


def test_choose_without_match(scenario_night):
    sci = scenario_night["plan"].science[0]
    other = type(sci)(**{**sci.__dict__, "filter": "B"})
    with pytest.raises(FrameError, match=re.escape("no flat frames with binning 1x1, 160x192, "
                                                   "filter b")):
        scenario_night["masters"].choose(other)


def test_unreadable_member_is_dropped(tmp_path):
    det = S.make_detector((40, 48))
    paths = S.write_night(tmp_path, det, n_science=1)
    night = scan_night(tmp_path)
    victim = paths["bias"][2]
    raw = open(victim, "rb").read()
    with open(victim, "wb") as fh:        # damaged after the scan: headers read, data not
        fh.write(raw[: len(raw) - 2880])
    masters = build_masters(plan_calibrations(night), tmp_path / "m")
    assert [(s.item, s.stage) for s in masters.skipped] == [(victim, "masters")]
    assert "file is truncated" in masters.skipped[0].reason
    assert _master(masters, "bias").n_frames == 6


def test_saturated_or_dark_flats_are_dropped(tmp_path):
    det = S.make_detector((40, 48))
    paths = S.write_night(tmp_path, det, n_science=1, n_flat=4)
    hdr = fits.getheader(paths["flat"][0])
    S.write(paths["flat"][0], np.full(det.shape, S.SATURATE), hdr)
    S.write(paths["flat"][1], det.bias, hdr)
    masters = build_masters(plan_calibrations(scan_night(tmp_path)), tmp_path / "m")
    reasons = {os.path.basename(s.item): s.reason for s in masters.skipped}
    assert reasons["flat_R_000.fits"] == "flat is saturated: 100.0% of pixels at or above " \
                                         "65535 adu"
    assert re.fullmatch(r"flat level after bias and dark removal is -?\d+\.\d adu; no light",
                        reasons["flat_R_001.fits"])
    assert _master(masters, "flat").n_frames == 2


def test_empty_plan_and_bad_method(tmp_path):
    assert build_masters(plan_calibrations(NightInventory()), tmp_path).masters == ()
    with pytest.raises(ValueError, match=re.escape("'method' must be one of ['clipped_mean', "
                                                   "'median'], got 'mean'")):
        build_masters(plan_calibrations(NightInventory()), tmp_path, method="mean")
