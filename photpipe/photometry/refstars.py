"""Reading a user's reference-star file (CSV, ECSV, FITS table or VOTable)."""

import os

import numpy as np
from astropy import units as u
from astropy.io.registry import IORegistryError
from astropy.table import QTable

__all__ = ["REFERENCE_FORMATS", "read_reference_stars", "check_reference_columns",
           "rename_columns"]

#: file-name ending -> astropy Table reader format.
REFERENCE_FORMATS = {
    ".csv": "ascii.csv",
    ".ecsv": "ascii.ecsv",
    ".fits": "fits", ".fit": "fits", ".fits.gz": "fits", ".fts": "fits",
    ".xml": "votable", ".vot": "votable", ".votable": "votable",
}

_ANGLE_COLUMNS = ("ra", "dec")


def _reader_format(path):
    """The reader for a known ending; None lets astropy recognise the table itself."""
    lower = str(path).lower()
    for ending in sorted(REFERENCE_FORMATS, key=len, reverse=True):
        if lower.endswith(ending):
            return REFERENCE_FORMATS[ending]
    return None


def _read_any(path, fmt):
    if fmt is not None:
        return QTable.read(path, format=fmt)
    try:
        return QTable.read(path)
    except IORegistryError:
        # astropy's ASCII reader guesses among its many text layouts
        return QTable.read(path, format="ascii")


def rename_columns(table, columns, *, source="reference stars"):
    """Rename the file's columns to photpipe's names, in place.

    Parameters
    ----------
    table : `~astropy.table.Table`
    columns : dict
        photpipe name -> the file's column name, e.g. ``{"ra": "RAJ2000", "dec": "DEJ2000",
        "V": "Vmag", "V_err": "e_Vmag", "B-V": "B-V"}`` (magnitude errors are ``<band>_err``).

    Raises
    ------
    ValueError
        Naming ``source`` and a mapped column the table lacks.

    Examples
    --------
    from astropy.table import QTable
    >>> t = QTable({"RAJ2000": [1.0], "Vmag": [12.0]})
    >>> rename_columns(t, {"ra": "RAJ2000", "V": "Vmag"}).colnames
    ['ra', 'V']
    """
    for ours, theirs in dict(columns or {}).items():
        if ours == theirs:
            continue
        if theirs not in table.colnames:
            msg = (f"{source}: the configured column {theirs!r} (for {ours!r}) is not in the "
                   f"table (columns: {', '.join(table.colnames)})")
            raise ValueError(msg)
        if ours in table.colnames:
            table.remove_column(ours)
        table.rename_column(theirs, ours)
    return table


def check_reference_columns(table, columns, *, source="reference stars"):
    """Raise a ValueError naming ``source`` and the first column ``table`` lacks.

    Parameters
    ----------
    table : `~astropy.table.Table`
        The reference stars.
    columns : iterable of str
        Column names that must be present.
    source : str, optional
        Name of the file or table for the message.

    Examples
    --------
    from astropy.table import QTable
    >>> check_reference_columns(QTable({"ra": [1.0]}), ["ra", "dec"], source="cat.csv")
    Traceback (most recent call last):
    ...
    ValueError: cat.csv: reference-star table has no column 'dec' (columns: ra)
    """
    for name in columns:
        if name not in table.colnames:
            msg = (f"{source}: reference-star table has no column {name!r} "
                   f"(columns: {', '.join(table.colnames)})")
            raise ValueError(msg)


def read_reference_stars(path, *, bands=None, colour=None, columns=None):
    r"""Read a reference-star file into a QTable with ``ra``/``dec`` in degrees.

    Parameters
    ----------
    path : str or path-like
        Any table astropy reads: the format comes from the file name (`REFERENCE_FORMATS`), or
        astropy recognises it.
    bands : iterable of str, optional
        Magnitude columns that must be present (e.g. ``["R", "V"]``).
    colour : str, optional
        Colour column that must be present (e.g. ``"B-V"``).
    columns : dict, optional
        photpipe name -> the file's column name (see `rename_columns`), applied first.

    Returns
    -------
    stars : `~astropy.table.QTable`
        The table, columns ``ra`` and ``dec`` as Quantity in deg (plain numbers are read as deg),
        the requested ``bands`` and ``colour`` columns as Quantity in mag (plain numbers are read
        as mag); other columns are left as read. Column
        names are matched case-insensitively for ``ra``/``dec`` and renamed to lower case.

    Raises
    ------
    FileNotFoundError
        If the file does not exist.
    ValueError
        If the format is unknown, the file cannot be parsed, or a column is missing or not numeric
        (the message names the file and the column).

    Notes
    -----
    Magnitudes should be in the system of the solar magnitudes used for Afρ
    (:func:`photpipe.photometry.solar_magnitude`); that is the caller's choice, not checked.

    Examples
    --------
    >>> import os, tempfile
    >>> d = tempfile.mkdtemp()
    >>> p = os.path.join(d, "ref.csv")
    >>> with open(p, "w") as f:
    ...     _ = f.write("RA,Dec,R,B-V\n10.0,20.0,12.5,0.6\n")
    >>> t = read_reference_stars(p, bands=["R"], colour="B-V")
    >>> t["ra"].unit, float(t["R"][0].value)
    (Unit("deg"), 12.5)
    """
    path = os.fspath(path)
    if not os.path.exists(path):
        msg = f"{path}: reference-star file not found"
        raise FileNotFoundError(msg)
    fmt = _reader_format(path)
    try:
        table = _read_any(path, fmt)
    except Exception as exc:  # astropy readers raise many kinds; the file is the problem
        msg = f"{path}: cannot read as {fmt or 'a'} table: {exc}"
        raise ValueError(msg) from exc
    rename_columns(table, columns, source=path)
    lower = {name.lower(): name for name in table.colnames}
    for name in _ANGLE_COLUMNS:
        if name not in table.colnames and name in lower:
            table.rename_column(lower[name], name)
    required = list(_ANGLE_COLUMNS) + list(bands or []) + ([colour] if colour else [])
    check_reference_columns(table, required, source=path)
    required += [f"{b}_err" for b in bands or [] if f"{b}_err" in table.colnames]
    for name in table.colnames:
        col = table[name]
        if name in _ANGLE_COLUMNS:
            table[name] = _as_unit_column(col, u.deg, path, name)
        elif name in required:
            table[name] = _as_unit_column(col, u.mag, path, name)
    return table


def _as_unit_column(col, unit, path, name):
    values = col.filled(np.nan) if hasattr(col, "filled") else col
    if isinstance(values, u.Quantity):
        try:
            return values.to(unit)
        except u.UnitConversionError as exc:
            msg = f"{path}: column {name!r} has unit {values.unit}, expected {unit}"
            raise ValueError(msg) from exc
    arr = np.asarray(values)
    if col.unit is not None:
        try:
            return (arr.astype(float) * u.Unit(col.unit)).to(unit)
        except (u.UnitConversionError, ValueError) as exc:
            msg = f"{path}: column {name!r} has unit {col.unit}, expected {unit}"
            raise ValueError(msg) from exc
    if not np.issubdtype(arr.dtype, np.number):
        msg = f"{path}: column {name!r} is not numeric (dtype {arr.dtype})"
        raise ValueError(msg)
    return arr.astype(float) * unit
