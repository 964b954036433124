"""The reduced lightcurve: nucleus magnitudes at unit distances and 0° phase, emission epochs."""

import warnings
from collections.abc import Mapping
from dataclasses import dataclass, field, replace

import numpy as np
from astropy import constants as const
from astropy import units as u
from astropy.table import QTable, Table
from astropy.time import Time

from photpipe._quantity import as_value
from photpipe.rotation.errors import LightcurveError, NoUsablePointsError, RotationWarning
from photpipe.rotation.phase_laws import PHASE_LAWS

__all__ = ["ReducedLightcurve", "reduce_lightcurve", "SOURCES"]

#: Values of the ``source`` column and whether they are free of coma light.
SOURCES = {"nucleus_fit": True, "small_aperture": False}

_AU_LIGHT_S = (const.au / const.c).to_value(u.s)


@dataclass(frozen=True)
class ReducedLightcurve:
    """Nucleus magnitudes reduced to r_h = Δ = 1 AU and 0° phase, at light-time-corrected epochs.

    Attributes
    ----------
    frame : ndarray of str
        Frame names.
    epoch_mjd : ndarray
        Emission epochs, MJD (UTC): mid-exposure minus the light time.
    mag, mag_err : ndarray
        Reduced magnitude ``m(1, 1, 0)`` and its 1-σ error.
    observed_mag : ndarray
        The magnitude as measured.
    phase_deg, r_h_au, delta_au : ndarray
        Geometry of each point.
    site, filter, source : ndarray of str
        Observing site, filter and origin (``"nucleus_fit"`` or ``"small_aperture"``).
    coma_contaminated : ndarray of bool
        True for small-aperture magnitudes, which hold coma light.
    flags : ndarray of str
        Comma-separated flags per point.
    phase_law : str
        Phase law used (a key of `~photpipe.rotation.phase_laws.PHASE_LAWS`).
    phase_parameters : dict
        Its parameters (``coefficient_mag_per_deg`` or ``slope_g``).
    set_aside : tuple of (str, str)
        ``(frame, reason)`` of every input row left out because it could not be used (no
        finite epoch or magnitude, a NaN or non-positive error on a detection, bad geometry).
    """

    frame: np.ndarray
    epoch_mjd: np.ndarray
    mag: np.ndarray
    mag_err: np.ndarray
    observed_mag: np.ndarray
    phase_deg: np.ndarray
    r_h_au: np.ndarray
    delta_au: np.ndarray
    site: np.ndarray
    filter: np.ndarray
    source: np.ndarray
    coma_contaminated: np.ndarray
    flags: np.ndarray
    phase_law: str = "linear"
    phase_parameters: dict = field(default_factory=dict)
    set_aside: tuple = ()

    def __post_init__(self):
        n = len(self.epoch_mjd)
        for name in ("frame", "mag", "mag_err", "observed_mag", "phase_deg", "r_h_au",
                     "delta_au", "site", "filter", "source", "coma_contaminated", "flags"):
            if len(getattr(self, name)) != n:
                msg = f"ReducedLightcurve: {name!r} has {len(getattr(self, name))} rows, not {n}"
                raise ValueError(msg)

    @property
    def n_points(self):
        """Number of points."""
        return len(self.epoch_mjd)

    @property
    def upper_limit(self):
        """True for the rows flagged ``upper_limit``: ``mag`` is then a bright limit, no value."""
        return np.array(["upper_limit" in str(f).split(",") for f in self.flags], dtype=bool)

    @property
    def set_aside_counts(self):
        """Reason -> number of input rows set aside for it."""
        counts = {}
        for _, reason in self.set_aside:
            counts[reason] = counts.get(reason, 0) + 1
        return counts

    @property
    def time(self):
        """Emission epochs as `~astropy.time.Time` (UTC)."""
        return Time(self.epoch_mjd, format="mjd", scale="utc")

    @property
    def coma_free(self):
        """True when no point holds coma light."""
        return not bool(np.any(self.coma_contaminated))

    def select(self, mask):
        """Return the lightcurve restricted to the points where ``mask`` is true."""
        mask = np.asarray(mask)
        arrays = {name: getattr(self, name)[mask] for name in (
            "frame", "epoch_mjd", "mag", "mag_err", "observed_mag", "phase_deg", "r_h_au",
            "delta_au", "site", "filter", "source", "coma_contaminated", "flags")}
        return replace(self, **arrays)

    def to_table(self):
        """Return the lightcurve as a QTable with units."""
        return QTable({
            "frame": self.frame, "epoch_mjd": self.epoch_mjd * u.day,
            "reduced_mag": self.mag * u.mag, "reduced_mag_err": self.mag_err * u.mag,
            "observed_mag": self.observed_mag * u.mag, "phase": self.phase_deg * u.deg,
            "r_h": self.r_h_au * u.au, "delta": self.delta_au * u.au, "site": self.site,
            "filter": self.filter, "source": self.source,
            "coma_contaminated": self.coma_contaminated, "flags": self.flags,
        }, meta={"phase_law": self.phase_law, **self.phase_parameters})


