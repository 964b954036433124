"""The content of the campaign page: activity fit, tables, summary, figures and the headline.

Each piece is built from the campaign's tables, the rotation and size results and the checked
``[activity]`` settings (`photpipe.campaign.activity_settings`); `photpipe.report.page` lays
them out as HTML, one section per stage.
"""

import warnings
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import QTable, Table
from astropy.time import Time

from photpipe.report.headline import headline_lines, night_date, nightly_afrho
from photpipe.report.numbers import value_range, with_error

__all__ = ["column_values", "result_tables", "summary_items", "draw_figures",
           "page_extras", "nights_observed"]


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
    if rot:
        s["rotation period"] = _period_text(rot)
    size = extra.get("size")
    if size:
        s["nucleus radius"] = _radius_text(size)
    return s


def _period_text(rot):
    status = rot.get("status")
    if status == "ambiguous":
        allowed = ", ".join(f"{p['period_h']:.3f} h" for p in rot.get("allowed_periods") or [])
        return "ambiguous" + (f": {allowed} all fit" if allowed else "")
    if status == "none" or rot.get("period_h") is None:
        return "none found" + (f" ({rot['reason']})" if rot.get("reason") else "")
    return with_error(rot["period_h"], rot.get("period_err_h"), "h")


def _radius_text(size):
    if size.get("radius_km") is None:
        if size.get("radius_upper_limit_km") is not None:
            return f"below {size['radius_upper_limit_km']:.2g} km (upper limit)"
        return "not given" + (f" ({size['reason']})" if size.get("reason") else "")
    text = f"{size['radius_km']:.2g} km"
    if size.get("radius_lo_km") is not None and size.get("radius_hi_km") is not None:
        text += f", 68 % interval {value_range(size['radius_lo_km'], size['radius_hi_km'], 'km')}"
    if size.get("albedo") is not None:
        text += f" (assumed albedo {size['albedo']:g})"
    return text


def _figure_jobs(measurements, nucleus, analysis, settings):
    from photpipe.report import figures as F

    peri = analysis.trend.perihelion_time if analysis is not None else None
    col = settings["column"]
    if col not in measurements.colnames and col.replace("_coma", "") in measurements.colnames:
        col = col.replace("_coma", "")  # no coma-only Afρ measured: draw the total light's
    name = "A(0°)fρ" if col.startswith("a0") else "Afρ"
    jobs = {}
    if measurements is not None and len(measurements):
        jobs["quality"] = ("Zero point with its error, reference stars kept in the fit, and the "
                           "FWHM of the PSF model of each frame, against date (UTC).",
                           lambda: F.quality_figure(measurements, nucleus))
        jobs["total_magnitude"] = ("Comet magnitude in the largest aperture against date: the "
                                   "closest the apertures come to a total magnitude.",
                                   lambda: F.total_magnitude_figure(measurements,
                                                                    perihelion_time=peri))
        jobs["afrho_aperture"] = (f"{name} against aperture radius ρ per night (log axes). A "
                                  "steady coma with Σ ∝ 1/ρ gives a flat line; a rise to small "
                                  "ρ is nucleus light or a fresh outburst.",
                                  lambda: F.afrho_aperture_figure(measurements, column=col))
        jobs["coma_slope"] = ("Slope of the coma's surface-brightness profile per frame; -1 is "
                              "a steady-state coma (Jewitt & Meech 1987).",
                              lambda: F.coma_slope_figure(measurements, perihelion_time=peri))
    if nucleus is not None and len(nucleus):
        jobs["nucleus"] = ("Nucleus magnitude per frame from the PSF-convolved nucleus + coma "
                           "fit; grey arrows are upper limits (no detection).",
                           lambda: F.nucleus_lightcurve_figure(nucleus, perihelion_time=peri))
    if analysis is not None:
        jobs["activity_time"] = (f"{name} against date: frames, night means and the power-law "
                                 "trend where a branch could be fitted; outburst onset brackets "
                                 "shaded.", lambda: F.afrho_time_figure(
                                     measurements, trend=analysis.trend,
                                     outbursts=analysis.outbursts, column=col))
        jobs["activity_rh"] = (f"{name} against r_h on log axes with the fitted power law and "
                               "its index k for each branch (A'Hearn et al. 1995).",
                               lambda: F.afrho_rh_figure(measurements, trend=analysis.trend,
                                                         column=col))
        jobs["outbursts"] = ("Night departures from the trend in magnitudes and the detection "
                             "level.", lambda: F.outburst_figure(
                                 analysis.trend, analysis.outbursts, sigma=settings["sigma"]))
    return jobs


