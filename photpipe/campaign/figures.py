"""Campaign figures: activity, nucleus lightcurve, coma slopes and the data-quality check.

Every function builds and returns its own `matplotlib.figure.Figure`; none touches pyplot's
global state, so they are safe in batch runs, threads and on machines without a display (the
Agg renderer is used when a figure is saved).

Colours come from the palette of Okabe & Ito (2008, "Color Universal Design"), chosen so that
the common forms of colour blindness still tell them apart; markers differ as well, so the
figures also read in greyscale.
"""

import numpy as np
from astropy import units as u
from astropy.table import Table
from astropy.time import Time
from matplotlib.ticker import FuncFormatter

from photpipe._plotting import label_axes, new_figure
from photpipe.activity._inputs import choose_aperture

__all__ = ["PALETTE", "afrho_time_figure", "afrho_rh_figure", "nucleus_lightcurve_figure",
           "coma_slope_figure", "quality_figure", "outburst_figure"]

#: Colour-blind-safe colours (Okabe & Ito 2008) by role.
PALETTE = {
    "frames": "#56B4E9",      # sky blue
    "pre": "#0072B2",         # blue
    "post": "#D55E00",        # vermillion
    "trend": "#000000",       # black
    "outburst": "#CC79A7",    # reddish purple
    "nucleus": "#009E73",     # bluish green
    "reference": "#E69F00",   # orange
}
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


def _check_table(table, name):
    if not isinstance(table, Table):
        msg = f"{name!r} must be an astropy Table or QTable, got {type(table).__name__}"
        raise TypeError(msg)


def _time_axis(mjd, perihelion_time):
    """Return x values and label: days from perihelion when known, else MJD."""
    if perihelion_time is None:
        return np.asarray(mjd, dtype=float), "time (MJD, UTC)"
    return np.asarray(mjd, dtype=float) - perihelion_time.utc.mjd, "days from perihelion"


def _aperture_rows(measurements, aperture, trend):
    rho = _values(measurements, "rho_km", u.km)
    if aperture is not None:
        chosen = choose_aperture(rho, u.Quantity(aperture, u.km).value)
    elif trend is not None and trend.rho is not None:
        chosen = float(trend.rho.to_value(u.km))
    else:
        chosen = choose_aperture(rho)
    return np.abs(rho - chosen) <= 1e-3 * chosen, chosen


def _plain_log_ticks(axis):
    """Label a log axis 100, 200, 1.5 ... rather than 10^2, 2×10^2."""
    fmt = FuncFormatter(lambda v, _pos: f"{v:g}")
    axis.set_major_formatter(fmt)
    axis.set_minor_formatter(fmt)


def _afrho_label(column):
    labels = {"a0frho_cm": "A(0°)fρ (cm)", "a0frho_coma_cm": "A(0°)fρ of the coma (cm)",
              "afrho_coma_cm": "Afρ of the coma (cm)"}
    return labels.get(column, "Afρ (cm)")


def _new_figure(nrows=1, *, sharex=False):
    return new_figure(nrows, figsize=(8.0, 4.2 if nrows == 1 else 2.6 * nrows), sharex=sharex,
                      grid=True)


def _mark_outbursts(ax, outbursts, perihelion_time, *, label=True):
    if outbursts is None or len(outbursts) == 0:
        return
    for n, row in enumerate(outbursts):
        lo, _ = _time_axis(np.array([row["onset_after"].utc.mjd]), perihelion_time)
        hi, _ = _time_axis(np.array([row["onset_before"].utc.mjd]), perihelion_time)
        ax.axvspan(lo[0], hi[0], color=PALETTE["outburst"], alpha=0.25, linewidth=0,
                   label="outburst onset bracket" if (label and n == 0) else None)
        dm = float(u.Quantity(row["delta_mag"], u.mag).value)
        ax.annotate(f"Δm = {dm:+.2f} mag", xy=(hi[0], 1.0), xycoords=("data", "axes fraction"),
                    xytext=(3, -12), textcoords="offset points", fontsize=8,
                    color=PALETTE["outburst"])


