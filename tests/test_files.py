import errno
import os
import stat

import numpy as np
import pytest
from astropy.io import fits
from astropy.table import QTable

from photpipe import _files
from photpipe._files import replacing
from photpipe.campaign.report import write_report
from photpipe.campaign.result_files import write_text
from photpipe.frames._fitsfile import write_atomic as write_fits
from photpipe.photometry.refstore import ReferenceStarStore
from photpipe.scenario.night import write_frame


def _names(folder):
    return sorted(p.name for p in folder.iterdir())


def _no_space(tmp):
    # what a full disk raises part way through a write (write(2), ENOSPC)
    return OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), os.fspath(tmp))


def test_content_is_written(tmp_path):
    out = tmp_path / "log.txt"
    with replacing(out) as tmp:
        assert tmp.parent == tmp_path and tmp.name.startswith(".log.txt.") and tmp.exists()
        tmp.write_text("first night", encoding="utf-8")
    assert out.read_text(encoding="utf-8") == "first night"
    assert _names(tmp_path) == ["log.txt"]


def test_existing_file_is_replaced(tmp_path):
    out = tmp_path / "log.txt"
    out.write_text("old")
    with replacing(out) as tmp:
        tmp.write_text("new")
    assert out.read_text() == "new"
    assert _names(tmp_path) == ["log.txt"]


def test_suffix_ends_the_temporary_name(tmp_path):
    # numpy.savez appends ".npz" to a name without it (numpy docs, numpy.savez)
    out = tmp_path / "stars.npz"
    with replacing(out, suffix=".npz") as tmp:
        assert tmp.suffix == ".npz"
        np.savez(tmp, x=np.arange(3))
    with np.load(out) as data:
        assert data["x"].tolist() == [0, 1, 2]
    assert _names(tmp_path) == ["stars.npz"]


@pytest.mark.parametrize("existing", [
    pytest.param(None, id="no-file-yet"),
    pytest.param("kept", id="existing-file"),
])
def test_failure_mid_write_leaves_no_temporary(tmp_path, existing):
    out = tmp_path / "table.ecsv"
    if existing is not None:
        out.write_text(existing)
    with pytest.raises(OSError, match=f"{out}: cannot write") as info:
        with replacing(out) as tmp:
            tmp.write_text("half a tab")
            raise _no_space(tmp)
    assert info.value.errno == errno.ENOSPC
    assert _names(tmp_path) == ([] if existing is None else ["table.ecsv"])
    if existing is not None:
        assert out.read_text() == existing


def test_failed_rename_leaves_no_temporary(tmp_path):
    out = tmp_path / "busy"
    out.mkdir()
    (out / "inside").write_text("x")
    with pytest.raises(OSError, match=f"{out}: cannot write"):
        with replacing(out) as tmp:
            tmp.write_text("text")
    assert _names(tmp_path) == ["busy"]
    assert _names(out) == ["inside"]


def test_other_errors_pass_unchanged_with_a_note(tmp_path):
    out = tmp_path / "log.txt"
    out.write_text("kept")
    with pytest.raises(ValueError, match="bad value") as info:
        with replacing(out) as tmp:
            tmp.write_text("part")
            raise ValueError("bad value")
    assert str(info.value) == "bad value"
    assert info.value.__notes__ == [f"while writing {out}"]
    assert out.read_text() == "kept"
    assert _names(tmp_path) == ["log.txt"]


def test_interrupt_leaves_no_temporary(tmp_path):
    out = tmp_path / "log.txt"
    with pytest.raises(KeyboardInterrupt):
        with replacing(out) as tmp:
            tmp.write_text("part")
            raise KeyboardInterrupt
    assert _names(tmp_path) == []


def test_missing_folder_is_an_error_naming_the_file(tmp_path):
    out = tmp_path / "no" / "such" / "report.html"
    with pytest.raises(FileNotFoundError, match=f"{out}: cannot write .the folder"):
        with replacing(out):
            pytest.fail("the block must not run")
    assert _names(tmp_path) == []


