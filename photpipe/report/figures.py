"""Campaign figures: activity, lightcurves, coma slopes and the data-quality check.

Every function builds and returns its own `matplotlib.figure.Figure` in the one style of
`photpipe._plotting`; none touches pyplot's global state. Time axes are calendar dates (UTC);
power laws are drawn on log axes; every measured point carries its error bar.
"""

import numpy as np
from astropy import units as u
from astropy.table import Table
from astropy.time import Time

from photpipe._plotting import PALETTE, date_axis, label_axes, log_axis, mjd_to_dates, new_figure
from photpipe.activity._inputs import choose_aperture

__all__ = ["PALETTE", "afrho_time_figure", "afrho_rh_figure", "nucleus_lightcurve_figure",
           "coma_slope_figure", "quality_figure", "outburst_figure", "afrho_aperture_figure",
           "total_magnitude_figure"]

_MARKERS = {"pre": "o", "post": "s"}
_BRANCH_LABEL = {"pre": "before perihelion", "post": "after perihelion"}


def _values(table, name, unit=None):
    """Column ``name`` as plain floats (in ``unit`` when it carries one)."""
    if name not in table.colnames:
        msg = f"table has no column {name!r} (columns: {', '.join(table.colnames)})"
        raise ValueError(msg)
    col = table[name]
    if isinstance(col, u.Quantity):
        return col.to_value(unit) if unit is not None else col.value
    if unit is not None and getattr(col, "unit", None) is not None:
        return (np.asarray(col, dtype=float) * col.unit).to_value(unit)
    return np.asarray(col, dtype=float)


def _optional(table, name, unit=None):
    """Column ``name`` as floats, or NaN everywhere when the table lacks it."""
    if name not in table.colnames:
        return np.full(len(table), np.nan)
    return _values(table, name, unit)


def _check_table(table, name):
    if not isinstance(table, Table):
        msg = f"{name!r} must be an astropy Table or QTable, got {type(table).__name__}"
        raise TypeError(msg)


def _dates(mjd):
    return mjd_to_dates(mjd)


def _mark_perihelion(ax, perihelion_time, mjd):
    """A dotted line at perihelion when it falls inside the data's span (else a note)."""
    if perihelion_time is None or len(mjd) == 0:
        return
    tp = float(perihelion_time.utc.mjd)
    lo, hi = np.nanmin(mjd), np.nanmax(mjd)
    pad = max(0.05 * (hi - lo), 0.5)
    if lo - pad <= tp <= hi + pad:
        ax.axvline(_dates([tp])[0], color="0.4", lw=0.8, ls=":", label="perihelion")
    else:
        days = lo - tp if tp < lo else tp - hi
        where = "before the first" if tp < lo else "after the last"
        ax.annotate(f"perihelion {days:.0f} d {where} point", xy=(0.01, 0.02),
                    xycoords="axes fraction", fontsize=7, color="0.35")


def _aperture_rows(measurements, aperture, trend):
    rho = _values(measurements, "rho_km", u.km)
    if aperture is not None:
        chosen = choose_aperture(rho, u.Quantity(aperture, u.km).value)
    elif trend is not None and trend.rho is not None:
        chosen = float(trend.rho.to_value(u.km))
    else:
        chosen = choose_aperture(rho)
    return np.abs(rho - chosen) <= 1e-3 * chosen, chosen


def _afrho_label(column):
    return "A(0°)fρ (cm)" if column.startswith("a0frho") else "Afρ (cm)"


def _afrho_name(column):
    return "A(0°)fρ" if column.startswith("a0frho") else "Afρ"


def _mark_outbursts(ax, outbursts, *, label=True):
    if outbursts is None or len(outbursts) == 0:
        return
    for n, row in enumerate(outbursts):
        lo, hi = _dates([row["onset_after"].utc.mjd, row["onset_before"].utc.mjd])
        ax.axvspan(lo, hi, color=PALETTE["outburst"], alpha=0.25, linewidth=0,
                   label="outburst onset bracket" if (label and n == 0) else None)
        dm = float(u.Quantity(row["delta_mag"], u.mag).value)
        ax.annotate(f"Δm = {dm:+.2f} mag", xy=(hi, 1.0), xycoords=("data", "axes fraction"),
                    xytext=(3, -12), textcoords="offset points", fontsize=8,
                    color=PALETTE["outburst"])


