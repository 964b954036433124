"""Tables out of the campaign store: result tables, bookkeeping tables and the lightcurve."""


import numpy as np
from astropy import units as u
from astropy.table import MaskedColumn, QTable

from photpipe.campaign._schema import RESULT_TABLES, SCHEMA_VERSION, TABLES
from photpipe.campaign.result_files import write_ecsv

__all__ = ["EXPORTABLE", "export_table", "lightcurve", "write_table_atomic"]

#: Names accepted by `export_table`.
EXPORTABLE = tuple(TABLES) + tuple(RESULT_TABLES) + ("lightcurve",)

_LIGHTCURVE_COLUMNS = (
    ("frame", None), ("mjd_utc_mid", None), ("nucleus_mag", u.mag), ("nucleus_mag_err", u.mag),
    ("r_h_au", u.AU), ("delta_au", u.AU), ("phase_deg", u.deg), ("light_time_s", u.s),
    ("site", None), ("filter", None), ("source", None), ("flags", None), ("night", None),
)


def export_table(db, path, name, *, night=None):
    """Return a stored table as a QTable with units.

    Parameters
    ----------
    db : `sqlite3.Connection`
        The open store.
    path : path-like
        The store's file (for the table's ``meta``).
    name : str
        One of `EXPORTABLE`: ``runs, frames, calibrations, skipped, geometry, zero_points,
        stars, measurements, nucleus, lightcurve``.
    night : str, optional
        Restrict to one night. Without it, result tables gain a ``night`` column first.

    Returns
    -------
    table : `~astropy.table.QTable`
        Rows ordered by night, time, frame and row; ``meta`` names the store and table.
    """
    if name == "lightcurve":
        return lightcurve(db, path, night=night)
    if name in RESULT_TABLES:
        columns = RESULT_TABLES[name][0]
        quoted = ", ".join(f't."{c.name}"' for c in columns)
        order = "f.night, f.mjd_utc_mid, f.name" + (
            "" if RESULT_TABLES[name][1] else ", t.row_index")
        sql = (f"SELECT f.night, f.name, {quoted} FROM {name} t "
               f"JOIN frames f ON f.id = t.frame_id")
        lead = (("night", "TEXT", None), ("frame", "TEXT", None))
    elif name in TABLES:
        columns = TABLES[name]
        sql, order = _bookkeeping_select(name)
        lead = ()
    else:
        msg = f"unknown table {name!r}; choose from {list(EXPORTABLE)}"
        raise ValueError(msg)
    params = ()
    if night is not None:
        sql += " WHERE f.night = ?" if name in RESULT_TABLES else _night_filter(name)
        params = (night,)
    rows = db.execute(f"{sql} ORDER BY {order}", params).fetchall()
    specs = list(lead) + [(c.name, c.sql, c.unit, c.description) for c in columns]
    table = _build_table(rows, specs)
    if night is not None and "night" in table.colnames and name in RESULT_TABLES:
        table.remove_column("night")
    table.meta.update({"table": name, "store": str(path),
                       "schema_version": SCHEMA_VERSION})
    if night is not None:
        table.meta["night"] = night
    return table


def lightcurve(db, path, *, night=None):
    """Return the nucleus lightcurve of the campaign, one row per measured frame.

    Returns
    -------
    table : `~astropy.table.QTable`
        Columns ``frame, mjd_utc_mid, nucleus_mag, nucleus_mag_err, r_h_au, delta_au,
        phase_deg, light_time_s, site, filter, source, flags, night``. ``source`` is
        ``"nucleus_fit"`` where a nucleus fit exists, else ``"small_aperture"`` (the
        magnitude in the smallest aperture, an upper bound on the nucleus brightness).
        Frames with neither are absent.
    """
    sql = """
SELECT f.name, f.mjd_utc_mid, n.nucleus_mag, n.nucleus_mag_err, m.mag, m.mag_err,
   g.r_h_au, g.delta_au, g.phase_deg, g.light_time_s, m.r_h_au, m.delta_au, m.phase_deg,
   f.site, f.filter, n.flags, m.flags, f.night
FROM frames f
JOIN frame_results r ON r.frame_id = f.id
LEFT JOIN nucleus n ON n.frame_id = f.id
LEFT JOIN geometry g ON g.frame_id = f.id
LEFT JOIN measurements m ON m.frame_id = f.id AND m.row_index = (
SELECT row_index FROM measurements WHERE frame_id = f.id AND mag IS NOT NULL
ORDER BY rho_km, row_index LIMIT 1)
"""
    params = ()
    if night is not None:
        sql += " WHERE f.night = ?"
        params = (night,)
    sql += " ORDER BY f.mjd_utc_mid, f.night, f.name"
    rows = []
    for (frame, mjd, nmag, nerr, amag, aerr, rh, de, ph, lt, mrh, mde, mph, site, filt,
         nflags, mflags, nt) in db.execute(sql, params):
        if nmag is not None:
            mag, err, source, flags = nmag, nerr, "nucleus_fit", nflags
        elif amag is not None:
            mag, err, source, flags = amag, aerr, "small_aperture", mflags
        else:
            continue
        rows.append((frame, mjd, mag, err, rh if rh is not None else mrh,
                     de if de is not None else mde, ph if ph is not None else mph, lt,
                     site, filt, source, flags or "", nt))
    specs = [(n, "TEXT" if unit is None and n not in ("mjd_utc_mid",) else "REAL", unit, "")
             for n, unit in _LIGHTCURVE_COLUMNS]
    table = _build_table(rows, specs)
    table.meta.update({"table": "lightcurve", "store": str(path),
                       "schema_version": SCHEMA_VERSION})
    return table


def _bookkeeping_select(name):
    if name == "runs":
        return ("SELECT id, started, ended, status, config_hash, software_version, host, "
                "config_text FROM runs f", "f.id")
    if name == "frames":
        return ("SELECT night, name, path, content_hash, kind, mjd_utc_mid, filter, exptime_s, "
                "site FROM frames f", "f.night, f.mjd_utc_mid, f.name")
    if name == "calibrations":
        return ("SELECT night, kind, filter, exptime_s, n_inputs, path, content_hash "
                "FROM calibrations f", "f.night, f.kind, f.path")
    return ("SELECT night, item, stage, reason, run_id FROM skipped f",
            "f.night, f.item, f.stage")


def _night_filter(name):
    if name == "runs":
        msg = "the runs table is not split by night"
        raise ValueError(msg)
    return " WHERE f.night = ?"


def _build_table(rows, specs):
    """Make a QTable from SQL rows; ``specs`` are ``(name, sqltype, unit[, description])``."""
    table = QTable()
    columns = list(zip(*rows)) if rows else [()] * len(specs)
    for spec, values in zip(specs, columns):
        name, sqltype, unit = spec[:3]
        description = spec[3] if len(spec) > 3 else ""
        if sqltype == "REAL":
            data = np.array([np.nan if v is None else v for v in values], dtype=float)
            col = data * unit if unit is not None else data
        elif sqltype == "INTEGER":
            mask = np.array([v is None for v in values], dtype=bool)
            data = np.array([0 if v is None else v for v in values], dtype=np.int64)
            col = MaskedColumn(data, mask=mask) if mask.any() else data
        else:
            col = np.array(["" if v is None else str(v) for v in values], dtype=str)
        table[name] = col
        if description:
            table[name].info.description = description
    return table


def write_table_atomic(table, path):
    """Write ``table`` to ``path`` as ECSV through a temporary file and a rename.

    Returns
    -------
    path : `~pathlib.Path`
    """
    return write_ecsv(path, table)
