"""Figure of an orbit fit: residuals against time, site by site."""

import numpy as np

from photpipe._plotting import new_figure

__all__ = ["residual_figure"]


def residual_figure(solution, *, title="orbit residuals"):
    """Residuals (Δα cos δ and Δδ, arcsec) against time, one colour per site.

    Parameters
    ----------
    solution : `~photpipe.orbit.result.OrbitSolution`
    title : str, optional

    Returns
    -------
    fig : `matplotlib.figure.Figure`
        Two panels sharing the time axis; rejected observations as grey crosses. With more
        than 20 sites the colours repeat and the legend names the 20 largest only.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy.table import QTable
    >>> from astropy.time import Time
    >>> from types import SimpleNamespace
    >>> res = QTable({"stn": ["A", "A", "B"], "time": Time([60000.0, 60001, 60002], format="mjd"),
    ...               "d_ra_arcsec": [0.1, -0.2, 0.3], "d_dec_arcsec": [0.0, 0.1, -0.1],
    ...               "used": [True, True, False]})
    >>> fig = residual_figure(SimpleNamespace(residuals=res))
    >>> len(fig.axes)
    2
    """
    res = solution.residuals
    fig, axes = new_figure(2, figsize=(9, 6), sharex=True, grid=True)
    mjd = np.asarray(res["time"].utc.mjd, dtype=float)
    mjd0 = np.floor(mjd.min()) if mjd.size else 0.0
    stations, counts = np.unique(np.asarray(res["stn"], str), return_counts=True)
    named = set(stations[np.argsort(counts)[::-1][:20]])
    used = np.asarray(res["used"], bool)
    for k, stn in enumerate(stations):
        sel = (np.asarray(res["stn"], str) == stn) & used
        colour = f"C{k % 10}" if len(stations) <= 10 else _tab20(k)
        for ax, col in zip(axes, ("d_ra_arcsec", "d_dec_arcsec")):
            ax.plot(mjd[sel] - mjd0, np.asarray(res[col])[sel], ".", ms=4, color=colour,
                    label=stn if (ax is axes[0] and stn in named) else None)
    for ax, col in zip(axes, ("d_ra_arcsec", "d_dec_arcsec")):
        ax.plot(mjd[~used] - mjd0, np.asarray(res[col])[~used], "x", ms=5, color="0.5",
                label="rejected" if (ax is axes[0] and np.any(~used)) else None)
        ax.axhline(0.0, color="0.3", lw=0.8)
    axes[0].set_ylabel("Δα cos δ (arcsec)")
    axes[1].set_ylabel("Δδ (arcsec)")
    axes[1].set_xlabel(f"days since MJD {mjd0:.0f} (UTC)")
    axes[0].set_title(title)
    if len(stations):
        axes[0].legend(fontsize=7, ncol=1 + len(named) // 11, loc="upper left",
                       bbox_to_anchor=(1.01, 1.0), frameon=False, title="site")
    return fig


def _tab20(k):
    from matplotlib import colormaps

    return colormaps["tab20"](k % 20)