_ROTATION_FIGURES = {
    "periodograms": ("rotation_periodograms", "Periodogram of each method against period "
                     "(log axis), the adopted period and its named aliases marked, with "
                     "false-alarm levels where the method gives them."),
    "phased": ("rotation_phased", "The nucleus lightcurve folded on the adopted period, with "
               "the fitted Fourier model."),
    "residuals": ("rotation_residuals", "Residuals from the adopted model against time."),
}


def _rotation_images(extra, out_dir):
    """The rotation step's figures as PNG paths (from its result, else the results folder)."""
    rot = extra.get("rotation") or {}
    files = rot.get("files") or {}
    found = {}
    for key, (name, caption) in _ROTATION_FIGURES.items():
        path = files.get(key)
        path = Path(path) if path else (Path(out_dir) / f"{name}.png" if out_dir else None)
        if path is not None and path.is_file():
            found[name] = (caption, path)
    return found


def _frame_file(out_dir, frame):
    if out_dir is None:
        return None
    found = sorted(Path(out_dir).glob(f"*/calibrated/{frame}.fits"))
    return found[0] if found else None


def _cutout(path, rows):
    """The cut-out of one calibrated frame with its apertures and the sunward direction."""
    from astropy.coordinates import SkyCoord, get_sun
    from astropy.io import fits
    from astropy.wcs import WCS
    from astropy.wcs.utils import proj_plane_pixel_scales

    from photpipe.report.images import cutout_figure

    with fits.open(path, memmap=False) as hdul:
        data = np.asarray(hdul["DATA"].data, dtype=float)
        wcs = WCS(hdul["DATA"].header)
    scale = float(np.mean(proj_plane_pixel_scales(wcs.celestial)) * 3600.0)
    mjd = float(column_values(rows, "mjd_utc_mid", u.day).value[0])
    comet = SkyCoord(column_values(rows, "ra_deg", u.deg)[0],
                     column_values(rows, "dec_deg", u.deg)[0])
    sun = get_sun(Time(mjd, format="mjd", scale="utc"))
    # the projected comet-to-Sun direction lies on the great circle toward the Sun's place
    pa_sun = comet.position_angle(SkyCoord(sun.ra, sun.dec)).to(u.deg)
    rho_km = column_values(rows, "rho_km", u.km).value
    order = np.argsort(rho_km)
    radii = column_values(rows, "rho_arcsec", u.arcsec).value[order] / scale
    when = Time(mjd, format="mjd").utc.iso[:16]
    return cutout_figure(data, x=float(column_values(rows, "x_pix", u.pix).value[0]),
                         y=float(column_values(rows, "y_pix", u.pix).value[0]),
                         radii_pix=radii, wcs=wcs, pa_sun=pa_sun,
                         labels=[f"ρ = {r:.0f} km" for r in rho_km[order]],
                         title=f"{Path(path).stem}, {when} UTC")


