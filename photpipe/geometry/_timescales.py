"""TDB Julian dates of many epochs, quickly and without network access."""

import erfa
import numpy as np
from scipy.interpolate import CubicSpline

from photpipe.geometry._offline import offline_earth_orientation

__all__ = ["tdb_parts"]

#: Grid step (days) for TDB - TT when many epochs are converted. Its largest term is the annual
#: 1.657 ms (Fairhead & Bretagnon 1990); a cubic spline at 0.25 d leaves < 1e-12 s.
_STEP_DAYS = 0.25


def _dtdb_seconds(jd1, jd2):
    # geocentric observer: the diurnal terms (~2 microseconds) are not needed for geometry
    return erfa.dtdb(jd1, jd2, 0.0, 0.0, 0.0, 0.0)


def tdb_parts(times):
    """Return the two-part TDB Julian date (jd1, jd2) of ``times`` as 1-d float arrays.

    Notes
    -----
    TT comes from astropy (leap seconds from the bundled table); TDB = TT + ΔT_DB(TT) with
    ΔT_DB from ``erfa.dtdb`` (Fairhead & Bretagnon 1990 series, as astropy uses), evaluated on a
    regular grid and spline-interpolated when there are many epochs, directly otherwise.
    """
    if times.scale == "tdb":
        return np.atleast_1d(times.jd1).astype(float), np.atleast_1d(times.jd2).astype(float)
    if times.scale in ("tcb", "tcg"):
        with offline_earth_orientation():
            t = times.tdb
        return np.atleast_1d(t.jd1).astype(float), np.atleast_1d(t.jd2).astype(float)
    with offline_earth_orientation():
        tt = times.tt
    jd1 = np.atleast_1d(tt.jd1).astype(float)
    jd2 = np.atleast_1d(tt.jd2).astype(float)
    base = np.floor(jd1.min())
    x = (jd1 - base) + jd2
    lo, hi = np.floor(x.min() / _STEP_DAYS) - 1, np.floor(x.max() / _STEP_DAYS) + 2
    n_nodes = int(hi - lo) + 1
    if x.size < 4 * n_nodes:
        dt = _dtdb_seconds(jd1, jd2)
    else:
        nodes = (lo + np.arange(n_nodes)) * _STEP_DAYS
        dt = CubicSpline(nodes, _dtdb_seconds(np.full(n_nodes, base), nodes))(x)
    return jd1, jd2 + dt / 86400.0
