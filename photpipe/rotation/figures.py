"""Figures of a rotation search, as matplotlib Figure objects (the caller saves them)."""

import numpy as np
from astropy import units as u

from photpipe._plotting import (
    PALETTE,
    WIDTH,
    date_axis,
    label_axes,
    log_axis,
    mjd_to_dates,
    new_figure,
)

__all__ = ["periodogram_figure", "phased_figure", "residuals_figure", "FAP_LEVELS"]


def _points_by_site(ax, sites, x, y, yerr, **style):
    """Draw the points with error bars, one colour and legend entry per observing site."""
    for site in sorted(set(sites)):
        sel = sites == site
        ax.errorbar(x[sel], y[sel], yerr[sel], fmt=".", ms=3, lw=0.5, label=site or "points",
                    **style)


#: False-alarm probabilities drawn as levels on the periodograms.
FAP_LEVELS = (0.01, 0.001)
#: Fewer trial frequencies than this and the periodogram is evaluated again, finer, for drawing.
_SMOOTH_POINTS = 400


def _fine_periodogram(result, name, pg):
    """The method's periodogram on a grid fine enough for a smooth curve (None if it fails)."""
    from photpipe.rotation.grid import FrequencyGrid
    from photpipe.rotation.methods import METHODS

    f = np.asarray(pg.frequency, dtype=float)
    if f.size >= _SMOOTH_POINTS or f.size < 2 or name not in METHODS:
        return pg
    info = pg.info or {}
    options = {"lomb-scargle": {"nterms": info.get("nterms", 2)},
               "fourier": {"max_order": info.get("order", 1),
                           "criterion": info.get("criterion", "bic")},
               "pdm": {k: info[k] for k in ("n_bins", "n_covers", "weighted") if k in info}}
    lc = result.lightcurve
    t = np.asarray(lc.epoch_mjd, dtype=float)
    k = int(np.ceil(_SMOOTH_POINTS / f.size))
    grid = FrequencyGrid(float(f[0]), float(f[1] - f[0]) / k, (f.size - 1) * k + 1,
                         float(np.ptp(t)))
    try:
        fine = METHODS[name](t, np.asarray(result.magnitudes, dtype=float),
                             np.asarray(lc.mag_err, dtype=float), grid,
                             **options.get(name, {}))
    except Exception:  # noqa: BLE001 - the search's own points are still drawn
        return pg
    # the same model as the search's (a Fourier order chosen anew could differ)
    return fine if fine.info.get("order") == info.get("order") else pg


def _fap_level(pg, level):
    """The statistic at which the false-alarm probability is ``level`` (None if not reached)."""
    stat = np.asarray(pg.statistic, dtype=float)
    fap = np.asarray(pg.fap, dtype=float)
    ok = np.isfinite(stat) & np.isfinite(fap) & (fap > 0)
    if np.count_nonzero(ok) < 3:
        return None
    logf, stat = np.log10(fap[ok]), stat[ok]
    if not (logf.min() <= np.log10(level) <= logf.max()):
        return None
    order = np.argsort(logf)
    return float(np.interp(np.log10(level), logf[order], stat[order]))


def _mark_aliases(ax, result, shown):
    """Numbered marks along the top for the adopted period's named aliases."""
    rows = list(result.aliases[:4])
    for n, row in enumerate(rows, start=1):
        p = float(row["period_h"].to_value(u.h))
        if not (shown[0] <= p <= shown[1]):
            continue
        ax.axvline(p, color="#56B4E9", ls=":", lw=1)
        ax.annotate(str(n), (p, 1.0), xycoords=("data", "axes fraction"), xytext=(2, -10),
                    textcoords="offset points", fontsize=7, color="#0072B2")
    return rows


