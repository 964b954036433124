"""The campaign store: one SQLite file that holds everything a campaign has measured.

Only this module touches the database. Every write is one transaction (``BEGIN IMMEDIATE`` ...
``COMMIT``): a frame's results go in whole or not at all. The file runs in WAL mode with a busy
timeout, so two runs on the same campaign at once wait for each other instead of corrupting it,
and readers never block the writer. Unique keys plus upserts make a re-run of a frame replace its
rows, never duplicate them, so a run killed half-way and started again ends with the same rows.
"""

import os
import socket
import sqlite3
from contextlib import contextmanager
from datetime import datetime, timezone
from pathlib import Path

from astropy import units as u

from photpipe import __version__
from photpipe.campaign._schema import RESULT_TABLES, SCHEMA_VERSION, schema_sql

from ._claims import claim_frame
from ._values import plain_value, table_rows
from .export import EXPORTABLE, export_table, lightcurve, write_table_atomic

__all__ = ["CampaignStore", "StoreError"]

class StoreError(RuntimeError):
    """The campaign store cannot be used; the message names the file and the problem."""


def _now():
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


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
    one transaction, but only when the new attempt measured it: a record without measurement
    rows leaves earlier measurements of the frame as they were (its problems are recorded). A
    frame counts as measured (and is skipped by a re-run) when its ``frame_results`` marker
    holds the same raw-file content hash and configuration hash. A write that fails (a full
    disk, a read-only file) raises `StoreError` and leaves the store as it was.

    Examples
    --------
    >>> import tempfile, os
    >>> from photpipe.campaign import FrameRecord
    >>> from photpipe.store import CampaignStore
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
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            msg = f"{self.path}: cannot make the store's folder ({exc.strerror or exc})"
            raise StoreError(msg) from exc
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
        except StoreError:
            self._db.close()
            raise
        except sqlite3.DatabaseError as exc:
            self._db.close()
            msg = (f"{self.path}: is damaged or is not a SQLite campaign store ({exc}); "
                   "move it aside and run again to rebuild it from the frames")
            raise StoreError(msg) from exc

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
            # frames are found by their content (`claim_frame`); an older store gains it here
            self._db.execute("CREATE INDEX IF NOT EXISTS frames_content ON frames (content_hash)")
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
        """One write transaction; rolled back whole on any error.

        SQLite's own failures (a full disk, a read-only file or folder) become a `StoreError`
        naming the file.
        """
        try:
            self._db.execute("BEGIN IMMEDIATE")
            try:
                yield self._db
            except BaseException:
                if self._db.in_transaction:
                    self._db.execute("ROLLBACK")
                raise
            self._db.execute("COMMIT")
        except sqlite3.OperationalError as exc:
            if "locked" in str(exc) or "busy" in str(exc):
                raise
            msg = f"{self.path}: cannot write to the campaign store ({exc})"
            raise StoreError(msg) from exc

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
        values = (row["night"], row["frame"], os.path.abspath(row["path"]), row["content_hash"],
                  row.get("kind", "science"), plain_value(row.get("mjd_utc_mid"), None, "mjd"),
                  row.get("filter"), plain_value(row.get("exptime_s"), u.s, "exptime_s"),
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

    def claim_frame(self, night, frame, path, content_hash, *, holds_content, calibrated_for):
        """Decide, by content and full path, whose results the science file ``path`` continues.

        Call before the night's frames are listed (`add_frames`): results measured from the
        same content under another name follow a renamed or moved file (nothing is measured
        again), a second file of the same content is left out, and another file's results
        that hold ``frame`` are kept under that file's own name, never overwritten. One
        transaction.

        Parameters
        ----------
        night, frame : str
            The night and the name the file goes by in this run.
        path : str or path-like
            The file (stored as its full path).
        content_hash : str
            sha256 of the file's bytes.
        holds_content : callable
            ``holds_content(path, content_hash) -> bool``: whether a file still holds it.
        calibrated_for : callable
            ``calibrated_for(night, frame) -> path`` of a frame's calibrated file.

        Returns
        -------
        FrameClaim
            ``same_as``, ``moved_from``, ``set_aside`` and the calibrated files to rename
            (``calibrated_moves``, in order).
        """
        with self._write() as db:
            return claim_frame(db, night, frame, os.path.abspath(path), content_hash,
                               holds_content=holds_content, calibrated_for=calibrated_for)

    def add_calibrations(self, calibrations):
        """Insert or update master-calibration rows (keyed by path); return ``path -> id``."""
        with self._write() as db:
            return {str(c["path"]): self._upsert_calibration(db, c) for c in calibrations}

    @staticmethod
    def _upsert_calibration(db, row):
        values = (row.get("night", ""), row["kind"], row.get("filter"),
                  plain_value(row.get("exptime_s"), u.s, "exptime_s"), row.get("n_inputs"),
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
        frame_id : int or None
            None when the record holds no measurement rows and the frame's earlier
            measurements were kept.
        """
        where = f"{self.path}: frame {record.night}/{record.frame}"
        with self._write() as db:
            earlier = self._holds_measurements(db, record.night, record.frame)
            if earlier and not _has_rows(record.measurements):
                # a failed attempt never replaces what an earlier one measured
                for stage, reason in record.problems:
                    self._upsert_skipped(db, run_id, record.night, record.frame, stage, reason)
                return None
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
                       "nucleus": record.nucleus, "astrometry": record.astrometry,
                       "profiles": record.profile}
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
    def _holds_measurements(db, night, frame):
        return db.execute(
            "SELECT count(*) FROM measurements m JOIN frames f ON f.id = m.frame_id "
            "WHERE f.night = ? AND f.name = ?", (night, frame)).fetchone()[0] > 0

    def has_measurements(self, night, frame):
        """Whether ``night/frame`` holds measurement rows."""
        return self._holds_measurements(self._db, night, frame)

    def other_live_runs(self, run_id):
        """Runs of this host other than ``run_id`` still marked running by a live process."""
        host = socket.gethostname()
        rows = self._db.execute("SELECT id, pid FROM runs WHERE status = 'running' AND host = ? "
                                "AND id != ?", (host, run_id)).fetchall()
        return [rid for rid, pid in rows if pid is not None and _pid_alive(pid)]

    @staticmethod
    def _insert_rows(db, table, frame_id, data, where, facts):
        columns, one_per_frame = RESULT_TABLES[table]
        names = [c.name for c in columns]
        rows = list(table_rows(data))
        if one_per_frame and len(rows) > 1:
            msg = f"{where}: table {table!r} takes one row per frame, got {len(rows)}"
            raise ValueError(msg)
        key = ["frame_id"] if one_per_frame else ["frame_id", "row_index"]
        quoted = ", ".join(key + [f'"{n}"' for n in names])
        marks = ", ".join("?" for _ in key + names)
        sql = f"INSERT INTO {table} ({quoted}) VALUES ({marks})"
        for index, row in enumerate(rows):
            values = [plain_value(row.get(c.name, facts.get(c.name)), c.unit,
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
        """Return a stored table as a QTable with units (see `photpipe.store.export_table`)."""
        return export_table(self._db, self.path, name, night=night)

    def write_ecsv(self, name, path, *, night=None):
        """Write :meth:`export_table` ``(name, night=night)`` to ``path`` as ECSV, atomically.

        Returns
        -------
        path : `~pathlib.Path`
        """
        return write_table_atomic(self.export_table(name, night=night), path)

    def lightcurve(self, *, night=None):
        """Return the nucleus lightcurve of the campaign (see `photpipe.store.lightcurve`)."""
        return lightcurve(self._db, self.path, night=night)


def _has_rows(data):
    if data is None:
        return False
    try:
        return len(data) > 0
    except TypeError:
        return True


def _pid_alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True