def _cutout_jobs(measurements, out_dir, max_nights=3):
    """One cut-out per night (its middle frame), for the first, middle and last nights."""
    if measurements is None or len(measurements) == 0 or out_dir is None:
        return {}
    mjd = column_values(measurements, "mjd_utc_mid", u.day).value
    night = np.floor(mjd - 0.5)
    nights = np.unique(night[np.isfinite(night)])
    if nights.size > max_nights:
        nights = nights[[0, nights.size // 2, -1]]
    frames = np.asarray(measurements["frame"]).astype(str)
    jobs = {}
    for n in nights:
        sel = np.flatnonzero(night == n)
        middle = sel[np.argsort(mjd[sel])][sel.size // 2]
        path = _frame_file(out_dir, frames[middle])
        if path is None:
            continue
        rows = measurements[frames == frames[middle]]
        date = night_date(mjd[sel])
        jobs[f"cutouts_{date}"] = (
            f"Frame {frames[middle]} of {date} around the comet (asinh stretch): the apertures "
            "fixed in km and on the sky, the projected direction to the Sun, north and east.",
            lambda path=path, rows=rows: _cutout(path, rows))
    return jobs


def draw_figures(measurements, nucleus, analysis, settings, notes, *, extra=None,
                 out_dir=None):
    """Draw the campaign figures there is data for; return (figures, captions) by name.

    The rotation step's figures are taken as the PNG files it wrote. A figure that fails is
    left out and the reason appended to ``notes``.
    """
    figures, captions = {}, {}
    from photpipe.report.frame_figures import frame_figure_jobs

    jobs = {**_cutout_jobs(measurements, out_dir),
            **_figure_jobs(measurements, nucleus, analysis, settings),
            **frame_figure_jobs(nucleus, out_dir)}
    for name, (caption, build) in jobs.items():
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # a figure's drawing warnings are not results
                figures[name] = build()
            captions[name] = caption
        except Exception as exc:  # noqa: BLE001 - one figure failing keeps the page
            notes.append(f"Figure {name.replace('_', ' ')!r} could not be drawn: {exc}")
    for name, (caption, path) in _rotation_images(extra or {}, out_dir).items():
        figures[name], captions[name] = path, caption
    return figures, captions


def nights_observed(measurements, nucleus, *, afrho_column="a0frho_cm"):
    """One row per night: frames, geometry, A(0)fρ near 10 000 km, nucleus and quality.

    ``afrho_column`` is the Afρ column the activity step follows (the coma's by default); the
    total light's is used where the measurements lack it.

    Returns
    -------
    table : `~astropy.table.QTable`
    """
    if measurements is None or len(measurements) == 0:
        return QTable()
    mjd = column_values(measurements, "mjd_utc_mid", u.day).value
    night = np.floor(mjd - 0.5)
    frames = np.asarray(measurements["frame"]).astype(str)
    if afrho_column not in measurements.colnames:
        afrho_column = "a0frho_cm"
    afrho = {d: (m, e, r) for d, m, e, r, _ in nightly_afrho(measurements, column=afrho_column)}
    nmag = nflags = None
    if nucleus is not None and len(nucleus):
        nmag = column_values(nucleus, "nucleus_mag", u.mag).value
        nnight = np.floor(column_values(nucleus, "mjd_utc_mid", u.day).value - 0.5)
        nflags = np.asarray(nucleus["flags"]).astype(str) if "flags" in nucleus.colnames \
            else np.full(len(nucleus), "")
    rows = []
    for n in np.unique(night[np.isfinite(night)]):
        sel = night == n
        date = night_date(mjd[sel])
        rh = column_values(measurements, "r_h_au", u.au).value[sel]
        dl = column_values(measurements, "delta_au", u.au).value[sel]
        ph = column_values(measurements, "phase_deg", u.deg).value[sel]
        zp = column_values(measurements, "zp_mag", u.mag).value[sel]
        m, e, r = afrho.get(date, (np.nan, np.nan, np.nan))
        nuc_text = "—"
        if nmag is not None:
            ns = (nnight == n) & np.isfinite(nmag)
            lim = np.array(["upper_limit" in f for f in nflags]) & ns
            det = ns & ~lim
            if np.any(det):
                nuc_text = value_range(np.min(nmag[det]), np.max(nmag[det]))
            if np.any(lim):
                nuc_text += f" ({np.count_nonzero(lim)} upper limits)"
        flagged = sum(1 for f in np.asarray(measurements["flags"]).astype(str)[sel]
                      if f.strip()) if "flags" in measurements.colnames else 0
        rows.append((date, len(np.unique(frames[sel])), float(np.nanmedian(rh)),
                     float(np.nanmedian(dl)), float(np.nanmedian(ph)), m, e,
                     r, nuc_text, float(np.nanmedian(zp)), flagged))
    err_column = afrho_column.replace("_cm", "_err_cm")
    names = ("night (UTC date)", "frames", "r_h_au", "delta_au", "phase_deg", afrho_column,
             err_column, "rho_km", "nucleus magnitude range (mag)", "zp_mag",
             "flagged rows")
    t = QTable(rows=rows, names=names)
    for col, unit in (("r_h_au", u.au), ("delta_au", u.au), ("phase_deg", u.deg),
                      (afrho_column, u.cm), (err_column, u.cm), ("rho_km", u.km),
                      ("zp_mag", u.mag)):
        t[col].unit = unit
    for col, fmt in (("r_h_au", ".3f"), ("delta_au", ".3f"), ("phase_deg", ".1f"),
                     ("zp_mag", ".3f"), ("rho_km", ".0f")):
        t[col].info.format = fmt
    return t


def _rotation_table(rot):
    keys = ["status", "period_h", "period_err_h", "amplitude_mag", "amplitude_err_mag",
            "axial_ratio_min", "n_points", "method"]
    t = _one_row({**rot, "status": rot.get("status") or ("period" if rot.get("period_h")
                                                         else "none")}, keys)
    return t


def _candidates_table(rot):
    """Each method's best period with its ratio to the adopted one (not a guessed name)."""
    methods = rot.get("methods") or {}
    adopted = rot.get("period_h")
    rows = []
    for name, m in methods.items():
        p = m.get("period_h")
        if p is None:
            continue
        ratio = p / adopted if adopted else np.nan
        rows.append((name, p, ratio, m.get("fap", np.nan),
                     "adopted" if name == rot.get("method") else "best of this method"))
    for a in rot.get("allowed_periods") or []:
        rows.append(("allowed (Δχ²)", a.get("period_h", np.nan),
                     a.get("period_h", np.nan) / adopted if adopted else np.nan,
                     np.nan, f"Δχ² = {a.get('delta_chi2', np.nan):.1f}"))
    if not rows:
        return QTable()
    t = QTable(rows=rows, names=("method", "period_h", "ratio to the adopted period",
                                 "false-alarm probability", "role"))
    t["period_h"] = np.round(np.asarray(t["period_h"], dtype=float), 4)
    t["ratio to the adopted period"] = np.round(
        np.asarray(t["ratio to the adopted period"], dtype=float), 3)
    return t


def result_tables(analysis, extra, measurements=None, nucleus=None, *,
                  afrho_column="a0frho_cm"):
    """Return the page's tables (name -> table): nights, trend, outbursts, rotation, size."""
    tables = {}
    if measurements is not None and len(measurements):
        tables["Nights observed"] = nights_observed(measurements, nucleus,
                                                    afrho_column=afrho_column)
    if analysis is not None:
        tables["Activity trend"] = _trend_table(analysis.trend)
        tables["Outbursts"] = _outburst_table(analysis.outbursts)
        tables["Night means for the trend"] = _nights_table(analysis.trend,
                                                            analysis.outburst_nights)
    rot = extra.get("rotation")
    if rot:
        tables["Rotation"] = _rotation_table(rot)
        tables["Rotation candidates"] = _candidates_table(rot)
    if extra.get("size"):
        tables["Nucleus size and mass"] = _size_table(extra["size"])
    return tables


def _size_table(size):
    """The size result with its ranges written as ranges, rounded to what they can say."""
    row = {k: size[k] for k in ("H_mag", "H_err_mag", "band", "albedo") if k in size}
    row["effective radius"] = _radius_text(size)
    if size.get("mass_kg_lo") is not None and size.get("mass_kg_hi") is not None:
        row["mass (kg)"] = f"{size['mass_kg_lo']:.1e}–{size['mass_kg_hi']:.1e}"
    if size.get("mass_bound_kg") is not None:
        row["mass bound from momentum balance (kg)"] = f"≥ {size['mass_bound_kg']:.1e}"
    if size.get("active_fraction") is not None:
        row["active fraction of the surface"] = f"{size['active_fraction']:.2g}"
    return _one_row(row, list(row))


def page_extras(measurements, nucleus, analysis, extra, *, report=None,
                afrho_column="a0frho_cm"):
    """The page's "what to look at first" lines and why any section is empty.

    Returns
    -------
    extras : dict
        ``highlights`` (list of str) and ``reasons`` (section or table name -> str), as
        `photpipe.report.page.write_report` takes them.
    """
    activity = dict(analysis.to_dict()) if analysis is not None else {}
    activity["afrho_column"] = afrho_column
    highlights = headline_lines(measurements=measurements, nucleus=nucleus,
                                rotation=extra.get("rotation"), size=extra.get("size"),
                                activity=activity)
    reasons = {}
    if measurements is None or len(measurements) == 0:
        reasons["observations"] = reasons["photometry"] = (
            "No measurements: no frame of the campaign has been measured yet (see the run's "
            "skip list for why).")
    if nucleus is None or len(nucleus) == 0:
        reasons["nucleus"] = "No nucleus fits: the nucleus stage did not run or fitted no frame."
    if analysis is None:
        reasons["activity"] = "No activity trend: there were no usable Afρ measurements."
    elif not analysis.trend.branches:
        reasons["activity"] = (
            "No power law could be fitted: each side of perihelion needs at least 3 nights "
            f"(this campaign has {len(analysis.trend.nights)} night(s)). The night means are "
            "shown; the departures panel stays empty until a trend exists.")
        reasons["Activity trend"] = "No branch fitted (see above)."
    if analysis is not None and len(analysis.outbursts) == 0:
        reasons["Outbursts"] = "No outburst passed the detection test."
    if not extra.get("rotation"):
        reasons["rotation"] = ("No rotation result: the rotation step did not run or found too "
                               "few nucleus points.")
    if not extra.get("size"):
        reasons["size"] = "No size result: the size step needs the rotation step's lightcurve."
    return {"highlights": highlights, "reasons": reasons}