def _say_empty(ax, text):
    """Write why a panel has nothing to show, in the panel."""
    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center", fontsize=9,
            color="0.3", wrap=True)


def afrho_time_figure(measurements, *, trend=None, outbursts=None, aperture=None,
                      column="a0frho_cm", perihelion_time=None):
    """Afρ of every frame and night against date, with the fitted trend where there is one.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
        Rows of the ``measurements.ecsv`` contract.
    trend : `~photpipe.activity.ActivityTrend`, optional
        Adds the night means and, where a branch was fitted, the trend along the observed r_h.
    outbursts : `~astropy.table.QTable`, optional
        From `~photpipe.activity.find_outbursts`; onset brackets are shaded.
    aperture : `~astropy.units.Quantity` ['length'], optional
        Aperture to show (default that of the trend, else the most common one).
    column : str
        ``a0frho_cm`` (default, phase-corrected) or ``afrho_cm``.
    perihelion_time : `~astropy.time.Time`, optional
        Marked when inside the span of the data (default the trend's).

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, nuc, sim = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> fig = afrho_time_figure(meas)
    >>> fig.axes[0].get_xlabel(), fig.axes[0].get_ylabel()
    ('date (UTC)', 'A(0°)fρ (cm)')
    """
    _check_table(measurements, "measurements")
    if perihelion_time is None and trend is not None:
        perihelion_time = trend.perihelion_time
    rows, rho_km = _aperture_rows(measurements, aperture, trend)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[rows]
    a = _values(measurements, column, u.cm)[rows]
    ae = _values(measurements, column.replace("_cm", "_err_cm"), u.cm)[rows]
    fig, (ax,) = new_figure()
    good = np.isfinite(a) & (a > 0)
    ax.errorbar(_dates(mjd[good]), a[good], yerr=ae[good], fmt=".", ms=3,
                color=PALETTE["frames"], elinewidth=0.6, alpha=0.7,
                label=f"frames (ρ = {rho_km:g} km)")
    if trend is not None and len(trend.nights):
        _draw_nights_and_trend(ax, measurements, rows, mjd, trend)
    _mark_perihelion(ax, perihelion_time, mjd)
    _mark_outbursts(ax, outbursts)
    log_axis(ax, "y")
    label_axes(ax, xlabel=date_axis(ax), ylabel=_afrho_label(column),
               title=f"Dust activity {_afrho_name(column)} against time, ρ = {rho_km:g} km")
    return fig


def _draw_nights_and_trend(ax, measurements, rows, mjd, trend):
    nights = trend.nights
    nd = _dates(nights["time"].utc.mjd)
    for name in ("pre", "post"):
        sel = np.asarray(nights["branch"]) == name
        if np.any(sel):
            ax.errorbar(nd[sel], nights["afrho"][sel].to_value(u.cm),
                        yerr=nights["afrho_err"][sel].to_value(u.cm), fmt=_MARKERS[name],
                        ms=5, color=PALETTE[name], mfc="white", mew=1.2,
                        label=f"night means, {_BRANCH_LABEL[name]}")
    if not trend.branches or mjd.size < 2:
        return
    # the trend along the observed geometry: r_h interpolated in time between frames
    order = np.argsort(mjd)
    grid = np.linspace(mjd.min(), mjd.max(), 400)
    rh_grid = np.interp(grid, mjd[order], _values(measurements, "r_h_au", u.au)[rows][order])
    pred = trend.predict(rh_grid * u.au, Time(grid, format="mjd", scale="utc")).to_value(u.cm)
    if np.any(np.isfinite(pred)):
        ax.plot(_dates(grid), pred, color=PALETTE["trend"], lw=1.4,
                label="power-law trend Afρ ∝ r_h^k")


