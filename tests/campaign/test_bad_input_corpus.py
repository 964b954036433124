"""The bad-input corpus: every kind of bad file is one line naming it, and nothing is lost.

A small campaign is measured once per module (the scenario generator's night, two science
frames). Then one bad file per kind (`_bad_inputs.KINDS`, spoilt copies of its first science
frame) and one new good frame are put into the night, and the same campaign is run again. Each
kind must give a skip line that names the file and the problem; the new good frame must be
measured; and every row the store held before must still be there, unchanged.
"""

import math
import shutil
import sqlite3
import warnings
from collections import Counter
from pathlib import Path
from types import SimpleNamespace

import pytest

from photpipe.campaign.pipeline import run_campaign
from photpipe.config import load_config
from photpipe.store import CampaignStore

from ._bad_inputs import KINDS, good_frame, write_frame
from ._nights import contents, render_small_night, write_config

pytestmark = pytest.mark.slow


def _quiet(line):
    pass


def _file_name(kind):
    ending = ".fits.gz" if kind.startswith("gzip") else ".fits"
    return f"bad_{kind}{ending}"


def _comparable(row):
    """A stored row with NaN as text, so equal rows compare (and count) equal."""
    return tuple("nan" if isinstance(v, float) and math.isnan(v) else v for v in row)


def _run(config_path):
    return run_campaign(load_config(config_path), workers=0, progress=False, echo=_quiet)


@pytest.fixture(scope="module")
def measured(tmp_path_factory):
    """A campaign of one night measured once: its folder, config and store contents."""
    root = tmp_path_factory.mktemp("corpus")
    render_small_night(root / "night", n_science=2, seed=7, stars_path=root / "stars.ecsv")
    config = write_config(root, [str(root / "night")], stars_path=str(root / "stars.ecsv"))
    first = _run(config)
    assert first.nights[0].measured == 2
    return SimpleNamespace(root=root, config=config,
                           rows=contents(root / "results" / "campaign.sqlite"))


def _copy_campaign(measured, folder):
    """The measured campaign copied to ``folder`` (night, results, config), as if made there.

    The reference stars stay where they are: the same catalogue, so the same configuration.
    """
    for name in ("night", "results"):
        shutil.copytree(measured.root / name, folder / name)
    # the copy's store names the copy's files (frames are known by content and full path)
    db = sqlite3.connect(folder / "results" / "campaign.sqlite")
    db.execute("UPDATE frames SET path = replace(path, ?, ?)",
               (str(measured.root), str(folder)))
    db.commit()
    db.close()
    return write_config(folder, [str(folder / "night")],
                        stars_path=str(measured.root / "stars.ecsv"))


@pytest.fixture(scope="module")
def corpus_run(measured, tmp_path_factory):
    """The campaign run again with every kind of bad file and one new good frame added."""
    root = tmp_path_factory.mktemp("corpus_run")
    config = _copy_campaign(measured, root)
    night = root / "night"
    data, header = good_frame(night / "sci_0001.fits.fz")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # astropy's notes on the spoilt cards it writes
        for kind, (make, _) in KINDS.items():
            make(night / _file_name(kind), data, header)
        fresh = header.copy()
        fresh["DATE-OBS"] = "2026-12-01T02:10:00.000"  # 20 s after sci_0001: a new frame
        write_frame(night / "sci_0003.fits", data, fresh)
    summary = _run(config)
    lines = {}
    for skipped in summary.nights[0].skipped:
        lines.setdefault(Path(skipped.item).name.split(".")[0], []).append(str(skipped))
    store = root / "results" / "campaign.sqlite"
    with CampaignStore(store) as opened:
        has_rows = {kind: opened.has_measurements("night", f"bad_{kind}") for kind in KINDS}
        new_frame = opened.has_measurements("night", "sci_0003")
    return SimpleNamespace(summary=summary, lines=lines, rows=contents(store),
                           has_rows=has_rows, new_frame=new_frame)


def test_the_corpus_holds_at_least_80_kinds():
    # the check asks for at least 80 distinct kinds
    assert len(KINDS) >= 80
    assert len({_file_name(k) for k in KINDS}) == len(KINDS)


@pytest.mark.parametrize("kind", list(KINDS))
def test_each_bad_file_is_one_line_naming_it_and_its_problem(corpus_run, kind):
    lines = corpus_run.lines.get(f"bad_{kind}")
    assert lines, f"no skip line for {_file_name(kind)}"
    expected = KINDS[kind][1]
    assert any(expected in line for line in lines), lines
    for line in lines:
        assert "\n" not in line and "Traceback" not in line
        assert f"bad_{kind}" in line.split(" [")[0]  # the line starts with the file
    assert not corpus_run.has_rows[kind]  # nothing measured from a bad file


def test_the_other_frames_are_measured_and_earlier_rows_kept(measured, corpus_run):
    night = corpus_run.summary.nights[0]
    assert corpus_run.new_frame  # the new good frame of the same night was measured
    assert night.reused == 2  # the two frames measured before are not measured again
    for table, rows in measured.rows.items():
        after = Counter(map(_comparable, corpus_run.rows[table]))
        missing = [r for r, n in Counter(map(_comparable, rows)).items() if after[r] < n]
        assert missing == [], (table, missing[:3])


@pytest.mark.parametrize("kind", ["truncated_in_data", "pixels_all_nan"])
def test_a_measured_frame_spoilt_on_disk_keeps_its_rows(measured, tmp_path, kind):
    # the same file now holds a bad file: the attempt fails, the earlier rows stay
    config = _copy_campaign(measured, tmp_path)
    target = tmp_path / "night" / "sci_0001.fits.fz"
    data, header = good_frame(target)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        KINDS[kind][0](target, data, header)
    summary = _run(config)
    (n,) = summary.nights
    assert any(s.item.endswith("sci_0001.fits.fz") or s.item == "sci_0001" for s in n.skipped)
    assert n.measured == 0, [str(s) for s in n.skipped]
    after = contents(tmp_path / "results" / "campaign.sqlite")
    for table in ("measurements", "nucleus", "zero_points", "stars"):
        assert list(map(_comparable, after[table])) == \
            list(map(_comparable, measured.rows[table])), table
