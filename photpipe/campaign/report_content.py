"""The content of the ``photpipe report`` page: activity fit, tables, summary and figures.

Each piece is built from the campaign's tables and the checked ``[activity]`` settings
(`photpipe.campaign.activity_settings`); `photpipe.campaign.report` lays them out as HTML.
"""

import warnings

import numpy as np
from astropy import units as u
from astropy.table import QTable, Table
from astropy.time import Time

__all__ = ["column_values", "fit_activity", "result_tables", "summary_items", "draw_figures"]


def column_values(table, name, unit=None):
    """Return column ``name`` as a Quantity in ``unit`` (plain columns are taken in ``unit``).

    Without ``unit``: the Quantity as it is, or plain floats.
    """
    col = table[name]
    if isinstance(col, u.Quantity):
        return col.to(unit) if unit is not None else col
    values = np.asarray(col, dtype=float)
    if unit is None:
        return values
    col_unit = getattr(col, "unit", None)
    return (values * col_unit).to(unit) if col_unit is not None else values * u.Unit(unit)


def _flag_mask(table, words):
    if "flags" not in table.colnames or not words:
        return np.zeros(len(table), dtype=bool)
    out = np.zeros(len(table), dtype=bool)
    for i, text in enumerate(np.asarray(table["flags"]).astype(str)):
        out[i] = bool(set(w.strip() for w in text.split(",")) & set(words))
    return out


def _one_row(d, keys):
    keys = [k for k in keys if k in d]
    return Table(rows=[[d[k] if d[k] is not None else "" for k in keys]], names=keys) \
        if keys else Table()


def _trend_table(trend):
    t = trend.to_table()
    keep = ["branch", "k", "k_err", "log10_afrho_1au_cm", "scatter_dex", "chi2", "dof",
            "n_nights", "n_frames", "r_h_min", "r_h_max", "time_first", "time_last", "flags"]
    return t[keep]


def _nights_table(trend, outburst_nights):
    n = trend.nights
    t = QTable()
    t["night (UTC)"] = n["time"]
    t["branch"] = n["branch"]
    t["r_h"] = n["r_h"]
    t["frames"] = n["n_frames"]
    t["Afρ"] = n["afrho"]
    t["Afρ error"] = n["afrho_err"]
    t["trend"] = n["afrho_trend"]
    t["Δm from trend"] = -2.5 * np.asarray(n["residual_dex"]) * u.mag
    t["σ above trend"] = n["significance"]
    t["in fit"] = n["used"]
    t["outburst"] = outburst_nights
    return t


def _outburst_table(outbursts):
    keep = ["onset_after", "onset_before", "r_h", "delta_mag", "delta_mag_err", "significance",
            "jump_significance", "false_alarm", "peak_delta_mag", "n_nights", "branch", "flags"]
    return outbursts[keep]


def fit_activity(measurements, settings, notes):
    """Fit the Afρ(r_h) trend and search for outbursts (`photpipe.activity.analyse_activity`).

    Rows flagged with ``settings["exclude_flags"]`` are left out; what was done and every
    warning raised are appended to ``notes``.

    Raises
    ------
    ValueError
        If the measurements lack a column the fit needs.
    """
    from photpipe.activity import analyse_activity

    column = settings["column"]
    err_column = column.replace("_cm", "_err_cm")
    for name in ("mjd_utc_mid", "r_h_au", "rho_km", column, err_column):
        if name not in measurements.colnames:
            msg = f"the measurements table has no column {name!r}"
            raise ValueError(msg)
    flagged = _flag_mask(measurements, settings["exclude_flags"])
    if np.any(flagged):
        notes.append(f"{np.count_nonzero(flagged)} measurement rows flagged "
                     f"{', '.join(settings['exclude_flags'])} were left out of the trend.")
    rows = measurements[~flagged]
    time = Time(column_values(rows, "mjd_utc_mid", u.day).value, format="mjd", scale="utc")
    perihelion = settings["perihelion_time"]
    if perihelion is None:
        rh = column_values(rows, "r_h_au", u.au).value
        perihelion = time[int(np.nanargmin(rh))]
        notes.append("No perihelion time was configured: the time of the smallest observed r_h "
                     f"({perihelion.utc.iso[:16]} UTC) splits the two branches.")
    else:
        notes.append(f"Perihelion {perihelion.utc.iso[:16]} UTC "
                     f"(from {settings['perihelion_source']}) splits the two branches.")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        analysis = analyse_activity(
            time, column_values(rows, "r_h_au", u.au), column_values(rows, column, u.cm),
            column_values(rows, err_column, u.cm), perihelion_time=perihelion,
            rho=column_values(rows, "rho_km", u.km), aperture=settings["aperture"],
            sigma=settings["sigma"], jump_sigma=settings["jump_sigma"],
            quiet_sigma=settings["quiet_sigma"], max_false_alarm=settings["max_false_alarm"],
            method=settings["method"], night_gap=settings["night_gap"])
    for w in caught:
        text = f"{w.category.__name__}: {w.message}"
        if text not in notes:
            notes.append(text)
    return analysis