def afrho_rh_figure(measurements, *, trend, aperture=None, column="a0frho_cm"):
    """Afρ against heliocentric distance on log axes, each branch with its fitted power law.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
    trend : `~photpipe.activity.ActivityTrend`
    aperture : `~astropy.units.Quantity` ['length'], optional
    column : str

    Returns
    -------
    fig : `~matplotlib.figure.Figure`
        The legend gives each fitted branch's index k ± error, or why a branch has no fit.

    Examples
    --------
    >>> from photpipe.activity import fit_activity_trend
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, nuc, sim = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> trend = fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err, rho=sim.rho,
    ...                            perihelion_time=sim.perihelion_time)
    >>> afrho_rh_figure(meas, trend=trend).axes[0].get_xlabel()
    'heliocentric distance r_h (au)'
    """
    _check_table(measurements, "measurements")
    rows, rho_km = _aperture_rows(measurements, aperture, trend)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[rows]
    rh = _values(measurements, "r_h_au", u.au)[rows]
    a = _values(measurements, column, u.cm)[rows]
    ae = _values(measurements, column.replace("_cm", "_err_cm"), u.cm)[rows]
    good = np.isfinite(a) & (a > 0)
    post = mjd >= trend.perihelion_time.utc.mjd
    fig, (ax,) = new_figure()
    for name, sel in (("pre", ~post), ("post", post)):
        sel = sel & good
        if np.any(sel):
            ax.errorbar(rh[sel], a[sel], yerr=ae[sel], fmt=_MARKERS[name], ms=3,
                        color=PALETTE[name], alpha=0.5, elinewidth=0.6, mew=0,
                        label=f"frames, {_BRANCH_LABEL[name]}")
        b = trend.branch(name)
        if b is not None:
            r = np.geomspace(b.r_h_min.to_value(u.au), b.r_h_max.to_value(u.au), 50)
            y, _ = b.predict_log(np.log10(r))
            ax.plot(r, 10 ** y, color=PALETTE[name], lw=2.0, ls="-" if name == "pre" else "--",
                    label=f"fit {_BRANCH_LABEL[name]}: k = {b.k:.2f} ± {b.k_err:.2f}")
        elif np.any(sel):
            ax.plot([], [], " ", label=f"no fit {_BRANCH_LABEL[name]}: fewer than 3 nights")
    log_axis(ax, "xy")
    label_axes(ax, xlabel="heliocentric distance r_h (au)", ylabel=_afrho_label(column),
               title=f"{_afrho_name(column)} ∝ r_h^k, aperture ρ = {rho_km:g} km")
    return fig


def _upper_limits(table):
    if "flags" not in table.colnames:
        return np.zeros(len(table), dtype=bool)
    return np.array(["upper_limit" in str(f).split(",") for f in table["flags"]], dtype=bool)


def nucleus_lightcurve_figure(nucleus, *, perihelion_time=None):
    """Nucleus magnitude of every frame against date (brighter up); upper limits as arrows.

    Parameters
    ----------
    nucleus : `~astropy.table.Table`
        Rows of the ``nucleus.ecsv`` contract.
    perihelion_time : `~astropy.time.Time`, optional

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> _, nuc, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> bool(nucleus_lightcurve_figure(nuc).axes[0].yaxis_inverted())
    True
    """
    _check_table(nucleus, "nucleus")
    mjd = _values(nucleus, "mjd_utc_mid", u.day)
    m = _values(nucleus, "nucleus_mag", u.mag)
    me = _values(nucleus, "nucleus_mag_err", u.mag)
    limit = _upper_limits(nucleus)
    fig, (ax,) = new_figure()
    good = np.isfinite(m) & ~limit
    ax.errorbar(_dates(mjd[good]), m[good], yerr=me[good], fmt="D", ms=3,
                color=PALETTE["nucleus"], elinewidth=0.6,
                label=f"nucleus, {np.count_nonzero(good)} frames")
    lim = np.isfinite(m) & limit
    if np.any(lim):
        # a faint limit: the nucleus is fainter than drawn, i.e. further down the inverted axis
        ax.errorbar(_dates(mjd[lim]), m[lim], yerr=0.15, lolims=True, fmt="v", ms=4,
                    color=PALETTE["limit"], label=f"upper limits (not detected), "
                                                  f"{np.count_nonzero(lim)} frames")
    _mark_perihelion(ax, perihelion_time, mjd)
    ax.invert_yaxis()
    label_axes(ax, xlabel=date_axis(ax), ylabel="nucleus magnitude (mag)",
               title="Nucleus lightcurve (PSF-convolved nucleus + coma fit)")
    return fig


