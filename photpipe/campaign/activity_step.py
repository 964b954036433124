"""The activity step of a campaign: ``[activity]`` settings -> Afρ trend and outbursts.

`run_activity_stage` fits the Afρ(r_h) trend before and after perihelion and searches for
outbursts from night to night (`photpipe.activity.analyse_activity`) and inside each night
(`photpipe.activity.find_night_outbursts`) on the campaign's measurement rows, following the
configured Afρ column (the coma alone by default), writes ``<results>/activity.json`` and
returns the analysis in memory for the report step.
"""

import json
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.activity import (
    DETECTION_SIGMA,
    FALLBACK_FLAG,
    NO_FIT_FLAG,
    NOT_DETECTED_FLAG,
    afrho_series,
    analyse_activity,
    comet_colour,
    find_night_outbursts,
)
from photpipe.config import read_activity

from .result_files import write_text

__all__ = ["ActivityOutcome", "run_activity_stage"]


@dataclass
class ActivityOutcome:
    """What the activity step found.

    Attributes
    ----------
    analysis : `~photpipe.activity.ActivityAnalysis` or None
        None when there was nothing to fit (``notes`` say why).
    night_outbursts : `~photpipe.activity.NightOutbursts` or None
        The within-night search on the same rows.
    settings : `~photpipe.config.ActivitySettings`
    notes : list of str
        What was done, warnings raised, and why nothing was fitted when so.
    path : str or None
        ``activity.json``, when written.
    filter : str or None
        The filter whose rows the trend follows (the most frequent one), None when the rows
        name no filter.
    colours : list of `~photpipe.activity.CometColour`
        The comet's colour against each other filter, in the trend's aperture.
    """

    analysis: object
    settings: object
    night_outbursts: object = None
    notes: list = field(default_factory=list)
    path: str | None = None
    filter: str | None = None
    colours: list = field(default_factory=list)

    @property
    def summary(self):
        """One line for the screen."""
        if self.analysis is None:
            return self.notes[-1] if self.notes else "no activity trend"
        n = len(self.analysis.outbursts)
        within = ("" if self.night_outbursts is None else
                  f"; {len(self.night_outbursts.outbursts)} inside a night")
        return (f"Afρ trend over {len(self.analysis.trend.nights)} night(s); {n} outburst(s) "
                f"from night to night{within}")


def _values(table, name, unit):
    col = table[name]
    if isinstance(col, u.Quantity):
        return col.to(unit)
    col_unit = getattr(col, "unit", None)
    values = np.asarray(col, dtype=float)
    return (values * col_unit).to(unit) if col_unit is not None else values * u.Unit(unit)


def _flagged(table, words):
    if "flags" not in table.colnames or not words:
        return np.zeros(len(table), dtype=bool)
    return np.array([bool({w.strip() for w in str(text).split(",")} & set(words))
                     for text in table["flags"]], dtype=bool)


def _perihelion(settings, rows, notes):
    if settings.perihelion_time is not None:
        notes.append(f"Perihelion {settings.perihelion_time.utc.iso[:16]} UTC "
                     f"(from {settings.perihelion_source}) splits the two branches.")
        return settings.perihelion_time
    time = Time(_values(rows, "mjd_utc_mid", u.day).value, format="mjd", scale="utc")
    perihelion = time[int(np.nanargmin(_values(rows, "r_h_au", u.au).value))]
    notes.append("No perihelion time was configured: the time of the smallest observed r_h "
                 f"({perihelion.utc.iso[:16]} UTC) splits the two branches.")
    return perihelion


def _filters(table):
    if "filter" not in table.colnames:
        return None
    return np.array([str(f).strip() for f in table["filter"]])


def one_filter(rows, notes):
    """The rows of the most frequent filter, and its name.

    Afρ differs between filters by the dust's colour, so nights observed in different filters
    would look like activity changes: the trend follows one filter and says so.
    """
    names = _filters(rows)
    if names is None or len(rows) == 0:
        return rows, None
    kinds, counts = np.unique(names, return_counts=True)
    main = str(kinds[int(np.argmax(counts))])
    if len(kinds) > 1:
        others = ", ".join(f"{k} ({c} rows)" for k, c in zip(kinds, counts, strict=True)
                           if k != main)
        notes.append(f"The trend follows filter {main} ({counts.max()} rows); the rows in "
                     f"{others} are left out of it (Afρ differs between filters by the "
                     "dust's colour).")
    return rows[names == main], main


