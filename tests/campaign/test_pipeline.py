import logging
import os
import re
from pathlib import Path

import pytest

from photpipe.campaign.pipeline import night_name, run_campaign
from photpipe.config import ConfigError, load_config
from photpipe.orbit import read_ades
from photpipe.store import CampaignStore, StoreError

from ._nights import assert_same_contents, contents, render_small_night, write_config


@pytest.fixture(scope="module")
def nights(tmp_path_factory):
    root = tmp_path_factory.mktemp("raw")
    render_small_night(root / "2026-12-01", n_science=3, seed=1, stars_path=root / "stars.ecsv")
    render_small_night(root / "2026-12-02", start="2026-12-02T02:10:00", n_science=2, seed=2,
                       stars_path=root / "stars.ecsv")
    render_small_night(root / "no_calibrations", start="2026-12-03T02:10:00", n_science=2,
                       seed=3, calibrations=False)
    return root


def _config(tmp_path, nights, names, **kw):
    paths = [str(nights / n) for n in names]
    return load_config(write_config(tmp_path, paths, stars_path=str(nights / "stars.ecsv"), **kw))


def _quiet(line):
    logging.getLogger("test").debug(line)


@pytest.mark.slow
def test_two_nights_are_stored_and_exported(tmp_path, nights):
    config = _config(tmp_path, nights, ["2026-12-01", "2026-12-02"])
    summary = run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert summary.status == "completed"
    assert [n.name for n in summary.nights] == ["2026-12-01", "2026-12-02"]
    # 3 bias + 2 dark + 2 flat + the science frames (render_small_night)
    assert [sum(n.counts.values()) for n in summary.nights] == [10, 9]
    assert summary.measured == 5 and summary.reused == 0
    results = Path(config["campaign"]["results"])
    for night, n in (("2026-12-01", 3), ("2026-12-02", 2)):
        assert len(list((results / night / "calibrated").glob("*.fits"))) == n
        assert (results / night / "frames.ecsv").is_file()
    with CampaignStore(config["campaign"]["store"]) as store:
        assert store.count("frames") == 19
        assert store.count("calibrations") == 6  # bias, dark, flat per night
        assert set(store.measured("2026-12-01")) == {"sci_0001", "sci_0002", "sci_0003"}
        assert store.count("measurements") > 0
        # each measured frame keeps its comet position and its coma profile
        assert store.count("astrometry") == 5
        assert store.count("profiles") >= 5
    positions = read_ades([str(results / "astrometry.psv")])
    assert len(positions.table) == 5 and positions.problems == []
    assert (results / "2026-12-01" / "2026-12-01_astrometry.xml").is_file()
    assert len(list((results / "2026-12-01" / "nucleus_images").glob("*.fits"))) == 3
    assert Path(summary.log).is_file()
    assert "run 1 completed" in Path(summary.log).read_text()
    text = summary.format()
    assert f"results folder: {results}" in text
    assert "stages run: calibration, geometry, photometry, nucleus, rotation, activity" in text


@pytest.mark.slow
def test_rerun_skips_measured_frames_unless_asked(tmp_path, nights):
    config = _config(tmp_path, nights, ["2026-12-02"])
    run_campaign(config, workers=0, progress=False, echo=_quiet)
    first = contents(config["campaign"]["store"])
    again = run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert (again.measured, again.reused) == (0, 2)
    forced = run_campaign(config, workers=0, progress=False, rerun=True, echo=_quiet)
    assert (forced.measured, forced.reused) == (2, 0)
    assert_same_contents(contents(config["campaign"]["store"]), first)  # no duplicates


@pytest.mark.slow
def test_changed_configuration_measures_again(tmp_path, nights):
    config = _config(tmp_path, nights, ["2026-12-02"])
    run_campaign(config, workers=0, progress=False, echo=_quiet)
    config["frames"]["max_saturated_fraction"] = 0.4
    again = run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert again.measured == 2