def _per_frame(measurements):
    """Indices of the first row of each frame, in time order."""
    frames = np.asarray(measurements["frame"]).astype(str)
    _, first = np.unique(frames, return_index=True)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[first]
    return first[np.argsort(mjd, kind="stable")]


def coma_slope_figure(measurements, *, perihelion_time=None, steady_state=-1.0):
    """Coma profile slope of every frame against date, beside the steady-state value.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
        Error bars come from ``coma_slope_err`` when the table has it.
    perihelion_time : `~astropy.time.Time`, optional
    steady_state : float
        Reference slope drawn as a line: -1 for d ln Σ / d ln ρ of a steady, freely expanding
        coma, Σ ∝ 1/ρ (Jewitt & Meech 1987, ApJ 317, 992).

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, _, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> coma_slope_figure(meas).axes[0].get_ylabel()
    'coma slope d ln Σ / d ln ρ'
    """
    _check_table(measurements, "measurements")
    first = _per_frame(measurements)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[first]
    slope = _values(measurements, "coma_slope")[first]
    err = _optional(measurements, "coma_slope_err")[first]
    fig, (ax,) = new_figure()
    has_err = np.isfinite(err)
    ax.errorbar(_dates(mjd), slope, yerr=np.where(has_err, err, 0.0), fmt="o", ms=3,
                elinewidth=0.6, color=PALETTE["pre"],
                label="frames" if np.all(has_err) else "frames (no error bars in the table)")
    ax.axhline(steady_state, color=PALETTE["reference"], lw=1.5, ls="--",
               label=f"steady-state coma ({steady_state:g})")
    _mark_perihelion(ax, perihelion_time, mjd)
    label_axes(ax, xlabel=date_axis(ax), ylabel="coma slope d ln Σ / d ln ρ",
               title="Coma surface-brightness profile slope")
    return fig


def quality_figure(measurements, nucleus=None):
    """Zero point, reference-star count and seeing FWHM of every frame against date.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
    nucleus : `~astropy.table.Table`, optional
        Supplies the FWHM of the PSF used in the nucleus fit.

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, nuc, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> [ax.get_ylabel() for ax in quality_figure(meas, nuc).axes]
    ['zero point (mag)', 'reference stars', 'PSF FWHM (arcsec)']
    """
    _check_table(measurements, "measurements")
    first = _per_frame(measurements)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[first]
    dates = _dates(mjd)
    zp = _values(measurements, "zp_mag", u.mag)[first]
    zpe = _values(measurements, "zp_err_mag", u.mag)[first]
    nstars = _values(measurements, "n_stars")[first]
    frames = np.asarray(measurements["frame"]).astype(str)[first]
    nrows = 3 if nucleus is not None else 2
    fig, axes = new_figure(nrows, sharex=True)
    axes[0].errorbar(dates, zp, yerr=zpe, fmt="o", ms=3, color=PALETTE["pre"], elinewidth=0.6)
    axes[0].set_ylabel("zero point (mag)")
    axes[0].set_title("Data quality per frame")
    axes[1].plot(dates, nstars, "s", ms=3, color=PALETTE["post"])
    axes[1].set_ylabel("reference stars")
    if nucleus is not None:
        _check_table(nucleus, "nucleus")
        nf = np.asarray(nucleus["frame"]).astype(str)
        fwhm_by_frame = dict(zip(nf, _values(nucleus, "fwhm_arcsec", u.arcsec), strict=True))
        fwhm = np.array([fwhm_by_frame.get(f, np.nan) for f in frames])
        axes[2].plot(dates, fwhm, "D", ms=3, color=PALETTE["nucleus"])
        axes[2].set_ylabel("PSF FWHM (arcsec)")
    axes[-1].set_xlabel(date_axis(axes[-1]))
    return fig


