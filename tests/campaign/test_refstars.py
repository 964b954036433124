"""The campaign's HEALPix reference-star store: built once, queried per frame footprint."""

import logging
import os
import warnings
from pathlib import Path

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable

from photpipe.campaign.pipeline import run_campaign
from photpipe.campaign.refstars import DEFAULT_STORE_NAME, campaign_reference_store
from photpipe.campaign.tasks import frame_reference_stars
from photpipe.config import load_config
from photpipe.photometry.errors import PhotometryWarning
from photpipe.store import CampaignStore

from ._nights import render_small_night, write_config


def _quiet(line):
    logging.getLogger("test").debug(line)


@pytest.fixture(scope="module")
def night(tmp_path_factory):
    root = tmp_path_factory.mktemp("raw")
    render_small_night(root / "2026-12-01", n_science=2, seed=5, stars_path=root / "stars.ecsv")
    return root


def _measure_both_ways(frame_path, catalogue, store_path, geometry_row, options):
    from photpipe.frames import read_calibrated
    from photpipe.photometry import measure_comet_frame, read_reference_stars

    frame = read_calibrated(frame_path)
    whole = read_reference_stars(catalogue, bands=["R"], colour="B-V")
    cut = frame_reference_stars(frame, store_path)
    assert 0 < len(cut) < len(whole)  # a real cut of the catalogue
    # a frame's cautions (a PSF fallback, ...) are kept, and must be the same both ways
    said = []
    for stars in (whole, cut):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", PhotometryWarning)
            said.append((measure_comet_frame(frame, stars, geometry_row, **options),
                         [str(w.message) for w in caught]))
    (a, said_a), (b, said_b) = said
    assert said_a == said_b
    return a, b


@pytest.mark.slow
def test_store_built_once_and_gives_the_whole_catalogue_results(tmp_path, night):
    catalogue = night / "stars.ecsv"
    config = load_config(write_config(tmp_path, [str(night / "2026-12-01")],
                                      stars_path=str(catalogue)))
    summary = run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert summary.status == "completed" and summary.measured == 2
    results = Path(config["campaign"]["results"])
    store_path = results / DEFAULT_STORE_NAME
    assert store_path.is_file()
    built_at = os.stat(store_path).st_mtime_ns

    # A second run (everything already measured, then --rerun) reuses the store as it is.
    run_campaign(config, workers=0, rerun=True, progress=False, echo=_quiet)
    assert os.stat(store_path).st_mtime_ns == built_at

    # The footprint query gives the same photometry as the whole catalogue did before.
    from photpipe.config import geometry_for_times, read_photometry
    from photpipe.frames import read_calibrated

    options = read_photometry(config).options()
    frame_path = sorted((results / "2026-12-01" / "calibrated").glob("*.fits"))[0]
    frame = read_calibrated(frame_path)
    geometry = geometry_for_times(config, config["night"][0], frame.info.time_mid.reshape(1))
    a, b = _measure_both_ways(frame_path, catalogue, store_path, geometry[0], options)
    for name in ("mag", "mag_err", "afrho_cm", "zp_mag", "n_stars", "x_pix", "y_pix"):
        np.testing.assert_array_equal(np.asarray(u.Quantity(a.comet[name]).value),
                                      np.asarray(u.Quantity(b.comet[name]).value), err_msg=name)
    assert a.zero_point.zp == b.zero_point.zp
    with CampaignStore(config["campaign"]["store"]) as store:
        assert store.count("measurements") > 0


def test_store_rebuilt_when_the_catalogue_changes(tmp_path, night):
    catalogue = tmp_path / "stars.ecsv"
    table = QTable.read(night / "stars.ecsv")
    table.write(catalogue)
    store_path = tmp_path / "store.npz"
    first = campaign_reference_store(str(catalogue), store_path, band="R", colour="B-V")
    assert first.built and first.problem == "" and first.n_stars == len(table)
    again = campaign_reference_store(str(catalogue), store_path, band="R", colour="B-V")
    assert not again.built and again.n_stars == len(table)
    table[:10].write(catalogue, overwrite=True)
    changed = campaign_reference_store(str(catalogue), store_path, band="R", colour="B-V")
    assert changed.built and changed.n_stars == 10
    # Another band is another store content; a band the catalogue lacks is a reason.
    other = campaign_reference_store(str(catalogue), store_path, band="V", colour=None)
    assert other.built and other.problem == ""
    missing = campaign_reference_store(str(catalogue), store_path, band="z", colour=None)
    assert missing.store_path is None and "no column 'z'" in missing.problem


def test_missing_catalogue_is_a_reason_not_a_crash(tmp_path):
    ref = campaign_reference_store(str(tmp_path / "none.ecsv"), tmp_path / "s.npz")
    assert ref.store_path is None
    assert ref.problem.endswith("none.ecsv: reference-star file not found")
    none = campaign_reference_store(None, tmp_path / "s.npz")
    assert "no reference-star file is configured" in none.problem


@pytest.mark.slow
def test_frame_outside_the_catalogue_is_skipped_with_the_reason(tmp_path, night):
    # The same stars moved 5 degrees north: the frames see none of them.
    table = QTable.read(night / "stars.ecsv")
    table["dec"] = table["dec"] + 5 * u.deg
    elsewhere = tmp_path / "elsewhere.ecsv"
    table.write(elsewhere)
    config = load_config(write_config(tmp_path, [str(night / "2026-12-01")],
                                      stars_path=str(elsewhere)))
    summary = run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert summary.status == "completed"
    reasons = [s.reason for s in summary.all_skipped() if s.stage == "photometry"]
    assert len(reasons) == 2
    assert all(r.startswith("no matching stars: ") for r in reasons), reasons
    with CampaignStore(config["campaign"]["store"]) as store:
        assert store.count("measurements") == 0
        skipped = store.export_table("skipped")
        assert all(str(r).startswith("no matching stars") for r in
                   skipped["reason"][skipped["stage"] == "photometry"])
