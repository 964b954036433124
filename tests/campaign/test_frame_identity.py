"""Frames are known by content and full path across runs (synthetic night of the scenario).

After a first run, the observer copies one file into a second night and renames it in the first,
and replaces the other by a new file of the same stem. The re-run measures only the new file:
the renamed file keeps its results (and its calibrated file follows), the copy is left out as
the same content, and the replaced file's results stay under its own file name.
"""

import shutil
import warnings

import pytest

from photpipe.campaign.pipeline import run_campaign
from photpipe.config import load_config
from photpipe.store import CampaignStore

from ._bad_inputs import good_frame, write_frame
from ._nights import render_small_night, write_config

pytestmark = pytest.mark.slow


def _run(path):
    return run_campaign(load_config(path), workers=0, progress=False, echo=lambda line: None)


def _first_mags(store):
    out = {}
    table = store.export_table("measurements")
    for frame, mag in zip(table["frame"], table["mag"]):
        out.setdefault(str(frame), float(mag.value))
    return out


def test_renamed_copied_and_replaced_files(tmp_path):
    night, second = tmp_path / "night", tmp_path / "second"
    render_small_night(night, n_science=2, seed=7, stars_path=tmp_path / "stars.ecsv")
    config = write_config(tmp_path, [str(night)], stars_path=str(tmp_path / "stars.ecsv"))
    assert _run(config).nights[0].measured == 2
    store_path = tmp_path / "results" / "campaign.sqlite"
    with CampaignStore(store_path) as store:
        before = _first_mags(store)
    assert set(before) == {"sci_0001", "sci_0002"}

    shutil.copytree(night, second, ignore=shutil.ignore_patterns("sci_0002*"))
    (night / "sci_0001.fits.fz").rename(night / "renamed_0001.fits.fz")
    data, header = good_frame(night / "sci_0002.fits.fz")
    (night / "sci_0002.fits.fz").unlink()
    header["DATE-OBS"] = "2026-12-01T02:22:20.000"  # 20 s later: another exposure
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        write_frame(night / "sci_0002.fits", data, header)
    config = write_config(tmp_path, [str(night), str(second)],
                          stars_path=str(tmp_path / "stars.ecsv"))
    summary = _run(config)

    first, other = summary.nights
    assert (first.measured, first.reused) == (1, 1)  # only the new sci_0002.fits
    assert other.measured == 0
    assert [s.reason for s in other.skipped] == ["same content as night/renamed_0001: "
                                                 "measured once"]
    with CampaignStore(store_path) as store:
        after = _first_mags(store)
        frames = store.export_table("frames")
    # the renamed file's results, under its new name; the replaced file's, under its own
    assert after["renamed_0001"] == before["sci_0001"]
    assert after["sci_0002.fits.fz"] == before["sci_0002"]
    assert set(after) == {"renamed_0001", "sci_0002.fits.fz", "sci_0002"}
    paths = {str(f): str(p) for f, p in zip(frames["frame"], frames["path"])}
    assert paths["renamed_0001"] == str(night / "renamed_0001.fits.fz")  # the full path
    calibrated = sorted(p.name for p in (tmp_path / "results" / "night" / "calibrated")
                        .iterdir())
    assert calibrated == ["renamed_0001.fits", "sci_0002.fits", "sci_0002.fits.fz.fits"]