def test_missing_folders_made_on_request(tmp_path):
    out = tmp_path / "results" / "night1" / "log.txt"
    with replacing(out, make_folders=True) as tmp:
        tmp.write_text("made")
    assert out.read_text() == "made"


def test_read_only_folder_is_a_permission_error(tmp_path, monkeypatch):
    # The folder refuses the temporary file as a read-only folder does (EACCES from open(2)).
    # Simulated, so the check also binds where the tests run as root, whom permissions do not.
    def refuse(path, *args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied", str(path))

    monkeypatch.setattr(_files.os, "open", refuse)
    folder = tmp_path / "locked"
    folder.mkdir()
    with pytest.raises(PermissionError, match=f"{folder / 'x.txt'}: cannot write .Permission"):
        with replacing(folder / "x.txt"):
            pytest.fail("the block must not run")
    monkeypatch.undo()
    assert _names(folder) == []


def test_mode(tmp_path):
    with replacing(tmp_path / "shared.txt", mode=0o644) as tmp:
        tmp.write_text("x")
    assert stat.S_IMODE((tmp_path / "shared.txt").stat().st_mode) == 0o644
    umask = os.umask(0o022)
    os.umask(umask)
    with replacing(tmp_path / "plain.txt") as tmp:
        tmp.write_text("x")
    # a file made by open() gets 0o666 less the umask (POSIX open(2))
    assert stat.S_IMODE((tmp_path / "plain.txt").stat().st_mode) == 0o666 & ~umask


@pytest.mark.parametrize("flush", [True, False])
def test_fsync_on_request(tmp_path, monkeypatch, flush):
    synced = []
    real = os.fsync
    monkeypatch.setattr(os, "fsync", lambda fd: synced.append(fd) or real(fd))
    with replacing(tmp_path / "log.txt", fsync=flush) as tmp:
        tmp.write_text("x")
    assert len(synced) == (1 if flush else 0)


# --- every writer of the package goes through replacing() ---------------------------------

def _report(path, tag):
    write_report(path, campaign_name=tag, summary={}, tables={}, figures={}, notes=[])


def _text(path, tag):
    write_text(path, tag)


def _hdul(tag):
    hdu = fits.PrimaryHDU(np.zeros((4, 4), dtype=np.int16))
    hdu.header["OBJECT"] = tag
    return fits.HDUList([hdu])


def _fits(path, tag):
    write_fits(_hdul(tag), path)


def _frame(path, tag):
    write_frame(_hdul(tag), path, compress=True)


def _store(path, tag):
    stars = QTable({"ra": [10.0, 10.1], "dec": [-5.0, -5.1], "tag": [tag, tag]})
    ReferenceStarStore.build(stars, path)


def _read(path):
    if path.suffix == ".npz":
        with np.load(path) as data:
            return str(data["col_2"][0])
    if ".fits" in path.name:
        with fits.open(path) as hdul:
            return hdul[-1].header["OBJECT"]
    return path.read_text(encoding="utf-8")


WRITERS = [
    pytest.param(_report, "report.html", id="campaign-report"),
    pytest.param(_text, "activity.json", id="campaign-result-file"),
    pytest.param(_fits, "master_bias.fits", id="frames-fits"),
    pytest.param(_frame, "sci_0001.fits.fz", id="scenario-frame"),
    pytest.param(_store, "reference_store.npz", id="photometry-refstore"),
]


@pytest.mark.parametrize(("write", "name"), WRITERS)
def test_writers_keep_the_old_file_on_failure(tmp_path, monkeypatch, write, name):
    path = tmp_path / name
    write(path, "Comet Vessa first")
    before = path.read_bytes()

    def no_space(src, dst):
        raise _no_space(src)

    monkeypatch.setattr(_files.os, "replace", no_space)
    with pytest.raises(OSError, match=f"{path}: cannot write"):
        write(path, "Comet Vessa second")
    assert path.read_bytes() == before
    assert _names(tmp_path) == [name]
    monkeypatch.undo()
    write(path, "Comet Vessa second")
    assert "second" in _read(path)
    assert _names(tmp_path) == [name]
