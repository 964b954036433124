"""The results folder: made once at the start of a run, with leftovers of a killed run cleaned."""

import os
import re
import secrets
from pathlib import Path

__all__ = ["ResultsError", "prepare_results", "clean_leftovers"]

#: Hidden temporaries that `photpipe._files.replacing` writes beside a file before the rename.
_TEMPORARY = re.compile(r"^\..+\.[0-9a-f]{8}(\.[A-Za-z0-9]+)?$")


class ResultsError(OSError):
    """The results folder cannot be made or written; the message names it and says why."""


def prepare_results(path):
    """Make the results folder (and its parents); return it as a Path.

    Raises
    ------
    ResultsError
        The path is a file, or the folder cannot be made (read-only parent, a file on the
        way, full disk) or cannot be written (read-only folder).
    """
    path = Path(path)
    if path.exists() and not path.is_dir():
        msg = f"{path}: the results path is a file, not a folder"
        raise ResultsError(msg)
    try:
        path.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        msg = f"{path}: cannot make the results folder ({exc.strerror or exc})"
        raise ResultsError(msg) from exc
    _check_writable(path)
    return path


def _check_writable(folder):
    """Make and remove one empty file in ``folder``; a read-only folder stops the run here.

    This runs before the store or any result is touched; the file's name is one that
    `clean_leftovers` removes, should the run be killed in between.
    """
    probe = folder / f".write_check.{secrets.token_hex(4)}.part"
    try:
        os.close(os.open(probe, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        os.remove(probe)
    except OSError as exc:
        msg = f"{folder}: the results folder cannot be written ({exc.strerror or exc})"
        raise ResultsError(msg) from exc


def clean_leftovers(folder):
    """Remove hidden temporaries (``.name.1a2b3c4d.part``) that a killed run left behind.

    Call only when no other run writes into ``folder``. Returns the paths removed.

    Examples
    --------
    >>> import tempfile
    >>> d = Path(tempfile.mkdtemp())
    >>> _ = (d / ".lightcurve.ecsv.0a1b2c3d.part").write_text("")
    >>> _ = (d / "lightcurve.ecsv").write_text("kept")
    >>> [p.name for p in clean_leftovers(d)], sorted(p.name for p in d.iterdir())
    (['.lightcurve.ecsv.0a1b2c3d.part'], ['lightcurve.ecsv'])
    """
    removed = []
    for root, _, files in os.walk(folder):
        for name in files:
            if _TEMPORARY.match(name):
                path = Path(root) / name
                try:
                    path.unlink()
                except OSError:
                    continue
                removed.append(path)
    return removed
