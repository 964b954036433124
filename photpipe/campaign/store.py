"""The campaign store: one SQLite file that holds everything a campaign has measured.

Only this module touches the database. Every write is one transaction (``BEGIN IMMEDIATE`` ...
``COMMIT``): a frame's results go in whole or not at all. The file runs in WAL mode with a busy
timeout, so two runs on the same campaign at once wait for each other instead of corrupting it,
and readers never block the writer. Unique keys plus upserts make a re-run of a frame replace its
rows, never duplicate them, so a run killed half-way and started again ends with the same rows.
"""

import math
import os
import socket
import sqlite3
from contextlib import contextmanager
from datetime import datetime, timezone
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import MaskedColumn, QTable

from photpipe import __version__

from ._schema import RESULT_TABLES, SCHEMA_VERSION, TABLES, schema_sql
from .result_files import write_ecsv

__all__ = ["CampaignStore", "StoreError", "EXPORTABLE"]

#: Names accepted by :meth:`CampaignStore.export_table`.
EXPORTABLE = tuple(TABLES) + tuple(RESULT_TABLES) + ("lightcurve",)

_LIGHTCURVE_COLUMNS = (
    ("frame", None), ("mjd_utc_mid", None), ("nucleus_mag", u.mag), ("nucleus_mag_err", u.mag),
    ("r_h_au", u.AU), ("delta_au", u.AU), ("phase_deg", u.deg), ("light_time_s", u.s),
    ("site", None), ("filter", None), ("source", None), ("flags", None), ("night", None),
)


class StoreError(RuntimeError):
    """The campaign store cannot be used; the message names the file and the problem."""


def _now():
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


