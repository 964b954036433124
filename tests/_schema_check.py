"""A check shared by the stages' tests: a table's columns are the schema's, with its units."""

import pytest
from astropy import units as u

from photpipe import schema


def assert_in_schema(table, columns, name):
    """Every column of a stage's table is in the schema's ``columns`` with the schema's unit."""
    by_name = {c.name: c for c in columns}
    for col in table.colnames:
        if col == "frame":
            continue
        assert col in by_name, f"{name}: {col!r} is not in the schema"
        unit = getattr(table[col], "unit", None)
        expected = schema.table_unit(by_name[col])
        if expected is None:
            assert unit is None or unit == u.dimensionless_unscaled, (name, col, unit)
        else:
            assert unit is not None and unit.is_equivalent(expected), (name, col, unit)
            assert unit.to(expected) == pytest.approx(1.0), (name, col, unit)
