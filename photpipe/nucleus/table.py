"""The per-frame nucleus table (the ``nucleus.ecsv`` contract) built from fits."""

import numpy as np
from astropy.table import QTable

from photpipe import schema

from .result import NUCLEUS_COLUMNS

__all__ = ["nucleus_table"]

_UNITS = {c.name: schema.table_unit(c) for c in schema.NUCLEUS_COLUMNS
          if schema.table_unit(c) is not None}


def nucleus_table(fits):
    """One row per frame, the columns of ``nucleus.ecsv`` with units.

    Parameters
    ----------
    fits : iterable of NucleusFit

    Returns
    -------
    `~astropy.table.QTable`

    Notes
    -----
    ``coma_k`` is K of Σ = K ρ^-γ with ρ in pixels and Σ in electron/s per pixel. For rows
    flagged ``upper_limit``, ``nucleus_flux_e_s`` is the upper limit, ``nucleus_mag`` the
    corresponding bright limit and ``nucleus_mag_err`` is NaN.

    Examples
    --------
    >>> t = nucleus_table([])
    >>> t.colnames[:3], len(t)
    (['frame', 'mjd_utc_mid', 'nucleus_mag'], 0)
    """
    rows = [f.to_row() for f in fits]
    cols = {}
    for name in NUCLEUS_COLUMNS:
        vals = [r[name] for r in rows]
        if name in ("frame", "method", "flags"):
            cols[name] = np.array(vals, dtype=str) if vals else np.array([], dtype=str)
        else:
            arr = np.array(vals, dtype=float)
            cols[name] = arr * _UNITS[name] if name in _UNITS else arr
    return QTable(cols)
