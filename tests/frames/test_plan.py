import re

import pytest
from astropy import units as u
from astropy.time import Time

from photpipe.frames import FrameInfo, NightInventory, plan_calibrations


def info(name, kind, *, exptime=60.0, filt="R", binning=(1, 1), shape=(64, 64)):
    return FrameInfo(path=f"night/{name}.fits", kind=kind,
                     time_mid=Time("2026-12-01T03:00:00", scale="utc"), exptime=exptime * u.s,
                     filter=None if kind in ("bias", "dark") else filt,
                     gain=1.5 * u.electron / u.adu, read_noise=6 * u.electron,
                     saturation=65535 * u.adu, binning=binning, shape=shape)


@pytest.fixture
def night():
    frames = [info(f"b{i}", "bias", exptime=0) for i in range(3)]
    frames += [info(f"d60_{i}", "dark", exptime=60) for i in range(3)]
    frames += [info(f"d300_{i}", "dark", exptime=300) for i in range(3)]
    frames += [info(f"fR{i}", "flat", exptime=3, filt="R") for i in range(3)]
    frames += [info(f"fV{i}", "flat", exptime=3, filt=" v ") for i in range(2)]
    return frames


def test_groups(night):
    plan = plan_calibrations(NightInventory(frames=night))
    assert [len(v) for v in plan.bias_groups.values()] == [3]
    assert sorted(k[3] for k in plan.dark_groups) == [60000, 300000]
    assert sorted(k[3] for k in plan.flat_groups) == ["r", "v"]


@pytest.mark.parametrize("exptime, dark_ms, flags", [
    pytest.param(60.0, 60000, (), id="same-exposure"),
    pytest.param(300.0, 300000, (), id="long-exposure"),
    pytest.param(120.0, 60000, ("dark_scaled",), id="nearest-shorter"),
    pytest.param(180.0, 300000, ("dark_scaled",), id="tie-takes-longer"),
])
def test_dark_choice(night, exptime, dark_ms, flags):
    sci = info("s", "science", exptime=exptime)
    plan = plan_calibrations(NightInventory(frames=night + [sci]))
    choice = plan.choices[sci.path]
    assert choice.dark[3] == dark_ms and choice.flags == flags


def test_filter_names_compared_loosely(night):
    sci = info("s", "science", filt="V")
    plan = plan_calibrations(NightInventory(frames=night + [sci]))
    assert plan.choices[sci.path].flat[3] == "v"


def test_no_dark_is_flagged_or_refused(night):
    frames = [f for f in night if f.kind != "dark"] + [info("s", "science")]
    plan = plan_calibrations(NightInventory(frames=frames))
    assert plan.choices["night/s.fits"].flags == ("no_dark",)
    strict = plan_calibrations(NightInventory(frames=frames), require_dark=True)
    assert strict.science == []
    assert strict.skipped[0].reason == "no dark frames with binning 1x1, 64x64"


@pytest.mark.parametrize("sci, reason", [
    pytest.param(info("s", "science", filt="B"),
                 "no flat frames with binning 1x1, 64x64, filter b (flat groups: binning 1x1, "
                 "64x64, filter r; binning 1x1, 64x64, filter v)", id="no-flat-in-filter"),
    pytest.param(info("s", "science", binning=(2, 2), shape=(32, 32)),
                 "no bias frames with binning 2x2, 32x32 (bias groups: binning 1x1, 64x64)",
                 id="other-binning"),
    pytest.param(info("s", "science", shape=(64, 96)),
                 "no bias frames with binning 1x1, 64x96 (bias groups: binning 1x1, 64x64)",
                 id="other-shape"),
])
def test_science_without_calibration_is_skipped(night, sci, reason):
    plan = plan_calibrations(NightInventory(frames=night + [sci]))
    assert plan.science == []
    assert [(s.item, s.stage, s.reason) for s in plan.skipped] == [(sci.path, "planning",
                                                                     reason)]


def test_darks_and_flats_without_bias(night):
    frames = [f for f in night if f.kind != "bias"]
    plan = plan_calibrations(NightInventory(frames=frames))
    assert plan.dark_groups == {} and plan.flat_groups == {}
    assert len(plan.skipped) == len(frames)
    assert re.match(r"dark has no bias frames with binning 1x1, 64x64", plan.skipped[0].reason)


def test_summary_lines(night):
    text = plan_calibrations(NightInventory(frames=night + [info("s", "science")])).summary()
    assert "bias: binning 1x1, 64x64: 3 frames" in text
    assert text.splitlines()[-1] == "science: 1 frames with calibrations, 0 frames skipped"