def _get(data, name, unit, *, required=True):
    """Return column ``name`` as floats in ``unit`` (plain numbers are taken as ``unit``)."""
    if name not in data.keys():
        if not required:
            return None
        msg = f"the lightcurve has no {name!r} column (columns: {sorted(data.keys())})"
        raise LightcurveError(msg)
    col = data[name]
    if isinstance(col, Time):
        return np.asarray(col.utc.mjd, dtype=float)
    if not isinstance(col, u.Quantity) and getattr(col, "unit", None) is not None:
        col = u.Quantity(col)
    try:
        return np.atleast_1d(as_value(col, unit, name, allow_dimensionless=True)).astype(float)
    except (TypeError, ValueError) as exc:
        msg = f"lightcurve column {name!r}: {exc}"
        raise LightcurveError(msg) from exc


def _strings(data, name, n, default):
    if name not in data.keys():
        return np.full(n, default, dtype=object)
    col = np.asarray(data[name])
    if np.ma.isMaskedArray(data[name]):
        col = np.ma.filled(data[name], default)
    return np.array([default if v is None else str(v) for v in col], dtype=object)


def _name_rows(frames, bad):
    names = [str(f) for f in frames[bad][:5]]
    more = f" and {bad.sum() - 5} more" if bad.sum() > 5 else ""
    return ", ".join(names) + more