@pytest.mark.slow
def test_missing_folder_and_missing_calibrations_do_not_stop_the_campaign(tmp_path, nights):
    config = _config(tmp_path, nights, ["no_such_night", "no_calibrations", "2026-12-02"])
    lines = []
    summary = run_campaign(config, workers=0, progress=False, echo=lines.append)
    by_name = {n.name: n for n in summary.nights}
    missing = by_name["no_such_night"]
    assert missing.skipped[0].stage == "ingest"
    assert "does not exist" in missing.skipped[0].reason
    assert any("no_such_night" in line and "going on with the other nights" in line
               for line in lines)
    bare = by_name["no_calibrations"]
    assert bare.measured == 0
    assert [s.stage for s in bare.skipped] == ["planning", "planning"]
    assert all("no bias frames" in s.reason for s in bare.skipped)
    assert by_name["2026-12-02"].measured == 2
    text = summary.format()
    assert "no_calibrations [planning] no bias frames" in text
    with CampaignStore(config["campaign"]["store"]) as store:
        skipped = store.export_table("skipped")
    assert {"sci_0001", "sci_0002", "no_such_night"} <= set(skipped["item"])


@pytest.mark.slow
def test_unreadable_frame_is_skipped_with_its_name(tmp_path, nights):
    night = tmp_path / "broken_night"
    night.mkdir()
    for f in (nights / "2026-12-02").iterdir():
        (night / f.name).write_bytes(f.read_bytes())
    good = (night / "sci_0002.fits.fz").read_bytes()
    (night / "sci_0002.fits.fz").write_bytes(good[: len(good) // 3])  # truncated
    config = load_config(write_config(tmp_path, [str(night)],
                                      stars_path=str(nights / "stars.ecsv")))
    summary = run_campaign(config, workers=0, progress=False, echo=_quiet)
    (n,) = summary.nights
    assert n.measured == 1
    reasons = {os.path.basename(s.item): (s.stage, s.reason) for s in n.skipped}
    assert reasons["sci_0002.fits.fz"][0] == "ingest"


def test_corrupt_store_is_reported(tmp_path, nights):
    config = _config(tmp_path, nights, ["2026-12-02"])
    store = Path(config["campaign"]["store"])
    store.parent.mkdir(parents=True)
    store.write_bytes(b"\x00garbage" * 512)
    with pytest.raises(StoreError, match=str(store)):
        run_campaign(config, workers=0, progress=False, echo=_quiet)


def test_two_nights_with_one_name(tmp_path, nights):
    config = _config(tmp_path, nights, ["2026-12-02", "2026-12-02"])
    with pytest.raises(ConfigError, match=re.escape(
            "[[night]] name: two entries share the name '2026-12-02'")):
        run_campaign(config, workers=0, progress=False, echo=_quiet)


def test_bad_frame_type_mapping_is_a_configuration_error(tmp_path, nights):
    config = _config(tmp_path, nights, ["2026-12-02"])
    config["frames"]["science"] = ["light", "bias"]  # one header value for two kinds
    with pytest.raises(ConfigError, match=re.escape("[frames]")):
        run_campaign(config, workers=0, progress=False, echo=_quiet)


@pytest.mark.parametrize("entry, expected", [
    pytest.param({"path": "/raw/2026-12-01"}, "2026-12-01", id="folder"),
    pytest.param({"path": "/raw/2026-12-01/"}, "2026-12-01", id="trailing-slash"),
    pytest.param({"path": "/raw/n5/*.fits"}, "n5", id="glob"),
    pytest.param({"path": "/raw/n5", "name": "fifth"}, "fifth", id="named"),
])
def test_night_name(entry, expected):
    assert night_name(entry) == expected


@pytest.mark.slow
def test_local_cluster_gives_the_same_tables(tmp_path, nights):
    from distributed import LocalCluster

    tables = {}
    for label, kw in (("inline", {"workers": 0}), ("local", {"workers": 2}),
                      ("cluster", None)):
        folder = tmp_path / label
        folder.mkdir()
        config = _config(folder, nights, ["2026-12-01", "2026-12-02"])
        if kw is None:
            with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                              dashboard_address=":0", silence_logs=logging.ERROR) as cluster:
                run_campaign(config, scheduler=cluster.scheduler_address, progress=False,
                             echo=_quiet)
        else:
            run_campaign(config, progress=False, echo=_quiet, **kw)
        tables[label] = contents(config["campaign"]["store"])
    assert_same_contents(tables["local"], tables["inline"])
    assert_same_contents(tables["cluster"], tables["inline"])
    assert len(tables["inline"]["frames"]) == 19
