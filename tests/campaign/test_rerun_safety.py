"""Re-runs never destroy, frames never collide, a full disk is one line (synthetic nights)."""

import logging
import os
import resource
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from astropy.io import fits

from photpipe.campaign.pipeline import run_campaign
from photpipe.config import ConfigError, load_config
from photpipe.store import CampaignStore

from ._nights import render_small_night, write_config

pytestmark = pytest.mark.slow


def _quiet(line):
    logging.getLogger("test").debug(line)


@pytest.fixture(scope="module")
def raw(tmp_path_factory):
    root = tmp_path_factory.mktemp("raw")
    render_small_night(root / "night", n_science=2, seed=7, stars_path=root / "stars.ecsv")
    return root


def _rows(path):
    lines = [x for x in Path(path).read_text().splitlines() if x.strip() and x[0] != "#"]
    return len(lines) - 1


def test_a_failed_rerun_keeps_the_earlier_results(tmp_path, raw):
    path = write_config(tmp_path, [str(raw / "night")], stars_path=str(raw / "stars.ecsv"))
    first = run_campaign(load_config(path), workers=0, progress=False, echo=_quiet)
    assert first.measured == 2
    results = tmp_path / "results"
    measured_rows = _rows(results / "night" / "measurements.ecsv")
    lightcurve_rows = _rows(results / "lightcurve.ecsv")
    assert measured_rows > 0 and lightcurve_rows == 2
    leftover = results / "night" / ".measurements.ecsv.0a1b2c3d.part"  # as a killed run leaves
    leftover.write_text("")

    # every frame is tried again (the configuration changed) and fails its zero point
    broken = load_config(path)
    broken["photometry"]["detect_threshold"] = 1e9  # no star is found
    again = run_campaign(broken, workers=0, progress=False, echo=_quiet)
    assert (again.measured, again.kept) == (0, 2)
    assert _rows(results / "night" / "measurements.ecsv") == measured_rows
    assert _rows(results / "lightcurve.ecsv") == lightcurve_rows
    with CampaignStore(results / "campaign.sqlite") as store:
        assert len(store.export_table("measurements")) == measured_rows
    assert not leftover.exists()


@pytest.mark.parametrize(("change", "message"), [
    pytest.param({"band": "Z"}, "[photometry] reference_stars: ", id="band-not-in-catalogue"),
    pytest.param({"reference_stars": "gone.ecsv"}, "reference-star file not found",
                 id="catalogue-missing"),
])
def test_a_problem_of_every_frame_stops_before_any_frame(tmp_path, raw, change, message):
    path = write_config(tmp_path, [str(raw / "night")], stars_path=str(raw / "stars.ecsv"))
    run_campaign(load_config(path), workers=0, progress=False, echo=_quiet)
    store = tmp_path / "results" / "campaign.sqlite"
    before = store.stat().st_mtime_ns
    config = load_config(path)
    config["photometry"].update(change)
    with pytest.raises(ConfigError, match=message.replace("[", r"\[").replace("]", r"\]")):
        run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert store.stat().st_mtime_ns == before  # not even opened for writing


def _uncompressed_copy(src, dst, note):
    with fits.open(src) as hdul:
        image = next(h for h in hdul if h.data is not None)
        header = image.header.copy()
        header["HISTORY"] = note
        fits.PrimaryHDU(image.data, header).writeto(dst)


def test_frames_of_one_stem_and_equal_contents(tmp_path, raw):
    night = tmp_path / "night"
    shutil.copytree(raw / "night", night)
    first = sorted(night.glob("sci_*.fits.fz"))[0]
    stem = first.name[: -len(".fits.fz")]
    _uncompressed_copy(first, night / f"{stem}.fits", "same frame, stored uncompressed")
    shutil.copy(first, night / "copy_of_first.fits.fz")  # the very same bytes
    path = write_config(tmp_path, [str(night)], stars_path=str(raw / "stars.ecsv"))
    summary = run_campaign(load_config(path), workers=0, progress=False, echo=_quiet)
    (n,) = summary.nights
    assert n.measured == 3  # two compressed frames and the uncompressed one
    reasons = [s.reason for s in n.skipped]
    assert any(r.startswith("same content as") and "measured once" in r for r in reasons)
    with CampaignStore(tmp_path / "results" / "campaign.sqlite") as store:
        measured = set(store.measured("night"))
    assert f"{stem}.fits" in measured  # its own key beside the compressed frame of one stem
    assert len(measured & {f"{stem}.fits.fz", "copy_of_first"}) == 1  # equal bytes: once
    calibrated = sorted(p.name for p in (tmp_path / "results" / "night" / "calibrated").iterdir())
    assert len(calibrated) == 3


def _limited(limit_bytes):
    def apply():
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit_bytes, limit_bytes))
    return apply


@pytest.mark.parametrize("limit_kb", [16, 120, 600])
def test_a_full_disk_is_one_line_and_leaves_nothing_half_written(tmp_path, raw, limit_kb):
    path = write_config(tmp_path, [str(raw / "night")], stars_path=str(raw / "stars.ecsv"))
    cmd = [sys.executable, "-m", "photpipe", "run", str(path), "--workers", "0", "--no-progress"]
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    full = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=600,
                          preexec_fn=_limited(limit_kb * 1024))
    assert "Traceback" not in full.stderr, full.stderr
    assert full.returncode in (0, 1, 3, 4)
    if full.returncode in (1, 3):
        assert full.stderr.strip().count("\n") == 0
        assert full.stderr.startswith("photpipe run: ")
    results = tmp_path / "results"
    hidden = [p for p in results.rglob(".*") if p.is_file()]
    assert hidden == []
    # with room again, the same command measures everything
    again = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=600)
    assert again.returncode == 0, again.stderr