def outburst_figure(trend, outbursts=None, *, sigma=5.0):
    """Night departures from the trend in magnitudes, with the detection level and outbursts.

    Parameters
    ----------
    trend : `~photpipe.activity.ActivityTrend`
        Its ``nights`` table supplies the residuals.
    outbursts : `~astropy.table.QTable`, optional
    sigma : float
        Detection level drawn, in standard deviations of each night.

    Returns
    -------
    fig : `~matplotlib.figure.Figure`
        Δm = -2.5 log10(Afρ / Afρ_trend) per night (brighter up). Without a fitted trend the
        panel says so instead of drawing an empty frame.

    Examples
    --------
    >>> from photpipe.activity import analyse_activity
    >>> from photpipe.activity.synthetic import simulate_activity
    >>> sim = simulate_activity(seed=0, outburst_night=12)
    >>> res = analyse_activity(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
    ...                        perihelion_time=sim.perihelion_time)
    >>> outburst_figure(res.trend, res.outbursts).axes[0].get_ylabel()
    'Δm from trend (mag)'
    """
    nights = trend.nights
    dates = _dates(nights["time"].utc.mjd) if len(nights) else np.array([])
    dm = -2.5 * np.asarray(nights["residual_dex"], dtype=float)
    dme = 2.5 * np.asarray(nights["residual_err_dex"], dtype=float)
    fig, (ax,) = new_figure()
    shown = np.isfinite(dm)
    for name in ("pre", "post"):
        sel = (np.asarray(nights["branch"]) == name) & shown
        if np.any(sel):
            ax.errorbar(dates[sel], dm[sel], yerr=dme[sel], fmt=_MARKERS[name], ms=4,
                        color=PALETTE[name], label=f"nights {_BRANCH_LABEL[name]}")
    finite = np.isfinite(dme) & shown
    if np.any(finite):
        ax.step(dates[finite], -sigma * dme[finite], where="mid", color=PALETTE["outburst"],
                lw=1.0, ls="--", label=f"{sigma:g} σ detection level")
        ax.axhline(0.0, color=PALETTE["trend"], lw=1.0)
        _mark_outbursts(ax, outbursts)
        ax.invert_yaxis()
    else:
        ax.set_xticks([])
        ax.set_yticks([])
        _say_empty(ax, "No night departures to show: no branch of the activity trend could\n"
                       f"be fitted ({len(nights)} night(s); at least 3 on one side of "
                       "perihelion are needed).")
    label_axes(ax, xlabel=date_axis(ax) if np.any(finite) else "date (UTC)",
               ylabel="Δm from trend (mag)",
               title="Departures from the activity trend (outbursts shaded)")
    return fig