def colours_in_aperture(rows, main, rho_km, notes):
    """The comet's colour ``main - other`` for each other filter, in the trend's aperture."""
    names = _filters(rows)
    if names is None or main is None or "mag" not in rows.colnames:
        return []
    rho = _values(rows, "rho_km", u.km).value
    near = np.isfinite(rho) & (np.abs(rho - rho_km) <= 0.01 * rho_km)
    out = []
    for other in sorted(set(names[near]) - {main}):
        sel = near & np.isin(names, [main, other])
        sub = rows[sel]
        colour = comet_colour(Time(_values(sub, "mjd_utc_mid", u.day).value, format="mjd"),
                              _values(sub, "mag", u.mag), _values(sub, "mag_err", u.mag),
                              names[sel], first=main, second=other)
        notes.append(colour.summary() + f", ρ = {rho_km:,.0f} km.")
        out.append(colour)
    return out


def fit_activity(measurements, settings, notes):
    """Fit the trend and search for outbursts on the rows not flagged ``exclude_flags``.

    The Afρ followed is ``settings.column`` (by default the coma alone at 0° phase; the total
    light on every row only when no row has a coma-only value, never mixed, see
    `photpipe.activity.afrho_series`). Outbursts are
    searched from night to night (`photpipe.activity.analyse_activity`) and inside each night
    (`photpipe.activity.find_night_outbursts`, on the trend's aperture).

    Returns
    -------
    analysis : `~photpipe.activity.ActivityAnalysis`
    within : `~photpipe.activity.NightOutbursts`
    counts : dict
        Rows that followed the total light's Afρ (``rows_total_light``), and rows left out with
        no nucleus fit (``rows_no_nucleus_fit``) or the coma not detected
        (``rows_coma_not_detected``).

    Raises
    ------
    ValueError
        If the measurements lack a column the fit needs.
    """
    for name in ("mjd_utc_mid", "r_h_au", "rho_km"):
        if name not in measurements.colnames:
            msg = f"the measurements table has no column {name!r}"
            raise ValueError(msg)
    flagged = _flagged(measurements, settings.exclude_flags)
    if np.any(flagged):
        notes.append(f"{np.count_nonzero(flagged)} measurement rows flagged "
                     f"{', '.join(settings.exclude_flags)} were left out of the trend.")
    rows, _ = one_filter(measurements[~flagged], notes)
    afrho, afrho_err, fallback = afrho_series(rows, column=settings.column)
    _say_left_out(fallback, settings.column, notes)
    perihelion = _perihelion(settings, rows, notes)
    time = Time(_values(rows, "mjd_utc_mid", u.day).value, format="mjd", scale="utc")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        analysis = analyse_activity(
            time, _values(rows, "r_h_au", u.au), afrho, afrho_err, perihelion_time=perihelion,
            rho=_values(rows, "rho_km", u.km), aperture=settings.aperture,
            sigma=settings.sigma, jump_sigma=settings.jump_sigma,
            quiet_sigma=settings.quiet_sigma, max_false_alarm=settings.max_false_alarm,
            method=settings.method, night_gap=settings.night_gap)
        within = find_night_outbursts(
            time, afrho, afrho_err, rho=_values(rows, "rho_km", u.km),
            aperture=analysis.trend.rho, max_false_alarm=settings.night_max_false_alarm,
            min_frames=settings.night_min_frames, night_gap=settings.night_gap)
    for w in caught:
        text = f"{w.category.__name__}: {w.message}"
        if text not in notes:
            notes.append(text)
    return analysis, within, {
        "rows_total_light": int(np.count_nonzero(fallback == FALLBACK_FLAG)),
        "rows_no_nucleus_fit": int(np.count_nonzero(fallback == NO_FIT_FLAG)),
        "rows_coma_not_detected": int(np.count_nonzero(fallback == NOT_DETECTED_FLAG))}