def afrho_time_figure(measurements, *, trend=None, outbursts=None, aperture=None,
                      column="a0frho_cm", perihelion_time=None):
    """Afρ of every frame and night against time, with the fitted trend.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
        Rows of the ``measurements.ecsv`` contract.
    trend : `~photpipe.activity.ActivityTrend`, optional
        Adds the night means and the trend evaluated along the observed r_h.
    outbursts : `~astropy.table.QTable`, optional
        From `~photpipe.activity.find_outbursts`; onset brackets are shaded.
    aperture : `~astropy.units.Quantity` ['length'], optional
        Aperture to show (default that of the trend, else the most common one).
    column : str
        ``a0frho_cm`` (default, phase-corrected) or ``afrho_cm``.
    perihelion_time : `~astropy.time.Time`, optional
        Time axis origin (default the trend's perihelion; MJD when neither is given).

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, nuc, sim = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> fig = afrho_time_figure(meas)
    >>> fig.axes[0].get_ylabel()
    'A(0°)fρ (cm)'
    """
    _check_table(measurements, "measurements")
    if perihelion_time is None and trend is not None:
        perihelion_time = trend.perihelion_time
    rows, rho_km = _aperture_rows(measurements, aperture, trend)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[rows]
    a = _values(measurements, column, u.cm)[rows]
    ae = _values(measurements, column.replace("_cm", "_err_cm"), u.cm)[rows]
    x, xlabel = _time_axis(mjd, perihelion_time)
    fig, (ax,) = _new_figure()
    good = np.isfinite(a) & (a > 0)
    ax.errorbar(x[good], a[good], yerr=ae[good], fmt=".", ms=3, color=PALETTE["frames"],
                elinewidth=0.6, alpha=0.7, label=f"frames (ρ = {rho_km:g} km)")
    if trend is not None and len(trend.nights):
        nights = trend.nights
        nx, _ = _time_axis(nights["time"].utc.mjd, perihelion_time)
        for name in ("pre", "post"):
            sel = np.asarray(nights["branch"]) == name
            if np.any(sel):
                ax.errorbar(nx[sel], nights["afrho"][sel].to_value(u.cm),
                            yerr=nights["afrho_err"][sel].to_value(u.cm), fmt=_MARKERS[name],
                            ms=5, color=PALETTE[name], mfc="white", mew=1.2,
                            label=f"night means, {_BRANCH_LABEL[name]}")
        # The trend along the observed geometry: interpolate r_h in time between frames.
        order = np.argsort(mjd)
        grid = np.linspace(mjd.min(), mjd.max(), 400)
        rh_grid = np.interp(grid, mjd[order], _values(measurements, "r_h_au", u.au)[rows][order])
        pred = trend.predict(rh_grid * u.au, Time(grid, format="mjd", scale="utc"))
        gx, _ = _time_axis(grid, perihelion_time)
        ax.plot(gx, pred.to_value(u.cm), color=PALETTE["trend"], lw=1.4,
                label="power-law trend")
    if perihelion_time is not None:
        ax.axvline(0.0, color="0.4", lw=0.8, ls=":", label="perihelion")
    _mark_outbursts(ax, outbursts, perihelion_time)
    ax.set_yscale("log")
    _plain_log_ticks(ax.yaxis)
    label_axes(ax, xlabel=xlabel, ylabel=_afrho_label(column), title="Dust activity against time")
    return fig


def afrho_rh_figure(measurements, *, trend, aperture=None, column="a0frho_cm"):
    """Afρ against heliocentric distance on log axes, each branch with its power law.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
    trend : `~photpipe.activity.ActivityTrend`
    aperture : `~astropy.units.Quantity` ['length'], optional
    column : str

    Returns
    -------
    fig : `~matplotlib.figure.Figure`
        The legend gives each branch's index k ± error.

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
    good = np.isfinite(a) & (a > 0)
    post = mjd >= trend.perihelion_time.utc.mjd
    fig, (ax,) = _new_figure()
    for name, sel in (("pre", ~post), ("post", post)):
        sel = sel & good
        if np.any(sel):
            ax.plot(rh[sel], a[sel], _MARKERS[name], ms=3, color=PALETTE[name], alpha=0.45,
                    mew=0, label=f"frames, {_BRANCH_LABEL[name]}")
        b = trend.branch(name)
        if b is not None:
            r = np.geomspace(b.r_h_min.to_value(u.au), b.r_h_max.to_value(u.au), 50)
            y, _ = b.predict_log(np.log10(r))
            ax.plot(r, 10 ** y, color=PALETTE[name], lw=2.0, ls="-" if name == "pre" else "--",
                    label=f"fit {_BRANCH_LABEL[name]}: k = {b.k:.2f} ± {b.k_err:.2f}")
    ax.set_xscale("log")
    ax.set_yscale("log")
    _plain_log_ticks(ax.xaxis)
    _plain_log_ticks(ax.yaxis)
    label_axes(ax, xlabel="heliocentric distance r_h (au)", ylabel=_afrho_label(column),
               title=f"Afρ ∝ r_h^k, aperture ρ = {rho_km:g} km")
    return fig


def nucleus_lightcurve_figure(nucleus, *, perihelion_time=None):
    """Nucleus magnitude of every frame against time (brighter up).

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
    x, xlabel = _time_axis(mjd, perihelion_time)
    fig, (ax,) = _new_figure()
    good = np.isfinite(m)
    ax.errorbar(x[good], m[good], yerr=me[good], fmt="D", ms=3, color=PALETTE["nucleus"],
                elinewidth=0.6, label=f"nucleus, {np.count_nonzero(good)} frames")
    ax.invert_yaxis()
    label_axes(ax, xlabel=xlabel, ylabel="nucleus magnitude (mag)",
               title="Nucleus lightcurve (PSF-convolved nucleus + coma fit)")
    return fig