def afrho_aperture_figure(measurements, *, column="a0frho_cm"):
    """Afρ against aperture radius ρ per night on log axes (flat for a steady 1/ρ coma).

    Parameters
    ----------
    measurements : `~astropy.table.Table`
    column : str

    Returns
    -------
    fig : `~matplotlib.figure.Figure`
        One line per night: the error-weighted mean over the night's frames in each aperture.

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, _, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> afrho_aperture_figure(meas).axes[0].get_xlabel()
    'aperture radius ρ at the comet (km)'
    """
    _check_table(measurements, "measurements")
    rho = _values(measurements, "rho_km", u.km)
    a = _values(measurements, column, u.cm)
    ae = _values(measurements, column.replace("_cm", "_err_cm"), u.cm)
    night = np.floor(_values(measurements, "mjd_utc_mid", u.day) - 0.5)  # noon-to-noon, UTC
    fig, (ax,) = new_figure()
    nights = np.unique(night[np.isfinite(night)])
    colours = _night_colours(len(nights))
    for k, n in enumerate(nights):
        radii, means, errs = [], [], []
        in_night = night == n
        groups = _aperture_groups(rho, in_night)
        for g in np.unique(groups[in_night]):
            sel = in_night & (groups == g) & np.isfinite(a) & (ae > 0)
            if np.any(sel):
                w = 1.0 / ae[sel] ** 2
                radii.append(np.median(rho[sel]))
                means.append(np.sum(w * a[sel]) / np.sum(w))
                errs.append(1.0 / np.sqrt(np.sum(w)))
        if radii:
            label = Time(n + 0.5, format="mjd").utc.iso[:10] if len(nights) <= 8 else None
            ax.errorbar(radii, means, yerr=errs, fmt="o-", ms=3, lw=0.8, color=colours[k],
                        label=label)
    if len(nights) > 8:
        ax.plot([], [], "o-", color=colours[0], label=f"{len(nights)} nights, early to late "
                                                      "(dark to light)")
    log_axis(ax, "xy")
    label_axes(ax, xlabel="aperture radius ρ at the comet (km)", ylabel=_afrho_label(column),
               title=f"{_afrho_name(column)} against aperture: flat for a steady 1/ρ coma")
    return fig


def _aperture_groups(rho, rows):
    """Group label per row: radii within 5 % of their neighbour share a group.

    Apertures fixed on the sky change their size at the comet from frame to frame; this
    gathers them with the ones fixed in km that they resemble within a night.
    """
    groups = np.full(rho.size, -1)
    idx = np.flatnonzero(rows & np.isfinite(rho))
    order = idx[np.argsort(rho[idx])]
    label = 0
    for i, j in zip(order[:-1], order[1:]):
        groups[i] = label
        if rho[j] > 1.05 * rho[i]:
            label += 1
    if order.size:
        groups[order[-1]] = label
    return groups


def _night_colours(n):
    from matplotlib import colormaps

    return [colormaps["viridis"](x) for x in np.linspace(0.0, 0.85, max(n, 1))]


def total_magnitude_figure(measurements, *, aperture=None, perihelion_time=None):
    """Total magnitude of the comet in one aperture against date (brighter up).

    Parameters
    ----------
    measurements : `~astropy.table.Table`
    aperture : `~astropy.units.Quantity` ['length'], optional
        Default the largest aperture, closest to a total magnitude.
    perihelion_time : `~astropy.time.Time`, optional

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, _, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> total_magnitude_figure(meas).axes[0].get_ylabel()
    'magnitude in the aperture (mag)'
    """
    _check_table(measurements, "measurements")
    rho = _values(measurements, "rho_km", u.km)
    chosen = (float(np.nanmax(rho)) if aperture is None
              else choose_aperture(rho, u.Quantity(aperture, u.km).value))
    rows = np.abs(rho - chosen) <= 1e-3 * chosen
    mjd = _values(measurements, "mjd_utc_mid", u.day)[rows]
    m = _values(measurements, "mag", u.mag)[rows]
    me = _values(measurements, "mag_err", u.mag)[rows]
    good = np.isfinite(m)
    band = ""
    if "filter" in measurements.colnames and np.any(rows):
        band = ", ".join(sorted(set(np.asarray(measurements["filter"][rows]).astype(str))))
    fig, (ax,) = new_figure()
    ax.errorbar(_dates(mjd[good]), m[good], yerr=me[good], fmt="o", ms=3,
                color=PALETTE["pre"], elinewidth=0.6,
                label=f"ρ = {chosen:g} km" + (f", filter {band}" if band else ""))
    _mark_perihelion(ax, perihelion_time, mjd)
    ax.invert_yaxis()
    label_axes(ax, xlabel=date_axis(ax), ylabel="magnitude in the aperture (mag)",
               title="Comet magnitude in the largest aperture (total-magnitude lightcurve)")
    return fig
