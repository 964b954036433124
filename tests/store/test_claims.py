"""Frames keyed by content and full path: one result per content, never overwritten.

Content hashes stand in for sha256 digests (`claim_frame` only compares them); which files
still hold which content is a dict, as the night's hashes are.
"""

import sqlite3

import pytest
from astropy import units as u
from astropy.table import QTable

from photpipe.campaign import FrameRecord
from photpipe.store import CampaignStore

NIGHT = "2026-12-01"


def _record(name, path, content, mag=15.0):
    rows = QTable({"rho_km": [5000.0, 10000.0] * u.km, "mag": [mag, mag - 0.5] * u.mag,
                   "flags": ["", ""]})
    return FrameRecord(NIGHT, name, path, content, mjd_utc_mid=61010.25, stages=("photometry",),
                       measurements=rows, nucleus={"nucleus_mag": 18.3 * u.mag},
                       calibrated_path=f"/res/{NIGHT}/calibrated/{name}.fits")


@pytest.fixture
def store(tmp_path):
    with CampaignStore(tmp_path / "campaign.sqlite") as s:
        run = s.start_run("[campaign]", config_hash="c1")
        s.write_frame(run, _record("sci_0001", "/raw/sci_0001.fits", "A"), config_hash="c1")
        s.write_frame(run, _record("sci_0002", "/raw/sci_0002.fits", "B", 16.0),
                      config_hash="c1")
        s.run_id = run
        yield s


def _claim(store, name, path, content, on_disk, night=NIGHT):
    return store.claim_frame(
        night, name, path, content,
        holds_content=lambda p, h: on_disk.get(p) == h,
        calibrated_for=lambda n, k: f"/res/{n}/calibrated/{k}.fits")


def _first_mags(store):
    """Each frame's magnitude in its first aperture."""
    table = store.export_table("measurements")
    out = {}
    for frame, mag in zip(table["frame"], table["mag"]):
        out.setdefault(str(frame), float(mag.value))
    return out


def _names(store):
    table = store.export_table("measurements")
    return sorted(set(table["frame"]))


def test_a_renamed_file_keeps_its_results(store):
    on_disk = {"/raw/renamed.fits": "A", "/raw/sci_0002.fits": "B"}
    claim = _claim(store, "renamed", "/raw/renamed.fits", "A", on_disk)
    assert claim.moved_from == f"{NIGHT}/sci_0001" and claim.same_as is None
    assert claim.calibrated_moves == [(f"/res/{NIGHT}/calibrated/sci_0001.fits",
                                       f"/res/{NIGHT}/calibrated/renamed.fits")]
    assert _names(store) == ["renamed", "sci_0002"]
    # measured already: a re-run with the same configuration measures nothing again
    assert store.is_measured(NIGHT, "renamed", content_hash="A", config_hash="c1")
    frames = store.export_table("frames")
    assert "/raw/renamed.fits" in list(frames["path"])


def test_a_file_moved_to_another_night_keeps_its_results(store):
    on_disk = {"/raw2/sci_0001.fits": "A"}
    claim = _claim(store, "sci_0001", "/raw2/sci_0001.fits", "A", on_disk, night="second")
    assert claim.moved_from == f"{NIGHT}/sci_0001"
    assert store.is_measured("second", "sci_0001", content_hash="A", config_hash="c1")
    assert len(store.export_table("measurements", night="second")) == 2


def test_the_same_content_twice_is_measured_once(store):
    on_disk = {"/raw/sci_0001.fits": "A", "/raw/copy.fits": "A", "/raw/sci_0002.fits": "B"}
    claim = _claim(store, "copy", "/raw/copy.fits", "A", on_disk)
    assert claim.same_as == f"{NIGHT}/sci_0001"
    assert _names(store) == ["sci_0001", "sci_0002"]
    # in another night too
    claim = _claim(store, "sci_0001", "/other/sci_0001.fits", "A", on_disk, night="other")
    assert claim.same_as == f"{NIGHT}/sci_0001"


