"""Values as SQLite stores them: numbers in the schema's units, text, or NULL."""

import math

import numpy as np
from astropy import units as u

__all__ = ["plain_value", "table_rows"]


def plain_value(value, unit, where):
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
        return plain_value(value.reshape(()).item(), None, where)
    return value if isinstance(value, str) else str(value)


def table_rows(data):
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
