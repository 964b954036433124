"""Which Afρ the activity stage follows: the coma alone where the nucleus is fitted.

Afρ of all the light in the aperture (A'Hearn et al. 1984, AJ 89, 579) includes the nucleus,
whose share changes with rotation, geometry and seeing; the dust trend and the outburst search
want the coma alone (``a0frho_coma_cm``, the fitted nucleus taken out of the aperture). Where a
frame has no coma-only value (no nucleus fit), the total is used for that row and the row says
so (flag ``total_light``), so one frame without a nucleus fit is not lost and is not mistaken
for the coma.
"""

import numpy as np
from astropy import units as u

__all__ = ["AFRHO_COLUMNS", "FALLBACK_FLAG", "afrho_series"]

#: Column choices and the total-light column each falls back to (None: no fallback).
AFRHO_COLUMNS = {
    "a0frho_coma_cm": "a0frho_cm",
    "afrho_coma_cm": "afrho_cm",
    "a0frho_cm": None,
    "afrho_cm": None,
}
#: Flag of a row whose coma-only Afρ was missing, so the total light's is used.
FALLBACK_FLAG = "total_light"


def _values(table, name):
    col = table[name]
    unit = getattr(col, "unit", None)
    data = np.asarray(getattr(col, "value", col), dtype=float)
    if unit is not None and unit != u.dimensionless_unscaled:
        data = (data * unit).to_value(u.cm)
    return data


def afrho_series(measurements, *, column="a0frho_coma_cm"):
    """Afρ and its error per row from the chosen column, falling back to the total light.

    Parameters
    ----------
    measurements : `~astropy.table.Table` or `~astropy.table.QTable`
        Rows of the ``measurements.ecsv`` contract (values in cm, with or without units).
    column : {"a0frho_coma_cm", "afrho_coma_cm", "a0frho_cm", "afrho_cm"}
        The Afρ to follow (default the coma alone at 0° phase). The error column is the same
        name with ``_err`` before ``_cm``.

    Returns
    -------
    afrho, afrho_err : `~astropy.units.Quantity` ['length']
        Per row, in cm; NaN where neither the column nor its fallback has a value.
    flags : ndarray of str
        ``total_light`` on rows that used the fallback, else empty.

    Raises
    ------
    ValueError
        For an unknown column, or a table holding neither the column nor its fallback.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy.table import Table
    >>> t = Table({"a0frho_cm": [120.0, 130.0], "a0frho_err_cm": [3.0, 3.0],
    ...            "a0frho_coma_cm": [100.0, np.nan], "a0frho_coma_err_cm": [4.0, np.nan]})
    >>> a, e, f = afrho_series(t)
    >>> a.value.tolist(), f.tolist()
    ([100.0, 130.0], ['', 'total_light'])
    """
    if column not in AFRHO_COLUMNS:
        msg = f"unknown Afρ column {column!r}; choose one of {list(AFRHO_COLUMNS)}"
        raise ValueError(msg)
    fallback = AFRHO_COLUMNS[column]
    err_name = column.replace("_cm", "_err_cm")
    n = len(measurements)
    names = set(measurements.colnames)
    if column in names and err_name in names:
        a, e = _values(measurements, column), _values(measurements, err_name)
    elif fallback is not None and fallback in names:
        a, e = np.full(n, np.nan), np.full(n, np.nan)
    else:
        msg = f"measurements have no {column!r}/{err_name!r} columns"
        raise ValueError(msg)
    flags = np.full(n, "", dtype=f"<U{len(FALLBACK_FLAG)}")
    if fallback is not None and fallback in names:
        missing = ~(np.isfinite(a) & (a > 0) & np.isfinite(e) & (e > 0))
        fb_err = fallback.replace("_cm", "_err_cm")
        a = np.where(missing, _values(measurements, fallback), a)
        e = np.where(missing, _values(measurements, fb_err), e)
        flags[missing & np.isfinite(a)] = FALLBACK_FLAG
    return a * u.cm, e * u.cm, flags