def test_its_own_results_need_nothing(store):
    on_disk = {"/raw/sci_0001.fits": "A"}
    claim = _claim(store, "sci_0001", "/raw/sci_0001.fits", "A", on_disk)
    assert (claim.same_as, claim.moved_from, claim.set_aside) == (None, None, None)


def test_a_new_file_of_the_same_name_never_overwrites_the_earlier_results(store):
    # sci_0002.fits was deleted; a different file now goes by sci_0002 (sci_0002.fits.fz)
    on_disk = {"/raw/sci_0002.fits.fz": "C"}
    claim = _claim(store, "sci_0002", "/raw/sci_0002.fits.fz", "C", on_disk)
    assert claim.set_aside == f"{NIGHT}/sci_0002.fits"
    assert claim.calibrated_moves == [(f"/res/{NIGHT}/calibrated/sci_0002.fits",
                                       f"/res/{NIGHT}/calibrated/sci_0002.fits.fits")]
    store.write_frame(store.run_id, _record("sci_0002", "/raw/sci_0002.fits.fz", "C", 17.0),
                      config_hash="c1")
    mags = _first_mags(store)
    assert mags == {"sci_0001": 15.0, "sci_0002": 17.0, "sci_0002.fits": 16.0}


def test_two_files_that_swap_names_keep_their_own_results(store):
    on_disk = {"/raw/sci_0001.fits": "B", "/raw/sci_0002.fits": "A"}
    first = _claim(store, "sci_0001", "/raw/sci_0001.fits", "B", on_disk)
    second = _claim(store, "sci_0002", "/raw/sci_0002.fits", "A", on_disk)
    assert first.moved_from == f"{NIGHT}/sci_0002" and second.moved_from is not None
    # B's results follow B, A's follow A
    assert _first_mags(store) == {"sci_0001": 16.0, "sci_0002": 15.0}
    assert store.is_measured(NIGHT, "sci_0001", content_hash="B", config_hash="c1")


def test_a_store_of_the_previous_schema_keeps_every_row_and_is_keyed_by_content(tmp_path):
    path = tmp_path / "c.sqlite"
    with CampaignStore(path) as store:
        run = store.start_run("[campaign]", config_hash="c1")
        store.write_frame(run, _record("sci_0001", "/raw/sci_0001.fits", "A"), config_hash="c1")
        # the previous version measured a renamed file again: one content, two results
        store.write_frame(run, _record("renamed", "/raw/renamed.fits", "A"), config_hash="c1")
    db = sqlite3.connect(path)
    db.execute("DROP INDEX frames_content")  # as the previous version made the store
    db.commit()
    counts = {t: db.execute(f"SELECT count(*) FROM {t}").fetchone()[0]
              for t in ("frames", "measurements", "nucleus", "frame_results")}
    db.close()
    with CampaignStore(path) as store:
        indexes = {r[1] for r in store._db.execute("PRAGMA index_list(frames)")}
        assert "frames_content" in indexes
        assert {t: store.count(t) if t != "frame_results" else store._db.execute(
            "SELECT count(*) FROM frame_results").fetchone()[0] for t in counts} == counts
        on_disk = {"/raw/renamed.fits": "A"}
        claim = _claim(store, "renamed", "/raw/renamed.fits", "A", on_disk)
        assert (claim.same_as, claim.moved_from) == (None, None)  # its own results
        assert len(store.export_table("measurements")) == 4  # nothing lost


def test_a_folder_moved_with_a_file_rewritten_keeps_the_earlier_results(store):
    # the night's folder moved to /disk2 and sci_0001.fits there holds new bytes: the earlier
    # results cannot be told apart from another file's, so they are kept, marked earlier
    on_disk = {"/disk2/sci_0001.fits": "X", "/disk2/sci_0002.fits": "B"}
    claim = _claim(store, "sci_0001", "/disk2/sci_0001.fits", "X", on_disk)
    assert claim.set_aside == f"{NIGHT}/sci_0001.fits (earlier)"
    assert _claim(store, "sci_0002", "/disk2/sci_0002.fits", "B", on_disk).set_aside is None
    assert _names(store) == ["sci_0001.fits (earlier)", "sci_0002"]