def periodogram_figure(result):
    """Return the periodograms of every method against period, with false-alarm levels.

    Each method's statistic is drawn as a smooth curve (evaluated again on a finer grid when
    the search used few trial frequencies), its trial points as dots, the adopted period as a
    red line, its named aliases as numbered dotted lines (listed in the legend) and the
    statistic at false-alarm probabilities `FAP_LEVELS` as dashed grey lines.

    Parameters
    ----------
    result : `~photpipe.rotation.search.RotationResult`

    Returns
    -------
    figure : `matplotlib.figure.Figure`

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from photpipe.rotation import reduce_lightcurve, search_rotation, synthetic_lightcurve
    >>> table, _ = synthetic_lightcurve(rng=np.random.default_rng(2))
    >>> res = search_rotation(reduce_lightcurve(table), min_period=3 * u.h, max_period=20 * u.h,
    ...                       n_bootstrap=0, rng=np.random.default_rng(2))
    >>> fig = periodogram_figure(res)
    >>> len(fig.axes), fig.axes[-1].get_xlabel()
    (3, 'period (h)')
    """
    pgs = result.periodograms
    fig, axes = new_figure(len(pgs), figsize=(WIDTH, 2.2 * len(pgs) + 0.8), sharex=True)
    p_adopt = result.period.to_value(u.h)
    for ax, (name, pg) in zip(axes, pgs.items()):
        fine = _fine_periodogram(result, name, pg)
        period = 24.0 / np.asarray(fine.frequency, dtype=float)
        ax.plot(period, fine.statistic, lw=0.9, color="0.15")
        ax.plot(24.0 / np.asarray(pg.frequency, dtype=float), pg.statistic, ".", ms=3,
                color="0.45", label=f"trial periods of the search ({len(pg.frequency)})")
        ax.axvline(p_adopt, color=PALETTE["post"], lw=1.2, alpha=0.8,
                   label=f"adopted {result.period.to_value(u.h):.4f} h")
        for level, ls in zip(FAP_LEVELS, ("--", ":"), strict=True):
            y = _fap_level(fine, level)
            if y is not None:
                ax.axhline(y, color=PALETTE["limit"], ls=ls, lw=1,
                           label=f"false-alarm probability {level:g}")
        ax.set_ylabel(pg.statistic_name, fontsize=8)
        ax.set_title(name, fontsize=9, loc="left")
        if pg.lower_is_better:
            ax.invert_yaxis()
    shown = (float(np.min(24.0 / pgs[next(iter(pgs))].frequency)),
             float(np.max(24.0 / pgs[next(iter(pgs))].frequency)))
    aliases = []
    for ax in axes:
        aliases = _mark_aliases(ax, result, shown)
    for n, row in enumerate(aliases, start=1):
        axes[0].plot([], [], " ", label=f"{n}: {row['name']}")
    axes[0].legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    for ax in axes[1:]:
        ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    log_axis(axes[-1], "x")
    axes[-1].set_xlabel("period (h)")
    return fig


def phased_figure(result):
    """Return the lightcurve folded on the adopted period, with the fitted model.

    Parameters
    ----------
    result : `~photpipe.rotation.search.RotationResult`

    Returns
    -------
    figure : `matplotlib.figure.Figure`
    """
    lc, fit = result.lightcurve, result.fit
    phase = fit.phase(lc.epoch_mjd)
    fig, (ax,) = new_figure(figsize=(7, 4))
    _points_by_site(ax, np.tile(lc.site, 2), np.concatenate([phase, phase + 1]),
                    np.tile(result.magnitudes, 2), np.tile(lc.mag_err, 2), alpha=0.7)
    grid = np.linspace(0, 2, 800)
    ax.plot(grid, fit.predict(fit.t0 + grid / fit.frequency), color="k", lw=1.2,
            label=f"Fourier order {fit.order}")
    ax.invert_yaxis()
    label_axes(ax, xlabel=f"rotational phase (P = {result.period.to_value(u.h):.4f} h)",
               ylabel="reduced magnitude m(1,1,0)",
               title=f"{result.shape['choice']}, amplitude "
                     f"{result.amplitude.to_value(u.mag):.3f} mag",
               title_size=9, legend_size=7)
    return fig


def residuals_figure(result):
    """Return the residuals from the adopted model against time.

    Parameters
    ----------
    result : `~photpipe.rotation.search.RotationResult`

    Returns
    -------
    figure : `matplotlib.figure.Figure`
    """
    lc, fit = result.lightcurve, result.fit
    resid = result.magnitudes - fit.predict(lc.epoch_mjd)
    fig, (ax,) = new_figure(figsize=(8, 3))
    _points_by_site(ax, lc.site, mjd_to_dates(lc.epoch_mjd), resid, lc.mag_err)
    ax.axhline(0, color="k", lw=0.8)
    date_axis(ax)
    label_axes(ax, xlabel="date (UTC, at emission: light-time corrected)",
               ylabel="observed - model (mag)", title=f"χ²/dof = {fit.chi2_reduced:.2f}",
               title_size=9, legend_size=7)
    return fig
