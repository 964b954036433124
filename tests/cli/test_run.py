import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from campaign import _nights as nights  # tests/ is on the path (pyproject pythonpath)

from photpipe.cli.main import main
from photpipe.store import CampaignStore

ROOT = Path(__file__).resolve().parents[2]



def _measured(store):
    if not store.exists():
        return 0
    try:
        with sqlite3.connect(f"file:{store}?mode=ro", uri=True, timeout=5) as db:
            return db.execute("SELECT count(*) FROM frame_results").fetchone()[0]
    except sqlite3.OperationalError:  # the schema is not written yet
        return 0


def _photpipe(*args):
    cmd = [sys.executable, "-m", "photpipe", "run", *map(str, args), "--no-progress"]
    return subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)


def test_missing_configuration_file(tmp_path, capsys):
    assert main(["run", str(tmp_path / "nope.toml")]) == 2
    err = capsys.readouterr().err
    assert "configuration problem" in err and "nope.toml" in err


def test_no_night_can_be_read(tmp_path, capsys):
    config = nights.write_config(tmp_path, [str(tmp_path / "missing_a"),
                                            str(tmp_path / "missing_b")])
    assert main(["run", str(config), "--workers", "0", "--no-progress"]) == 4
    captured = capsys.readouterr()
    assert "none of the nights could be read" in captured.err
    assert "missing_a' does not exist" in captured.out


def test_corrupt_store_exit_code(tmp_path, capsys):
    config = nights.write_config(tmp_path, [str(tmp_path / "missing")])
    store = tmp_path / "results" / "campaign.sqlite"
    store.parent.mkdir()
    store.write_bytes(b"not sqlite at all " * 100)
    assert main(["run", str(config), "--no-progress"]) == 3
    err = capsys.readouterr().err
    assert "campaign store problem" in err and str(store) in err


def test_negative_workers(tmp_path, capsys):
    assert main(["run", str(tmp_path / "c.toml"), "--workers", "-2"]) == 2
    assert "--workers must be 0 or more" in capsys.readouterr().err


@pytest.mark.slow
def test_killed_run_resumes_to_the_same_store(tmp_path):
    raw = tmp_path / "raw"
    n_science = 8
    nights.render_small_night(raw / "2026-12-01", n_science=n_science, seed=5,
                              stars_path=raw / "stars.ecsv")
    runs = {}
    for label in ("killed", "straight"):
        folder = tmp_path / label
        folder.mkdir()
        runs[label] = nights.write_config(folder, [str(raw / "2026-12-01")],
                                          stars_path=str(raw / "stars.ecsv"))
    killed_store = tmp_path / "killed" / "results" / "campaign.sqlite"

    proc = _photpipe(runs["killed"], "--workers", "0")
    deadline = time.monotonic() + 300
    while _measured(killed_store) < 2 and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.05)
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait(timeout=60)
    assert proc.returncode == -signal.SIGKILL
    done_at_kill = _measured(killed_store)
    assert 2 <= done_at_kill < n_science  # really part-way

    resumed = _photpipe(runs["killed"], "--workers", "0")
    assert resumed.wait(timeout=600) == 0, resumed.stderr.read()
    straight = _photpipe(runs["straight"], "--workers", "0")
    assert straight.wait(timeout=600) == 0, straight.stderr.read()

    killed = nights.contents(killed_store)
    clean = nights.contents(tmp_path / "straight" / "results" / "campaign.sqlite")
    nights.assert_same_contents(killed, clean)
    assert len(killed["frames"]) == 7 + n_science  # 3 bias, 2 dark, 2 flat + science
    with CampaignStore(killed_store) as store:
        runs_table = store.export_table("runs")
        assert set(store.measured("2026-12-01")) == {f"sci_{i:04d}" for i in
                                                      range(1, n_science + 1)}
    # The killed run is recognised as interrupted; the resumed one completed.
    assert list(runs_table["status"]) == ["interrupted", "completed"]
    n_rows = np.array([len(v) for v in killed.values()])
    assert n_rows.sum() == sum(len(v) for v in clean.values())