def _per_frame(measurements):
    """Indices of the first row of each frame, in time order."""
    frames = np.asarray(measurements["frame"]).astype(str)
    _, first = np.unique(frames, return_index=True)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[first]
    return first[np.argsort(mjd, kind="stable")]


def coma_slope_figure(measurements, *, perihelion_time=None, steady_state=-1.0):
    """Coma profile slope of every frame against time, beside the steady-state value.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
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
    x, xlabel = _time_axis(mjd, perihelion_time)
    fig, (ax,) = _new_figure()
    ax.plot(x, slope, "o", ms=3, color=PALETTE["pre"], label="frames")
    ax.axhline(steady_state, color=PALETTE["reference"], lw=1.5, ls="--",
               label=f"steady-state coma ({steady_state:g})")
    label_axes(ax, xlabel=xlabel, ylabel="coma slope d ln Σ / d ln ρ",
               title="Coma surface-brightness profile slope")
    return fig


def quality_figure(measurements, nucleus=None):
    """Zero point, reference-star count and seeing FWHM per frame: the data-quality check.

    Parameters
    ----------
    measurements : `~astropy.table.Table`
    nucleus : `~astropy.table.Table`, optional
        Supplies the FWHM panel.

    Returns
    -------
    fig : `~matplotlib.figure.Figure`
        Frames in time order along x; dotted lines separate nights.

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, nuc, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> [ax.get_ylabel() for ax in quality_figure(meas, nuc).axes]
    ['zero point (mag)', 'reference stars', 'FWHM (arcsec)']
    """
    _check_table(measurements, "measurements")
    first = _per_frame(measurements)
    mjd = _values(measurements, "mjd_utc_mid", u.day)[first]
    zp = _values(measurements, "zp_mag", u.mag)[first]
    zpe = _values(measurements, "zp_err_mag", u.mag)[first]
    nstars = _values(measurements, "n_stars")[first]
    frames = np.asarray(measurements["frame"]).astype(str)[first]
    idx = np.arange(first.size)
    nrows = 3 if nucleus is not None else 2
    fig, axes = _new_figure(nrows, sharex=True)
    axes[0].errorbar(idx, zp, yerr=zpe, fmt="o", ms=3, color=PALETTE["pre"], elinewidth=0.6)
    axes[0].set_ylabel("zero point (mag)")
    axes[0].set_title("Data quality per frame")
    axes[1].plot(idx, nstars, "s", ms=3, color=PALETTE["post"])
    axes[1].set_ylabel("reference stars")
    if nucleus is not None:
        _check_table(nucleus, "nucleus")
        nf = np.asarray(nucleus["frame"]).astype(str)
        fwhm_by_frame = dict(zip(nf, _values(nucleus, "fwhm_arcsec", u.arcsec), strict=True))
        fwhm = np.array([fwhm_by_frame.get(f, np.nan) for f in frames])
        axes[2].plot(idx, fwhm, "D", ms=3, color=PALETTE["nucleus"])
        axes[2].set_ylabel("FWHM (arcsec)")
    # Night boundaries: pauses longer than 6 h.
    for b in np.flatnonzero(np.diff(mjd) > 0.25):
        for ax in axes:
            ax.axvline(b + 0.5, color="0.6", lw=0.6, ls=":")
    axes[-1].set_xlabel("frame number, in time order")
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
        Δm = -2.5 log10(Afρ / Afρ_trend) per night (brighter up).

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
    x, xlabel = _time_axis(nights["time"].utc.mjd, trend.perihelion_time)
    dm = -2.5 * np.asarray(nights["residual_dex"], dtype=float)
    dme = 2.5 * np.asarray(nights["residual_err_dex"], dtype=float)
    fig, (ax,) = _new_figure()
    for name in ("pre", "post"):
        sel = (np.asarray(nights["branch"]) == name) & np.isfinite(dm)
        if np.any(sel):
            ax.errorbar(x[sel], dm[sel], yerr=dme[sel], fmt=_MARKERS[name], ms=4,
                        color=PALETTE[name], label=f"nights {_BRANCH_LABEL[name]}")
    finite = np.isfinite(dme)
    ax.step(x[finite], -sigma * dme[finite], where="mid", color=PALETTE["outburst"], lw=1.0,
            ls="--", label=f"{sigma:g} σ detection level")
    ax.axhline(0.0, color=PALETTE["trend"], lw=1.0)
    _mark_outbursts(ax, outbursts, trend.perihelion_time)
    ax.invert_yaxis()
    label_axes(ax, xlabel=xlabel, ylabel="Δm from trend (mag)",
               title="Departures from the activity trend (outbursts shaded)")
    return fig
