"""The campaign store's SQL, made from the schema (`photpipe.schema`, the one source of columns).

`photpipe.schema` names every table's columns, units and labels; this module turns them into the
statements that create the store's tables, and re-exports the schema for the store and the
report.
"""

from photpipe.schema import (
    LABELS,
    NAMING_RULE,
    RESULT_TABLES,
    SCHEMA_VERSION,
    TABLES,
    Column,
    column_label,
    column_unit,
)

__all__ = ["SCHEMA_VERSION", "Column", "TABLES", "RESULT_TABLES", "schema_sql", "column_unit",
           "LABELS", "column_label", "NAMING_RULE"]


def _result_table_sql(name, columns, one_per_frame):
    cols = ",\n  ".join(f'"{c.name}" {c.sql}' for c in columns)
    if one_per_frame:
        key = "frame_id INTEGER PRIMARY KEY REFERENCES frames(id) ON DELETE CASCADE"
        return f"CREATE TABLE IF NOT EXISTS {name} (\n  {key},\n  {cols}\n);"
    key = ("frame_id INTEGER NOT NULL REFERENCES frames(id) ON DELETE CASCADE,\n"
           "  row_index INTEGER NOT NULL")
    return (f"CREATE TABLE IF NOT EXISTS {name} (\n  {key},\n  {cols},\n"
            f"  PRIMARY KEY (frame_id, row_index)\n);")


def schema_sql():
    """Return the SQL statements that create the store's tables (idempotent).

    Returns
    -------
    statements : list of str
        ``CREATE TABLE IF NOT EXISTS`` / ``CREATE INDEX IF NOT EXISTS`` statements.
    """
    statements = [
        "CREATE TABLE IF NOT EXISTS schema_version (version INTEGER NOT NULL);",
        """CREATE TABLE IF NOT EXISTS runs (
  id INTEGER PRIMARY KEY AUTOINCREMENT,
  started TEXT NOT NULL,
  ended TEXT,
  status TEXT NOT NULL CHECK (status IN ('running', 'completed', 'failed', 'interrupted')),
  config_text TEXT NOT NULL,
  config_hash TEXT NOT NULL,
  software_version TEXT NOT NULL,
  host TEXT,
  pid INTEGER
);""",
        """CREATE TABLE IF NOT EXISTS frames (
  id INTEGER PRIMARY KEY,
  night TEXT NOT NULL,
  name TEXT NOT NULL,
  path TEXT NOT NULL,
  content_hash TEXT NOT NULL,
  kind TEXT NOT NULL,
  mjd_utc_mid REAL,
  filter TEXT,
  exptime_s REAL,
  site TEXT,
  UNIQUE (night, name)
);""",
        """CREATE TABLE IF NOT EXISTS calibrations (
  id INTEGER PRIMARY KEY,
  night TEXT NOT NULL,
  kind TEXT NOT NULL,
  filter TEXT,
  exptime_s REAL,
  n_inputs INTEGER,
  path TEXT NOT NULL UNIQUE,
  content_hash TEXT
);""",
        """CREATE TABLE IF NOT EXISTS frame_calibrations (
  frame_id INTEGER NOT NULL REFERENCES frames(id) ON DELETE CASCADE,
  calibration_id INTEGER NOT NULL REFERENCES calibrations(id) ON DELETE CASCADE,
  PRIMARY KEY (frame_id, calibration_id)
);""",
        # The marker that a frame's results are complete: written last, in the same transaction.
        """CREATE TABLE IF NOT EXISTS frame_results (
  frame_id INTEGER PRIMARY KEY REFERENCES frames(id) ON DELETE CASCADE,
  run_id INTEGER NOT NULL REFERENCES runs(id),
  content_hash TEXT NOT NULL,
  config_hash TEXT NOT NULL,
  stages TEXT NOT NULL,
  calibrated_path TEXT
);""",
        """CREATE TABLE IF NOT EXISTS skipped (
  id INTEGER PRIMARY KEY,
  night TEXT NOT NULL,
  item TEXT NOT NULL,
  stage TEXT NOT NULL,
  reason TEXT NOT NULL,
  run_id INTEGER REFERENCES runs(id),
  UNIQUE (night, item, stage)
);""",
    ]
    for name, (columns, one_per_frame) in RESULT_TABLES.items():
        statements.append(_result_table_sql(name, columns, one_per_frame))
    statements.append("CREATE INDEX IF NOT EXISTS frames_night ON frames (night);")
    return statements