def _say_left_out(flags, column, notes):
    """Note the rows `afrho_series` set aside; stop when the coma is not detected at all."""
    n = len(flags)
    if np.any(flags == FALLBACK_FLAG):
        notes.append(f"No row has {column} (no nucleus fits): the total light's Afρ is "
                     f"followed on all {n} rows (flag {FALLBACK_FLAG}); it includes the nucleus.")
    n_fit = int(np.count_nonzero(flags == NO_FIT_FLAG))
    if n_fit:
        notes.append(f"{n_fit} of {n} rows have no {column} (no nucleus fit) and are left out: "
                     "the total light is not mixed with the coma alone.")
    n_faint = int(np.count_nonzero(flags == NOT_DETECTED_FLAG))
    with_value = n - n_fit
    if n_faint and 2 * n_faint > with_value:
        msg = (f"the coma is not detected: {n_faint} of {with_value} rows have {column} below "
               f"{DETECTION_SIGMA:g} times its error (flag {NOT_DETECTED_FLAG})")
        raise ValueError(msg)
    if n_faint:
        notes.append(f"{n_faint} of {with_value} rows have {column} below {DETECTION_SIGMA:g} "
                     f"times its error (coma not detected) and are left out of the trend and "
                     "outburst searches; the nights' values are then biased high a little.")


def _trend_note(settings):
    return (f"Trend: log10 Afρ against log10 r_h, one value per night, fitted with method "
            f"'{settings.method}' on each side of perihelion; outbursts are nights more than "
            f"{settings.sigma:g} σ above the trend with a sudden rise (> "
            f"{settings.jump_sigma:g} σ) from the night before and a campaign-wide "
            f"false-alarm chance below {settings.max_false_alarm:g}. "
            "Δm = -2.5 log10(Afρ/Afρ_trend) is the brightening of the dust in the aperture. "
            "Inside each night of at least "
            f"{settings.night_min_frames} frames, a step-plus-decay search on the frame series "
            "(likelihood ratio calibrated by simulating the night without an outburst) claims an "
            f"outburst when a quiet night would look as extreme with a chance below "
            f"{settings.night_max_false_alarm:g}.")


def run_activity_stage(config, measurements, out_dir):
    """Fit the campaign's activity trend and outbursts; write ``<out_dir>/activity.json``.

    Parameters
    ----------
    config : dict
        A configuration from `photpipe.config.load_config` (its ``[activity]`` section).
    measurements : `~astropy.table.Table` or None
        The campaign's measurement rows (``measurements.ecsv`` columns).
    out_dir : str or path-like
        Folder for ``activity.json``.

    Returns
    -------
    ActivityOutcome
        With ``analysis`` None (and a note) when there are no rows or the fit is not possible.

    Raises
    ------
    ConfigError
        For a bad ``[activity]`` value.
    """
    settings = read_activity(config)
    outcome = ActivityOutcome(None, settings)
    if measurements is None or len(measurements) == 0:
        outcome.notes.append("No measurements were found, so there is no activity trend yet.")
        return outcome
    try:
        outcome.analysis, outcome.night_outbursts, counts = fit_activity(
            measurements, settings, outcome.notes)
    except (ValueError, TypeError) as exc:
        outcome.notes.append(f"The activity trend could not be fitted: {exc}")
        # the result file says so too, so that no earlier run's trend stands in its place
        path = Path(out_dir) / "activity.json"
        write_text(path, json.dumps({"status": "not_fitted", "reason": str(exc),
                                     "afrho_column": settings.column}, indent=2) + "\n")
        outcome.path = str(path)
        return outcome
    outcome.notes.append(_trend_note(settings))
    kept = measurements[~_flagged(measurements, settings.exclude_flags)]
    _, outcome.filter = one_filter(kept, [])
    trend_rho = outcome.analysis.trend.rho
    if trend_rho is not None:
        outcome.colours = colours_in_aperture(kept, outcome.filter,
                                              float(trend_rho.to_value(u.km)), outcome.notes)
    payload = {"status": "fitted", **outcome.analysis.to_dict()}
    payload["filter"] = outcome.filter
    payload["colours"] = [c.to_dict() for c in outcome.colours]
    within = outcome.night_outbursts.to_dict()
    payload["outbursts_within_night"] = within.pop("outbursts")
    payload["within_night_search"] = within
    payload["afrho_column"] = settings.column
    payload.update(counts)
    payload["settings"] = {k: (v if isinstance(v, (int, float, str, type(None))) else str(v))
                           for k, v in settings.as_dict().items()}
    path = Path(out_dir) / "activity.json"
    write_text(path, json.dumps(payload, indent=2, default=str) + "\n")
    outcome.path = str(path)
    return outcome
