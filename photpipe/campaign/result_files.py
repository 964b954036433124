"""Result files of the campaign steps: read a table or JSON naming the file, write by rename."""

import json
from pathlib import Path

from astropy.table import QTable

from photpipe._files import replacing

__all__ = ["read_ecsv", "read_json", "write_atomic", "write_text"]


def read_ecsv(path, what="table"):
    """Read an ECSV file as a QTable.

    Parameters
    ----------
    path : str or path-like
        The file.
    what : str, optional
        What the file holds, for the message (``"lightcurve"``, ...).

    Raises
    ------
    ValueError
        ``"<path>: cannot read the <what> (<reason>)"``, for a missing or broken file.
    """
    try:
        return QTable.read(path, format="ascii.ecsv")
    except Exception as exc:  # astropy raises many kinds for a broken ECSV
        msg = f"{path}: cannot read the {what} ({exc})"
        raise ValueError(msg) from exc


def read_json(path, what="file"):
    """Read a JSON file; return None when there is no file at ``path``.

    Raises
    ------
    ValueError
        ``"<path>: cannot read the <what> (<reason>)"``, for a file that is not JSON.

    Examples
    --------
    >>> read_json("no/such/file.json") is None
    True
    """
    path = Path(path)
    if not path.is_file():
        return None
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        msg = f"{path}: cannot read the {what} ({exc})"
        raise ValueError(msg) from exc


def write_atomic(path, write):
    """Write ``path`` through ``write(temporary_path)``, then rename it into place.

    The temporary file sits beside ``path`` (folders are made as needed) and is removed if
    ``write`` fails, so no half-written result is ever left under the final name. The file is
    made readable by all (``0o644``): results are meant to be shared.

    Returns
    -------
    path : `pathlib.Path`

    Raises
    ------
    OSError
        ``"<path>: cannot write (<reason>)"``, for a folder that cannot be made or written, a
        full disk or a failed rename; other errors of ``write`` pass unchanged.
    """
    path = Path(path)
    with replacing(path, mode=0o644, fsync=False, make_folders=True) as tmp:
        write(tmp)
    return path


def write_text(path, text):
    """Write ``text`` (UTF-8) to ``path`` by `write_atomic`; return the path."""
    return write_atomic(path, lambda tmp: tmp.write_text(text, encoding="utf-8"))
