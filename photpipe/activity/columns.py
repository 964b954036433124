"""Which Afρ the activity stage follows: the coma alone where the nucleus is fitted.

Afρ of all the light in the aperture (A'Hearn et al. 1984, AJ 89, 579) includes the nucleus,
whose share changes with rotation, geometry and seeing; the dust trend and the outburst search
want the coma alone (``a0frho_coma_cm``, the fitted nucleus taken out of the aperture).

The two are never mixed in one series: the total light is larger by the nucleus's share, so a
series switching between them would show steps that are not the comet's. Where no row has a
coma-only value (no nucleus fits at all) the total light is followed, every row flagged
``total_light``; where some rows lack it, those rows are left out (flag ``no_nucleus_fit``).
A coma-only value below `DETECTION_SIGMA` times its error (zero or negative for a bare nucleus)
is a coma not detected (flag ``coma_not_detected``): its logarithm, on which the trend and the
outburst searches work, means nothing, so it is left out of them and counted.
"""

import numpy as np
from astropy import units as u

__all__ = ["AFRHO_COLUMNS", "DETECTION_SIGMA", "FALLBACK_FLAG", "NOT_DETECTED_FLAG",
           "NO_FIT_FLAG", "afrho_series"]

#: Column choices and the total-light column each falls back to (None: no fallback).
AFRHO_COLUMNS = {
    "a0frho_coma_cm": "a0frho_cm",
    "afrho_coma_cm": "afrho_cm",
    "a0frho_cm": None,
    "afrho_cm": None,
}
#: Flag of every row when no row has a coma-only Afρ, so the total light's is used.
FALLBACK_FLAG = "total_light"
#: Flag of a row left out because it has no coma-only Afρ while other rows have one.
NO_FIT_FLAG = "no_nucleus_fit"
#: Flag of a row whose coma-only Afρ is below `DETECTION_SIGMA` times its error.
NOT_DETECTED_FLAG = "coma_not_detected"
#: A coma-only Afρ counts as a detection above this many times its error (common practice).
DETECTION_SIGMA = 3.0


def _values(table, name):
    col = table[name]
    unit = getattr(col, "unit", None)
    data = np.asarray(getattr(col, "value", col), dtype=float)
    if unit is not None and unit != u.dimensionless_unscaled:
        data = (data * unit).to_value(u.cm)
    return data


def afrho_series(measurements, *, column="a0frho_coma_cm"):
    """Afρ and its error per row from the chosen column, or from the total light throughout.

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
        Per row, in cm; NaN on rows to leave out (flagged ``no_nucleus_fit`` or
        ``coma_not_detected``) and where there is no value at all.
    flags : ndarray of str
        ``total_light`` on every row when the total light is followed, ``no_nucleus_fit`` or
        ``coma_not_detected`` on rows left out, else empty.

    Raises
    ------
    ValueError
        For an unknown column, or a table holding neither the column nor its fallback.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy.table import Table
    >>> t = Table({"a0frho_cm": [120.0, 130.0, 9.0], "a0frho_err_cm": [3.0, 3.0, 1.0],
    ...            "a0frho_coma_cm": [100.0, np.nan, -0.2],
    ...            "a0frho_coma_err_cm": [4.0, np.nan, 1.0]})
    >>> a, e, f = afrho_series(t)
    >>> a.value.tolist()[0], f.tolist()
    (100.0, ['', 'no_nucleus_fit', 'coma_not_detected'])
    >>> t["a0frho_coma_cm"] = [np.nan] * 3
    >>> afrho_series(t)[0].value.tolist()
    [120.0, 130.0, 9.0]
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
    width = max(len(FALLBACK_FLAG), len(NO_FIT_FLAG), len(NOT_DETECTED_FLAG))
    flags = np.full(n, "", dtype=f"<U{width}")
    has = np.isfinite(a) & np.isfinite(e) & (e > 0)
    if fallback is None:
        return a * u.cm, e * u.cm, flags
    if not np.any(has) and fallback in names:
        a = _values(measurements, fallback)
        e = _values(measurements, fallback.replace("_cm", "_err_cm"))
        flags[np.isfinite(a)] = FALLBACK_FLAG
        return a * u.cm, e * u.cm, flags
    flags[~has] = NO_FIT_FLAG
    faint = has & (a < DETECTION_SIGMA * e)
    flags[faint] = NOT_DETECTED_FLAG
    leave_out = ~has | faint
    a = np.where(leave_out, np.nan, a)
    e = np.where(leave_out, np.nan, e)
    return a * u.cm, e * u.cm, flags
