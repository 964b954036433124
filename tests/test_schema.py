"""The schema is the one source of column names and units, and the shared packages stay low."""

import ast
import pathlib

import pytest

from photpipe import schema
from photpipe.campaign import tasks
from photpipe.geometry._columns import GEOMETRY_COLUMNS as STAGE_GEOMETRY
from photpipe.nucleus import COMA_AFRHO_COLUMNS, NUCLEUS_COLUMNS
from photpipe.photometry import MEASUREMENT_COLUMNS

PACKAGE = pathlib.Path(schema.__file__).parent


def test_stage_column_lists_are_the_schema_s():
    # every measurement column is made by the photometry stage, by the nucleus stage's coma
    # Afρ, or by the frame task (the profile slope's error), in the schema's order
    made = set(MEASUREMENT_COLUMNS) | set(COMA_AFRHO_COLUMNS) | {"frame", "coma_slope_err"}
    assert made == {"frame"} | set(schema.column_names(schema.MEASUREMENT_COLUMNS))
    assert NUCLEUS_COLUMNS == ("frame",) + schema.column_names(schema.NUCLEUS_COLUMNS)


def test_renamings_come_from_the_schema():
    # the frame task stores the stages' columns under the schema's names, and every source
    # column the schema names exists in the geometry stage's table with a convertible unit
    assert tasks._GEOMETRY_MAP == schema.stage_names("geometry")
    assert tasks._STAR_MAP == schema.stage_names("stars")
    for col in schema.GEOMETRY_COLUMNS:
        assert col.source in STAGE_GEOMETRY, col.name
        assert STAGE_GEOMETRY[col.source].to(col.unit) == pytest.approx(1.0), col.name


def test_every_reported_column_has_a_label():
    # the report labels the per-frame tables' columns from the schema (column_label); the
    # field stars are exported, not reported
    for table in ("geometry", "zero_points", "measurements", "nucleus"):
        for col in schema.RESULT_TABLES[table][0]:
            assert col.name in schema.LABELS, col.name


def _photpipe_imports(path):
    tree = ast.parse(path.read_text())
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            names.add(node.module)
            names.update(f"{node.module}.{a.name}" for a in node.names)
    return {n for n in names if n.startswith("photpipe")}


@pytest.mark.parametrize("low", ["models", "schema.py"])
def test_shared_packages_import_nothing_above_them(low):
    target = PACKAGE / low
    files = sorted(target.rglob("*.py")) if target.is_dir() else [target]
    for path in files:
        assert _photpipe_imports(path) == set(), path


@pytest.mark.parametrize("stage", ["frames", "geometry", "photometry", "nucleus", "rotation",
                                   "activity", "size", "orbit", "scenario", "models"])
def test_stages_do_not_import_the_batch_run(stage):
    # data flows one way: a stage never imports the campaign, the store, the report, the
    # configuration or the commands
    upward = ("photpipe.campaign", "photpipe.store", "photpipe.report", "photpipe.config",
              "photpipe.cli")
    for path in sorted((PACKAGE / stage).rglob("*.py")):
        bad = [n for n in _photpipe_imports(path) if n.startswith(upward)]
        assert bad == [], (path, bad)
