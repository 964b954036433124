"""Results that cannot be written are one line and the README's exit code, nothing half-written;
temporaries a killed run left behind are removed by the next run.

The runs here name a night folder that does not exist, so they stop after the results folder,
the store and the clean-up (exit 4, no night readable) without measuring anything.
"""

import os
import shutil
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from campaign import _nights as nights  # tests/ is on the path (pyproject pythonpath)
from photpipe.cli.main import main
from photpipe.store import CampaignStore

FAILED, STORE, NO_DATA = 1, 3, 4  # the README's exit codes

#: Writes one file through photpipe's temporary-then-rename writer and is killed (SIGKILL)
#: inside it, as a run killed half-way through a write is: the temporary stays behind.
_KILLED_WRITER = """
import os, signal, sys
from pathlib import Path
from photpipe._files import replacing
with replacing(Path(sys.argv[1]), make_folders=True) as tmp:
    os.kill(os.getpid(), signal.SIGKILL)
"""


def _run(config, capsys):
    code = main(["run", str(config), "--workers", "0", "--no-progress"])
    out, err = capsys.readouterr()
    return code, out, err


def _files(folder):
    return sorted(str(p.relative_to(folder)) for p in Path(folder).rglob("*"))


def _kill_while_writing(path):
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    done = subprocess.run([sys.executable, "-c", _KILLED_WRITER, str(path)], env=env,
                          capture_output=True, timeout=120)
    assert done.returncode == -signal.SIGKILL, done.stderr


def test_temporaries_of_a_killed_run_are_removed_by_the_next(tmp_path, capsys):
    config = nights.write_config(tmp_path, [str(tmp_path / "missing")])
    results = tmp_path / "results"
    targets = [results / "lightcurve.ecsv", results / "night" / "measurements.ecsv",
               results / "night" / "calibrated" / "sci_0001.fits"]
    for target in targets:
        _kill_while_writing(target)
    left = sorted(results.rglob(".*.part"))
    assert len(left) == 3 and all(p.stat().st_size == 0 for p in left)
    # files of the user's that only look alike stay
    kept = [results / ".notes.txt", results / "night" / "old.part", results / ".draft.part"]
    for path in kept:
        path.write_text("mine")

    code, out, err = _run(config, capsys)
    assert code == NO_DATA, err
    assert sorted(results.rglob(".*.part")) == [results / ".draft.part"]
    assert all(p.read_text() == "mine" for p in kept)
    assert sum("left half-written by an interrupted run" in line
               for line in out.splitlines()) == 3


def test_temporaries_stay_while_another_run_writes(tmp_path, capsys):
    config = nights.write_config(tmp_path, [str(tmp_path / "missing")])
    results = tmp_path / "results"
    _kill_while_writing(results / "lightcurve.ecsv")
    with CampaignStore(results / "campaign.sqlite") as store:
        store.start_run("[campaign]", config_hash="other")  # a live run: this process
        code, _, err = _run(config, capsys)
    assert code == NO_DATA, err
    assert len(list(results.rglob(".*.part"))) == 1  # it may still be that run's file


@pytest.mark.parametrize(("place", "code", "text"), [
    pytest.param('results = "results"\n', FAILED, "the results path is a file, not a folder",
                 id="results-path-is-a-file"),
    pytest.param('results = "results/inner"\n', FAILED, "cannot make the results folder",
                 id="results-path-below-a-file"),
    pytest.param('store = "results/campaign.sqlite"\n', STORE, "cannot make the store's folder",
                 id="store-path-below-a-file"),
])
def test_a_file_in_the_way_is_one_line_and_nothing_is_written(tmp_path, capsys, place, code,
                                                               text):
    config = nights.write_config(tmp_path, [str(tmp_path / "missing")], results="out")
    # the [campaign] section's results/store point at or below an ordinary file
    config.write_text(config.read_text().replace('results = "out"\n', place.replace(
        "store", 'results = "out"\nstore') if place.startswith("store") else place))
    (tmp_path / "results").write_text("an observer's notes")
    before = _files(tmp_path)

    got, out, err = _run(config, capsys)
    assert got == code
    assert err.startswith("photpipe run: ") and err.strip().count("\n") == 0
    assert text in err and str(tmp_path / "results") in err
    assert "Traceback" not in err
    assert (tmp_path / "results").read_text() == "an observer's notes"
    after = _files(tmp_path)
    if place.startswith("store"):
        # the results folder was made and cleaned before the store was opened
        after = [p for p in after if not p.startswith("out")]
    assert after == before


def _writes_anyway(folder):
    """Whether this process writes into ``folder`` whatever its mode (root's override)."""
    try:
        (folder / ".probe").write_text("")
    except PermissionError:
        return False
    (folder / ".probe").unlink()
    return True


#: Runs a command with the file-permission override capabilities dropped (util-linux
#: ``setpriv``), so that a root process meets a folder's mode as any user does.
_WITHOUT_OVERRIDE = ["setpriv", "--bounding-set", "-dac_override,-dac_read_search",
                     "--inh-caps", "-dac_override,-dac_read_search"]


def _run_as_plain_user(config, capsys, overrides):
    """Run ``photpipe run`` in this process, or, where this process ``overrides`` folder modes
    (root), in a child with that override dropped; return (exit code, stderr)."""
    args = ["run", str(config), "--workers", "0", "--no-progress"]
    if not overrides:
        code = main(args)
        return code, capsys.readouterr().err
    if shutil.which(_WITHOUT_OVERRIDE[0]) is None:
        pytest.skip("this process writes into read-only folders (root) and setpriv is not "
                    "installed to drop that override")
    done = subprocess.run([*_WITHOUT_OVERRIDE, sys.executable, "-m", "photpipe", *args],
                          capture_output=True, text=True, timeout=300, check=False)
    if "setpriv:" in done.stderr:
        pytest.skip(f"cannot drop the permission override here: {done.stderr.strip()}")
    return done.returncode, done.stderr


def test_a_read_only_results_folder_is_one_line_and_leaves_it_as_it_was(tmp_path, capsys):
    config = nights.write_config(tmp_path, [str(tmp_path / "missing")])
    results = tmp_path / "results"
    results.mkdir()
    (results / "lightcurve.ecsv").write_text("# an earlier run's lightcurve\n")
    results.chmod(0o555)
    overrides = _writes_anyway(results)
    try:
        code, err = _run_as_plain_user(config, capsys, overrides)
        files = _files(results)
    finally:
        results.chmod(0o755)
    assert code == FAILED
    assert err.startswith("photpipe run: ") and err.strip().count("\n") == 0
    assert "the results folder cannot be written" in err
    assert files == ["lightcurve.ecsv"]
    assert (results / "lightcurve.ecsv").read_text() == "# an earlier run's lightcurve\n"