def reduce_lightcurve(table_or_arrays, *, phase_law="linear",
                      phase_coefficient=0.035 * u.mag / u.deg, H_G_slope=0.15):  # noqa: N803
    """Reduce a campaign lightcurve to unit distances and 0° phase at emission epochs.

    Parameters
    ----------
    table_or_arrays : `~astropy.table.Table`, `~astropy.table.QTable` or mapping of arrays
        Columns ``frame, mjd_utc_mid, nucleus_mag, nucleus_mag_err, r_h_au, delta_au,
        phase_deg`` and, optionally, ``light_time_s, site, filter, source, flags`` (the
        ``lightcurve.ecsv`` contract). Plain columns are taken in the units their names give;
        Quantity columns are converted.
    phase_law : {"linear", "hg"}, optional
        Linear law with ``phase_coefficient``, or the IAU H,G system with ``H_G_slope``.
    phase_coefficient : `~astropy.units.Quantity` ['mag/angle'], optional
        Linear phase coefficient; 0.035 mag/deg is the mean for nuclei (Lamy et al. 2004,
        Comets II; from memory).
    H_G_slope : float, optional
        Slope parameter G of the H,G system (0.15 when unknown; Bowell et al. 1989).

    Returns
    -------
    reduced : ReducedLightcurve

    Raises
    ------
    LightcurveError
        If a column is missing or a ``source`` is unknown; the message names the frames.
    NoUsablePointsError
        (a `LightcurveError`) If there are no rows, or none can be used (rows with a value that
        is not finite, an error that is not positive, a distance that is not positive, are set
        aside with their reason, see ``set_aside``).
    TypeError
        If ``table_or_arrays`` is neither a table nor a mapping.

    Notes
    -----
    ``m(1, 1, 0) = m - 5 log10(r_h Δ) - Φ(α)``, with ``Φ(α) = β α`` (linear) or
    ``Φ(α) = -2.5 log10[(1 - G) Φ1 + G Φ2]`` (Bowell et al. 1989, Asteroids II, eq. A1).
    The epoch is the emission time ``t - Δ/c``: ``light_time_s`` when given, otherwise from Δ.
    Small-aperture magnitudes (``source = "small_aperture"``) hold coma light; they are kept but
    flagged ``coma_contaminated``. Rows flagged ``upper_limit`` are kept as limits (their
    ``nucleus_mag`` is the bright limit, their error may be NaN): the ``upper_limit`` property
    marks them, and the period search leaves them out.

    Examples
    --------
    >>> import numpy as np
    >>> data = {"frame": ["a", "b"], "mjd_utc_mid": [61000.0, 61000.1],
    ...         "nucleus_mag": [20.0, 20.2], "nucleus_mag_err": [0.05, 0.05],
    ...         "r_h_au": [2.0, 2.0], "delta_au": [1.0, 1.0], "phase_deg": [10.0, 10.0]}
    >>> lc = reduce_lightcurve(data)
    >>> np.round(lc.mag, 4)
    array([18.1449, 18.3449])
    """
    if not isinstance(table_or_arrays, (Table, Mapping)):
        msg = (f"reduce_lightcurve takes a Table, QTable or mapping of arrays, got "
               f"{type(table_or_arrays).__name__}")
        raise TypeError(msg)
    if phase_law not in PHASE_LAWS:
        msg = f"unknown phase_law {phase_law!r}; choose one of {sorted(PHASE_LAWS)}"
        raise ValueError(msg)
    beta = as_value(phase_coefficient, u.mag / u.deg, "phase_coefficient")
    cols, set_aside = _read_usable(table_or_arrays)
    source, contaminated = _sources(cols)
    params = ({"coefficient_mag_per_deg": beta} if phase_law == "linear"
              else {"slope_g": float(H_G_slope)})
    flags = _point_flags(cols["flags"], contaminated, cols["alpha"], phase_law)
    excess = PHASE_LAWS[phase_law](cols["alpha"], **params)
    reduced = cols["mag"] - 5 * np.log10(cols["r_h"] * cols["delta"]) - excess
    return ReducedLightcurve(
        frame=cols["frame"], epoch_mjd=_emission_epochs(cols), mag=reduced, mag_err=cols["err"],
        observed_mag=cols["mag"], phase_deg=cols["alpha"], r_h_au=cols["r_h"],
        delta_au=cols["delta"], site=cols["site"], filter=cols["filter"], source=source,
        coma_contaminated=contaminated, flags=flags, phase_law=phase_law,
        phase_parameters=params, set_aside=tuple(set_aside))


def _read_usable(data):
    """The lightcurve's columns as plain arrays, restricted to the usable rows.

    Returns the columns (a dict) and ``(frame, reason)`` of every row set aside.
    """
    mjd = _get(data, "mjd_utc_mid", u.day)
    n = mjd.size
    if n == 0:
        msg = "the lightcurve has no rows: there is nothing to reduce"
        raise NoUsablePointsError(msg)
    cols = {"frame": _strings(data, "frame", n, "?"), "mjd": mjd,
            "mag": _get(data, "nucleus_mag", u.mag), "err": _get(data, "nucleus_mag_err", u.mag),
            "r_h": _get(data, "r_h_au", u.au), "delta": _get(data, "delta_au", u.au),
            "alpha": _get(data, "phase_deg", u.deg),
            "light_time": _get(data, "light_time_s", u.s, required=False),
            "flags": _strings(data, "flags", n, ""),
            "source": _strings(data, "source", n, "nucleus_fit"),
            "site": _strings(data, "site", n, ""), "filter": _strings(data, "filter", n, "")}
    if cols["light_time"] is None:
        cols["light_time"] = np.full(n, np.nan)
    keep, set_aside = _usable_rows(cols["frame"], cols["flags"], cols["mjd"], cols["mag"],
                                   cols["err"], cols["r_h"], cols["delta"], cols["alpha"])
    return {k: v[keep] for k, v in cols.items()}, set_aside