def _plain(value, unit, where):
    """Return ``value`` as a number/str/None that SQLite stores, converted to ``unit``."""
    if value is None or value is np.ma.masked:
        return None
    if isinstance(value, u.Quantity):
        if unit is None:
            # Unitless columns: plain numbers, and time stamps given as MJD in days.
            unit = (u.dimensionless_unscaled if value.unit.physical_type != "time"
                    else u.day)
        try:
            value = value.to_value(unit)
        except u.UnitConversionError as exc:
            msg = f"{where}: cannot convert {value.unit} to {unit}"
            raise ValueError(msg) from exc
    if isinstance(value, (list, tuple, set)):
        return ",".join(str(v) for v in value)
    if isinstance(value, (bytes, np.bytes_)):
        return value.decode()
    if isinstance(value, (bool, np.bool_)):
        return int(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return None if math.isnan(value) else value
    if isinstance(value, np.ndarray):
        if value.size != 1:
            msg = f"{where}: expected one value, got an array of shape {value.shape}"
            raise ValueError(msg)
        return _plain(value.reshape(()).item(), None, where)
    return value if isinstance(value, str) else str(value)


def _table_rows(data):
    """Yield the rows of ``data`` (Table/QTable, list of dicts, or one dict) as dicts."""
    if data is None:
        return
    if isinstance(data, dict):
        yield data
        return
    if hasattr(data, "colnames"):
        names = data.colnames
        for row in data:
            yield {name: row[name] for name in names}
        return
    for row in data:
        yield dict(row)


class CampaignStore:
    """The SQLite file of one campaign.

    Parameters
    ----------
    path : str or path-like
        The database file; created (with its folder) when absent.
    timeout : float, optional
        Seconds a writer waits for another process's transaction before giving up.

    Raises
    ------
    StoreError
        If the file is damaged, is not a photpipe store, or has a newer schema.

    Notes
    -----
    Results of a frame are keyed by ``(night, frame)``; storing a frame again replaces its rows in
    one transaction. A frame counts as measured (and is skipped by a re-run) when its
    ``frame_results`` marker holds the same raw-file content hash and configuration hash.

    Examples
    --------
    >>> import tempfile, os
    >>> from photpipe.campaign import CampaignStore, FrameRecord
    >>> folder = tempfile.mkdtemp()
    >>> with CampaignStore(os.path.join(folder, "c.sqlite")) as store:
    ...     run = store.start_run("[campaign]", config_hash="cfg1")
    ...     rec = FrameRecord("n1", "sci_01", "/raw/sci_01.fits", "h1", mjd_utc_mid=61010.2,
    ...                       stages=("calibration",))
    ...     frame_id = store.write_frame(run, rec, config_hash="cfg1")
    ...     store.is_measured("n1", "sci_01", content_hash="h1", config_hash="cfg1")
    True
    """

    def __init__(self, path, *, timeout=60.0):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        try:
            self._db = sqlite3.connect(self.path, timeout=timeout, isolation_level=None)
        except sqlite3.Error as exc:
            msg = f"{self.path}: cannot open the campaign store: {exc}"
            raise StoreError(msg) from exc
        try:
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA foreign_keys=ON")
            self._db.execute("PRAGMA synchronous=NORMAL")
            self._check_integrity()
            self._create_schema()
        except sqlite3.DatabaseError as exc:
            self._db.close()
            msg = (f"{self.path}: is damaged or is not a SQLite campaign store ({exc}); "
                   "move it aside and run again to rebuild it from the frames")
            raise StoreError(msg) from exc
        except StoreError:
            self._db.close()
            raise

    # -- opening ---------------------------------------------------------------------------

    def _check_integrity(self):
        row = self._db.execute("PRAGMA quick_check").fetchone()
        if row is None or row[0] != "ok":
            answer = row[0] if row else "no answer"
            msg = f"{self.path}: the SQLite integrity check failed ({answer})"
            raise StoreError(msg)
        tables = {r[0] for r in self._db.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table'")}
        if tables and "schema_version" not in tables:
            msg = (f"{self.path}: is a SQLite file but not a photpipe campaign store "
                   f"(it holds tables {sorted(tables)[:5]})")
            raise StoreError(msg)

    def _create_schema(self):
        with self._write():
            for statement in schema_sql():
                self._db.execute(statement)
            row = self._db.execute("SELECT max(version) FROM schema_version").fetchone()
            if row[0] is None:
                self._db.execute("INSERT INTO schema_version VALUES (?)", (SCHEMA_VERSION,))
            elif row[0] > SCHEMA_VERSION:
                msg = (f"{self.path}: store schema version {row[0]} is newer than this photpipe "
                       f"understands ({SCHEMA_VERSION}); upgrade photpipe")
                raise StoreError(msg)
            elif row[0] < SCHEMA_VERSION:
                self._add_new_columns()
                self._db.execute("INSERT INTO schema_version VALUES (?)", (SCHEMA_VERSION,))

    def _add_new_columns(self):
        """Bring an older store up to date: result columns added since are added, empty.

        Later versions only ever add columns, so an older store keeps all it holds; frames
        measured before the upgrade have NULL in the new columns until measured again
        (``--rerun``).
        """
        for table, (columns, _) in RESULT_TABLES.items():
            have = {r[1] for r in self._db.execute(f"PRAGMA table_info({table})")}
            for col in columns:
                if col.name not in have:
                    self._db.execute(f'ALTER TABLE {table} ADD COLUMN "{col.name}" {col.sql}')

    @contextmanager
    def _write(self):
        """One write transaction; rolled back whole on any error."""
        self._db.execute("BEGIN IMMEDIATE")
        try:
            yield self._db
        except BaseException:
            self._db.execute("ROLLBACK")
            raise
        self._db.execute("COMMIT")

    def close(self):
        """Close the database connection."""
        self._db.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    @property
    def schema_version(self):
        """The schema version written in the file."""
        return self._db.execute("SELECT max(version) FROM schema_version").fetchone()[0]

    # -- runs ------------------------------------------------------------------------------

    def start_run(self, config_text, *, config_hash, software_version=None):
        """Record the start of a run and return its id.

        Runs left ``running`` by a process of this host that no longer exists are marked
        ``interrupted`` first.
        """
        host = socket.gethostname()
        with self._write() as db:
            for run_id, pid in db.execute(
                    "SELECT id, pid FROM runs WHERE status = 'running' AND host = ?", (host,)):
                if pid is not None and not _pid_alive(pid):
                    db.execute("UPDATE runs SET status = 'interrupted' WHERE id = ?", (run_id,))
            cur = db.execute(
                "INSERT INTO runs (started, status, config_text, config_hash, software_version, "
                "host, pid) VALUES (?, 'running', ?, ?, ?, ?, ?)",
                (_now(), config_text, config_hash, software_version or __version__, host,
                 os.getpid()))
            return cur.lastrowid

    def end_run(self, run_id, status="completed"):
        """Record the end of run ``run_id`` with ``status`` (completed, failed, interrupted)."""
        with self._write() as db:
            db.execute("UPDATE runs SET ended = ?, status = ? WHERE id = ?",
                       (_now(), status, run_id))

    # -- frames and calibrations -----------------------------------------------------------

    def add_frames(self, frames):
        """Insert or update the inventory rows of frames read from a night.

        Parameters
        ----------
        frames : iterable of dict
            Keys ``night, frame, path, content_hash, kind`` and optionally ``mjd_utc_mid,
            filter, exptime_s, site``.

        Returns
        -------
        ids : dict
            ``(night, frame) -> frame id``.
        """
        ids = {}
        with self._write() as db:
            for row in frames:
                ids[(row["night"], row["frame"])] = self._upsert_frame(db, row)
        return ids

    @staticmethod
    def _upsert_frame(db, row):
        values = (row["night"], row["frame"], str(row["path"]), row["content_hash"],
                  row.get("kind", "science"), _plain(row.get("mjd_utc_mid"), None, "mjd"),
                  row.get("filter"), _plain(row.get("exptime_s"), u.s, "exptime_s"),
                  row.get("site"))
        db.execute(
            "INSERT INTO frames (night, name, path, content_hash, kind, mjd_utc_mid, filter, "
            "exptime_s, site) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) "
            "ON CONFLICT (night, name) DO UPDATE SET path = excluded.path, "
            "content_hash = excluded.content_hash, kind = excluded.kind, "
            "mjd_utc_mid = excluded.mjd_utc_mid, filter = excluded.filter, "
            "exptime_s = excluded.exptime_s, site = excluded.site", values)
        return db.execute("SELECT id FROM frames WHERE night = ? AND name = ?",
                          (row["night"], row["frame"])).fetchone()[0]

    def add_calibrations(self, calibrations):
        """Insert or update master-calibration rows (keyed by path); return ``path -> id``."""
        with self._write() as db:
            return {str(c["path"]): self._upsert_calibration(db, c) for c in calibrations}

    @staticmethod
    def _upsert_calibration(db, row):
        values = (row.get("night", ""), row["kind"], row.get("filter"),
                  _plain(row.get("exptime_s"), u.s, "exptime_s"), row.get("n_inputs"),
                  str(row["path"]), row.get("content_hash"))
        db.execute(
            "INSERT INTO calibrations (night, kind, filter, exptime_s, n_inputs, path, "
            "content_hash) VALUES (?, ?, ?, ?, ?, ?, ?) ON CONFLICT (path) DO UPDATE SET "
            "night = excluded.night, kind = excluded.kind, filter = excluded.filter, "
            "exptime_s = excluded.exptime_s, n_inputs = excluded.n_inputs, "
            "content_hash = excluded.content_hash", values)
        return db.execute("SELECT id FROM calibrations WHERE path = ?",
                          (str(row["path"]),)).fetchone()[0]

    # -- results ---------------------------------------------------------------------------

    def write_frame(self, run_id, record, *, config_hash):
        """Store one frame's results in a single transaction, replacing earlier ones.

        Parameters
        ----------
        run_id : int
            The run that measured the frame.
        record : FrameRecord
            The frame's results.
        config_hash : str
            Hash of the configuration sections that shape per-frame results.

        Returns
        -------
        frame_id : int
        """
        where = f"{self.path}: frame {record.night}/{record.frame}"
        with self._write() as db:
            frame_id = self._upsert_frame(db, {
                "night": record.night, "frame": record.frame, "path": record.path,
                "content_hash": record.content_hash, "kind": record.kind,
                "mjd_utc_mid": record.mjd_utc_mid, "filter": record.filter,
                "exptime_s": record.exptime_s, "site": record.site})
            for table in RESULT_TABLES:
                db.execute(f"DELETE FROM {table} WHERE frame_id = ?", (frame_id,))
            db.execute("DELETE FROM frame_calibrations WHERE frame_id = ?", (frame_id,))
            for cal in record.calibrations:
                cal = {"night": record.night, **cal}
                cal_id = self._upsert_calibration(db, cal)
                db.execute("INSERT OR IGNORE INTO frame_calibrations VALUES (?, ?)",
                           (frame_id, cal_id))
            sources = {"geometry": record.geometry, "zero_points": record.zero_point,
                       "stars": record.stars, "measurements": record.measurements,
                       "nucleus": record.nucleus}
            # Rows lacking the frame-level facts get them from the record.
            facts = {"mjd_utc_mid": record.mjd_utc_mid, "filter": record.filter,
                     "exptime_s": record.exptime_s}
            for table, data in sources.items():
                self._insert_rows(db, table, frame_id, data, where, facts)
            db.execute(
                "INSERT INTO frame_results (frame_id, run_id, content_hash, config_hash, stages, "
                "calibrated_path) VALUES (?, ?, ?, ?, ?, ?) ON CONFLICT (frame_id) DO UPDATE SET "
                "run_id = excluded.run_id, content_hash = excluded.content_hash, "
                "config_hash = excluded.config_hash, stages = excluded.stages, "
                "calibrated_path = excluded.calibrated_path",
                (frame_id, run_id, record.content_hash, config_hash, ",".join(record.stages),
                 record.calibrated_path))
            db.execute("DELETE FROM skipped WHERE night = ? AND item = ?",
                       (record.night, record.frame))
            for stage, reason in record.problems:
                self._upsert_skipped(db, run_id, record.night, record.frame, stage, reason)
        return frame_id

    @staticmethod
    def _insert_rows(db, table, frame_id, data, where, facts):
        columns, one_per_frame = RESULT_TABLES[table]
        names = [c.name for c in columns]
        rows = list(_table_rows(data))
        if one_per_frame and len(rows) > 1:
            msg = f"{where}: table {table!r} takes one row per frame, got {len(rows)}"
            raise ValueError(msg)
        key = ["frame_id"] if one_per_frame else ["frame_id", "row_index"]
        quoted = ", ".join(key + [f'"{n}"' for n in names])
        marks = ", ".join("?" for _ in key + names)
        sql = f"INSERT INTO {table} ({quoted}) VALUES ({marks})"
        for index, row in enumerate(rows):
            values = [_plain(row.get(c.name, facts.get(c.name)), c.unit,
                             f"{where}, {table}.{c.name}") for c in columns]
            db.execute(sql, ([frame_id] if one_per_frame else [frame_id, index]) + values)

    def add_skipped(self, run_id, night, item, stage, reason):
        """Record that ``item`` of ``night`` could not pass ``stage``, and why."""
        with self._write() as db:
            self._upsert_skipped(db, run_id, night, item, stage, reason)

    @staticmethod
    def _upsert_skipped(db, run_id, night, item, stage, reason):
        db.execute(
            "INSERT INTO skipped (night, item, stage, reason, run_id) VALUES (?, ?, ?, ?, ?) "
            "ON CONFLICT (night, item, stage) DO UPDATE SET reason = excluded.reason, "
            "run_id = excluded.run_id", (night, str(item), stage, str(reason), run_id))

    def is_measured(self, night, frame, *, content_hash, config_hash, stages=()):
        """Return True if ``night/frame`` holds results for this file content and configuration.

        ``stages``: the stages the current run can do; results made when one of them was not
        available do not count.
        """
        row = self._db.execute(
            "SELECT r.content_hash, r.config_hash, r.stages FROM frame_results r "
            "JOIN frames f ON f.id = r.frame_id WHERE f.night = ? AND f.name = ?",
            (night, frame)).fetchone()
        if row is None:
            return False
        done = set(filter(None, row[2].split(",")))
        return row[0] == content_hash and row[1] == config_hash and set(stages) <= done

    def measured(self, night):
        """Return ``frame -> (content_hash, config_hash, stages)`` of measured frames of a night."""
        rows = self._db.execute(
            "SELECT f.name, r.content_hash, r.config_hash, r.stages FROM frame_results r "
            "JOIN frames f ON f.id = r.frame_id WHERE f.night = ?", (night,))
        return {name: (ch, cfg, tuple(filter(None, st.split(",")))) for name, ch, cfg, st in rows}

    def nights(self):
        """Return the names of the nights in the store, sorted."""
        return [r[0] for r in self._db.execute("SELECT DISTINCT night FROM frames ORDER BY night")]

    def count(self, table):
        """Return the number of rows in ``table``."""
        if table not in EXPORTABLE or table == "lightcurve":
            msg = f"unknown table {table!r}; choose from {list(EXPORTABLE[:-1])}"
            raise ValueError(msg)
        return self._db.execute(f"SELECT count(*) FROM {table}").fetchone()[0]

    # -- export ----------------------------------------------------------------------------

    def export_table(self, name, *, night=None):
        """Return a stored table as a QTable with units.

        Parameters
        ----------
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
            return self.lightcurve(night=night)
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
        rows = self._db.execute(f"{sql} ORDER BY {order}", params).fetchall()
        specs = list(lead) + [(c.name, c.sql, c.unit, c.description) for c in columns]
        table = _build_table(rows, specs)
        if night is not None and "night" in table.colnames and name in RESULT_TABLES:
            table.remove_column("night")
        table.meta.update({"table": name, "store": str(self.path),
                           "schema_version": SCHEMA_VERSION})
        if night is not None:
            table.meta["night"] = night
        return table

    def write_ecsv(self, name, path, *, night=None):
        """Write :meth:`export_table` ``(name, night=night)`` to ``path`` as ECSV, atomically.

        Returns
        -------
        path : `~pathlib.Path`
        """
        table = self.export_table(name, night=night)
        return write_table_atomic(table, path)

    def lightcurve(self, *, night=None):
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
             nflags, mflags, nt) in self._db.execute(sql, params):
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
        table.meta.update({"table": "lightcurve", "store": str(self.path),
                           "schema_version": SCHEMA_VERSION})
        return table


def _pid_alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


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
    """Write ``table`` to ``path`` as ECSV through a temporary file and a rename."""
    return write_ecsv(path, table)
