"""Figures of a rotation search, as matplotlib Figure objects (the caller saves them)."""

import numpy as np
from astropy import units as u

from photpipe._plotting import label_axes, new_figure

__all__ = ["periodogram_figure", "phased_figure", "residuals_figure"]


def _points_by_site(ax, sites, x, y, yerr, **style):
    """Draw the points with error bars, one colour and legend entry per observing site."""
    for site in sorted(set(sites)):
        sel = sites == site
        ax.errorbar(x[sel], y[sel], yerr[sel], fmt=".", ms=3, lw=0.5, label=site or "points",
                    **style)


def periodogram_figure(result):
    """Return the periodograms of every method, the adopted period and its aliases marked.

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
    >>> len(periodogram_figure(res).axes)
    3
    """
    pgs = result.periodograms
    fig, axes = new_figure(len(pgs), figsize=(8, 2.2 * len(pgs) + 0.6), sharex=True)
    f_adopt = result.fit.frequency
    for ax, (name, pg) in zip(axes, pgs.items()):
        ax.plot(pg.frequency, pg.statistic, lw=0.7, color="0.2")
        ax.axvline(f_adopt, color="tab:red", lw=1, alpha=0.7, label=f"adopted "
                   f"{result.period.to_value(u.h):.4f} h")
        for row in result.aliases[:4]:
            ax.axvline(float(row["frequency"].to_value(1 / u.day)), color="tab:blue", ls=":",
                       lw=1)
            ax.annotate(str(row["name"]).replace("adopted ", ""),
                        (float(row["frequency"].to_value(1 / u.day)), 1.0),
                        xycoords=("data", "axes fraction"), fontsize=7, color="tab:blue",
                        rotation=90, va="top", ha="right")
        ax.set_ylabel(pg.statistic_name, fontsize=8)
        ax.set_title(name, fontsize=9, loc="left")
        if pg.lower_is_better:
            ax.invert_yaxis()
    axes[0].legend(fontsize=7, loc="upper right")
    axes[-1].set_xlabel("frequency (cycles per day)")
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
    t0 = np.floor(lc.epoch_mjd.min())
    fig, (ax,) = new_figure(figsize=(8, 3))
    _points_by_site(ax, lc.site, lc.epoch_mjd - t0, resid, lc.mag_err)
    ax.axhline(0, color="k", lw=0.8)
    label_axes(ax, xlabel=f"days since MJD {t0:.0f} (emission time)",
               ylabel="observed - model (mag)", title=f"χ²/dof = {fit.chi2_reduced:.2f}",
               title_size=9, legend_size=7)
    return fig