def _emission_epochs(cols):
    """Emission epochs, MJD: mid-exposure minus the light time (from Δ where not given)."""
    from_delta = cols["delta"] * _AU_LIGHT_S
    light_time = np.where(np.isfinite(cols["light_time"]), cols["light_time"], from_delta)
    return cols["mjd"] - light_time / 86400.0


def _sources(cols):
    """The ``source`` of each point and whether it holds coma light (unknown ones refused)."""
    source = cols["source"]
    unknown = ~np.isin(source, list(SOURCES))
    if np.any(unknown):
        msg = (f"unknown 'source' {sorted(set(source[unknown]))} in rows "
               f"{_name_rows(cols['frame'], unknown)}; expected one of {sorted(SOURCES)}")
        raise LightcurveError(msg)
    return source, np.array([not SOURCES[s] for s in source], dtype=bool)


def _point_flags(flags_in, contaminated, alpha, phase_law):
    """The input flags plus ``coma_contaminated`` and, for H,G beyond 120°, ``phase_beyond_hg``."""
    extra = [["coma_contaminated"] if c else [] for c in contaminated]
    if phase_law == "hg":
        for words, a in zip(extra, alpha):
            if a > 120:
                words.append("phase_beyond_hg")
    return np.array([",".join([f for f in (fl, *words) if f])
                     for fl, words in zip(flags_in, extra)], dtype=object)


#: Nucleus-fit flags that leave the nucleus out (NaN magnitude), with the reason in words.
_LEFT_OUT = {"core_masked": "the core's pixels are unusable",
             "no_error": "the fit gave no usable error"}


def _usable_rows(frames, flags, mjd, mag, err, r_h, delta, alpha):
    """Rows that can be used, and ``(frame, reason)`` for the others (warned, never refused)."""
    n = len(frames)
    limit = np.array(["upper_limit" in str(f).split(",") for f in flags], dtype=bool)
    words = [set(str(f).split(",")) for f in flags]
    # a nucleus the fit left out says why (its flag), not only that the magnitude is NaN
    left_out = [(np.array([w in ws for ws in words], dtype=bool) & ~np.isfinite(mag),
                 f"nucleus left out by the fit ({w}: {_LEFT_OUT[w]})") for w in _LEFT_OUT]
    checks = [
        (~np.isfinite(mjd), "no finite epoch (mjd_utc_mid)"),
        *left_out,
        (~np.isfinite(mag), "no finite magnitude (nucleus_mag)"),
        (~limit & ~np.isfinite(err), "NaN or infinite magnitude error (nucleus_mag_err)"),
        (~limit & np.isfinite(err) & (err <= 0), "zero or negative magnitude error "
                                                 "(nucleus_mag_err)"),
        (~(np.isfinite(r_h) & (r_h > 0)) | ~(np.isfinite(delta) & (delta > 0)),
         "missing or non-positive r_h_au or delta_au"),
        (~(np.isfinite(alpha) & (alpha >= 0) & (alpha < 180)), "phase angle outside 0-180°"),
    ]
    keep, set_aside = _set_aside_bad_rows(frames, checks)
    if not np.any(keep):
        reasons = sorted({r for _, r in set_aside})
        msg = (f"none of the {n} lightcurve rows can be used ({'; '.join(reasons)}): "
               f"{_name_rows(frames, ~keep)}. Repair them; a period cannot be weighed on such "
               f"points")
        raise NoUsablePointsError(msg)
    if set_aside:
        warnings.warn(f"{len(set_aside)} of {n} lightcurve rows set aside: "
                      + "; ".join(f"{c} with {r}" for r, c in _count(set_aside).items()),
                      RotationWarning, stacklevel=3)
    return keep, set_aside


def _set_aside_bad_rows(frames, checks):
    """Return the rows that pass every check and ``(frame, reason)`` for the others."""
    keep = np.ones(len(frames), dtype=bool)
    set_aside = []
    for bad, reason in checks:
        newly = bad & keep
        set_aside += [(str(f), reason) for f in frames[newly]]
        keep &= ~bad
    return keep, set_aside


def _count(set_aside):
    counts = {}
    for _, reason in set_aside:
        counts[reason] = counts.get(reason, 0) + 1
    return counts
