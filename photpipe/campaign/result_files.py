"""Result files of the campaign steps: read a table or JSON naming the file, write by rename.

Tables are written as ECSV with the precision their values carry: a value with an error column
beside it keeps the error's first three significant digits (two that matter and a guard digit),
other columns a fixed number of decimals set by their unit (see `DECIMALS`), so no file shows
16-digit numbers. Columns with units are written as plain columns with a ``unit``, which keeps
the header to the column list and the table's own few metadata items.
"""

import json
import math
from pathlib import Path

import numpy as np
from astropy.table import QTable, Table

from photpipe._files import replacing

__all__ = ["read_ecsv", "read_json", "write_atomic", "write_text", "write_ecsv", "tidy_table",
           "DECIMALS"]

#: Name ending -> decimals kept for columns without an error column (precision far below what
#: any measurement here reaches: 7 decimals of a day are 9 ms, 8 of an au 1.5 km).
DECIMALS = {"mjd_utc_mid": 7, "_au": 8, "_deg": 6, "_arcsec": 3, "_pix": 3, "_mag": 4,
            "_s": 3, "_km": 2, "_cm": 3, "_h": 6}
_SIGNIFICANT = 6  # any other float column


def _error_column(name, names):
    for unit in ("_cm", "_mag", "_h", "_km", "_au", "_deg", "_e_s", ""):
        if unit and not name.endswith(unit):
            continue
        stem = name[: len(name) - len(unit)] if unit else name
        cand = f"{stem}_err{unit}"
        if cand in names and cand != name:
            return cand
    return None


def _round_significant(values, digits):
    out = np.array(values, dtype=float)
    ok = np.isfinite(out) & (out != 0)
    if np.any(ok):
        scale = digits - 1 - np.floor(np.log10(np.abs(out[ok])))
        out[ok] = np.array([round(v, int(d)) for v, d in zip(out[ok], scale, strict=True)])
    return out


def _round_to_errors(values, errors, guard=1):
    out = np.array(values, dtype=float)
    for i, e in enumerate(np.asarray(errors, dtype=float)):
        if math.isfinite(e) and e > 0 and math.isfinite(out[i]):
            out[i] = round(out[i], int(1 + guard - math.floor(math.log10(e))))
    return out


def _decimals(name):
    if name in DECIMALS:
        return DECIMALS[name]
    for end, dec in DECIMALS.items():
        if end.startswith("_") and name.endswith(end):
            return dec
    return None


def tidy_table(table):
    """A copy of ``table`` with floats rounded to the precision they carry, as plain columns.

    Examples
    --------
    >>> from astropy import units as u
    >>> t = tidy_table(QTable({"afrho_cm": [258.7412345] * u.cm,
    ...                        "afrho_err_cm": [0.7833321] * u.cm,
    ...                        "r_h_au": [1.33823186128987] * u.au}))
    >>> float(t["afrho_cm"][0]), float(t["afrho_err_cm"][0]), float(t["r_h_au"][0])
    (258.741, 0.783, 1.33823186)
    >>> t["r_h_au"].unit
    Unit("AU")
    """
    out = Table(table, copy=True)
    names = out.colnames
    for name in names:
        col = out[name]
        if getattr(getattr(col, "dtype", None), "kind", None) != "f":
            continue
        err = _error_column(name, names)
        if err is not None:
            e = np.asarray(out[err], dtype=float)
            col[:] = _round_to_errors(col, e)
            continue
        if name.endswith("_err") or "_err_" in name:
            col[:] = _round_significant(col, 3)
            continue
        dec = _decimals(name)
        col[:] = np.round(np.asarray(col, dtype=float), dec) if dec is not None \
            else _round_significant(col, _SIGNIFICANT)
    return out


def write_ecsv(path, table):
    """Write ``table`` as ECSV through `write_atomic`, rounded by `tidy_table`; return the path.

    Raises
    ------
    OSError
        ``"<path>: cannot write (<reason>)"`` (see `write_atomic`).
    """
    tidy = tidy_table(table)
    return write_atomic(path, lambda tmp: tidy.write(tmp, format="ascii.ecsv", overwrite=True))


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