def summary_items(config, measurements, nucleus, analysis, extra, settings):
    """Return the page's summary as readable label -> text (or number) items."""
    s = {"campaign": config["campaign"].get("name", "unnamed campaign")}
    if measurements is not None and len(measurements):
        mjd = column_values(measurements, "mjd_utc_mid", u.day).value
        frames = np.unique(np.asarray(measurements["frame"]).astype(str))
        s["frames measured"] = int(frames.size)
        s["measurement rows"] = len(measurements)
        s["first frame (UTC)"] = Time(np.nanmin(mjd), format="mjd").utc.iso[:16]
        s["last frame (UTC)"] = Time(np.nanmax(mjd), format="mjd").utc.iso[:16]
        rh = column_values(measurements, "r_h_au", u.au).value
        s["r_h covered"] = f"{np.nanmin(rh):.3f} – {np.nanmax(rh):.3f} au"
        if "elong_deg" in measurements.colnames:
            s["smallest solar elongation"] = \
                f"{np.nanmin(column_values(measurements, 'elong_deg', u.deg).value):.1f}°"
    if nucleus is not None:
        s["nucleus fits"] = len(nucleus)
    if analysis is not None:
        trend = analysis.trend
        s["nights"] = len(trend.nights)
        if trend.rho is not None:
            s["aperture used"] = f"ρ = {trend.rho.to_value(u.km):g} km ({settings['column']})"
        for b in trend.branches:
            label = "before perihelion" if b.name == "pre" else "after perihelion"
            s[f"Afρ ∝ r_h^k {label}"] = (
                f"k = {b.k:.2f} ± {b.k_err:.2f} ({b.n_nights} nights, r_h "
                f"{b.r_h_min.to_value(u.au):.2f}–{b.r_h_max.to_value(u.au):.2f} au)")
        s["outbursts found"] = len(analysis.outbursts)
        for i, row in enumerate(analysis.outbursts):
            s[f"outburst {i + 1}"] = (
                f"Δm = {row['delta_mag'].to_value(u.mag):+.2f} ± "
                f"{row['delta_mag_err'].to_value(u.mag):.2f} mag, began between "
                f"{row['onset_after'].utc.iso[:16]} and {row['onset_before'].utc.iso[:16]} UTC")
    rot = extra.get("rotation")
    if rot and rot.get("period_h") is not None:
        err = rot.get("period_err_h")
        s["rotation period"] = (f"{rot['period_h']:.3f} h" if err is None
                                else f"{rot['period_h']:.3f} ± {err:.3f} h")
    size = extra.get("size")
    if size and size.get("radius_km") is not None:
        s["nucleus radius"] = (f"{size['radius_km']:.2f} km (albedo {size.get('albedo')}, "
                               f"range {size.get('radius_lo_km')}–{size.get('radius_hi_km')} km)")
    return s


def _figure_column(measurements, column):
    """The Afρ column the figures draw: the configured one, its total-light one when absent."""
    from photpipe.activity import AFRHO_COLUMNS

    if column in measurements.colnames or AFRHO_COLUMNS.get(column) is None:
        return column
    return AFRHO_COLUMNS[column]


def draw_figures(measurements, nucleus, analysis, settings, notes):
    """Draw the campaign figures there is data for; return (figures, captions) by name.

    A figure that fails is left out and the reason appended to ``notes``.
    """
    from photpipe.campaign import figures as F

    peri = analysis.trend.perihelion_time if analysis is not None else None
    jobs = {}
    settings = {**settings, "column": _figure_column(measurements, settings["column"])}
    if analysis is not None:
        jobs["activity_time"] = ("Afρ against time: frames, night means and the power-law "
                                 "trend; outburst onset brackets shaded.",
                                 lambda: F.afrho_time_figure(
                                     measurements, trend=analysis.trend,
                                     outbursts=analysis.outbursts, column=settings["column"]))
        jobs["activity_rh"] = ("Afρ against r_h on log axes with the fitted index k of each "
                               "branch (A'Hearn et al. 1995 power-law description).",
                               lambda: F.afrho_rh_figure(measurements, trend=analysis.trend,
                                                         column=settings["column"]))
        jobs["outbursts"] = ("Night departures from the trend in magnitudes and the detection "
                             "level.", lambda: F.outburst_figure(
                                 analysis.trend, analysis.outbursts, sigma=settings["sigma"]))
    if nucleus is not None and len(nucleus):
        jobs["nucleus"] = ("Nucleus magnitude per frame from the nucleus + coma fit.",
                           lambda: F.nucleus_lightcurve_figure(nucleus, perihelion_time=peri))
    if measurements is not None and len(measurements):
        jobs["coma_slope"] = ("Coma profile slope per frame; -1 is a steady-state coma.",
                              lambda: F.coma_slope_figure(measurements, perihelion_time=peri))
        jobs["quality"] = ("Zero point, reference stars and FWHM per frame (data-quality "
                           "check).", lambda: F.quality_figure(measurements, nucleus))
    figures, captions = {}, {}
    for name, (caption, build) in jobs.items():
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # a figure's drawing warnings are not results
                figures[name] = build()
            captions[name] = caption
        except Exception as exc:  # noqa: BLE001 - one figure failing keeps the page
            notes.append(f"Figure {name!r} could not be drawn: {type(exc).__name__}: {exc}")
    return figures, captions


def result_tables(analysis, extra):
    """Return the page's tables (name -> table): trend, outbursts, nights, rotation, size."""
    tables = {}
    if analysis is not None:
        tables["Activity trend"] = _trend_table(analysis.trend)
        tables["Outbursts"] = _outburst_table(analysis.outbursts)
        tables["Nights"] = _nights_table(analysis.trend, analysis.outburst_nights)
    if extra.get("rotation"):
        tables["Rotation"] = _one_row(extra["rotation"], [
            "period_h", "period_err_h", "amplitude_mag", "amplitude_err_mag", "axial_ratio_min",
            "n_points", "method"])
    if extra.get("size"):
        tables["Nucleus size and mass"] = _one_row(extra["size"], [
            "H_mag", "H_err_mag", "band", "albedo", "radius_km", "radius_lo_km", "radius_hi_km",
            "mass_kg_lo", "mass_kg_hi", "mass_bound_kg", "active_fraction"])
    return tables
