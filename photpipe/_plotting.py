"""The one figure style of photpipe: colours, figure set-up, labels, date and log axes.

Figures are built as `matplotlib.figure.Figure` objects, never through pyplot's global state,
so they are safe in batch runs, threads and on machines without a display.

Colours come from the palette of Okabe & Ito (2008, "Color Universal Design"), chosen so that
the common forms of colour blindness still tell them apart; markers differ as well, so the
figures also read in greyscale.
"""

import numpy as np
from astropy.time import Time
from matplotlib.dates import AutoDateLocator, ConciseDateFormatter
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

__all__ = ["PALETTE", "new_figure", "label_axes", "date_axis", "mjd_to_dates", "log_axis",
           "WIDTH"]

#: Colour-blind-safe colours (Okabe & Ito 2008) by role.
PALETTE = {
    "frames": "#56B4E9",      # sky blue
    "pre": "#0072B2",         # blue
    "post": "#D55E00",        # vermillion
    "trend": "#000000",       # black
    "outburst": "#CC79A7",    # reddish purple
    "nucleus": "#009E73",     # bluish green
    "reference": "#E69F00",   # orange
    "limit": "#999999",       # grey: upper limits, false-alarm levels
    "sun": "#F0E442",         # yellow: the direction to the Sun on images
}

#: Width of every figure in inches (one column of the report page).
WIDTH = 8.0


def new_figure(nrows=1, *, figsize=None, sharex=False, grid=True, ncols=1):
    """Return a figure with ``nrows`` x ``ncols`` axes, and the axes as a flat array.

    Parameters
    ----------
    nrows : int, optional
        Number of rows of axes, top to bottom.
    figsize : tuple of float, optional
        Width and height in inches (default `WIDTH` wide, 4.2 in high for one row).
    sharex : bool, optional
        Share the x axis between the axes.
    grid : bool, optional
        Draw a light grid behind the data of every axis.
    ncols : int, optional
        Number of columns of axes.

    Returns
    -------
    fig : `matplotlib.figure.Figure`
    axes : ndarray of `matplotlib.axes.Axes`
        One-dimensional, ``nrows * ncols`` long (also for one axis), row by row.

    Examples
    --------
    >>> fig, axes = new_figure(2, figsize=(6, 4), sharex=True)
    >>> len(axes), len(fig.axes)
    (2, 2)
    """
    if figsize is None:
        figsize = (WIDTH, 4.2 if nrows == 1 else 2.6 * nrows)
    fig = Figure(figsize=figsize, layout="constrained")
    axes = fig.subplots(nrows, ncols, sharex=sharex, squeeze=False).ravel()
    if grid:
        for ax in axes:
            ax.grid(True, color="0.88", linewidth=0.6)
            ax.set_axisbelow(True)
    return fig, axes


def label_axes(ax, *, xlabel, ylabel, title, title_size=None, legend_size=8, legend_loc="best"):
    """Set an axis's labels and title and draw its legend (when something is labelled).

    Parameters
    ----------
    ax : `matplotlib.axes.Axes`
    xlabel, ylabel, title : str
    title_size : float, optional
        Font size of the title (default matplotlib's).
    legend_size : float, optional
        Font size of the legend.
    legend_loc : str, optional
        Where the legend goes (matplotlib's ``loc``).

    Examples
    --------
    >>> fig, (ax,) = new_figure(figsize=(4, 3))
    >>> _ = ax.plot([0, 1], [0, 1], label="line")
    >>> label_axes(ax, xlabel="x", ylabel="y", title="a line")
    >>> ax.get_xlabel(), ax.get_title()
    ('x', 'a line')
    """
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    if title_size is None:
        ax.set_title(title)
    else:
        ax.set_title(title, fontsize=title_size)
    handles, _ = ax.get_legend_handles_labels()
    if handles:
        ax.legend(fontsize=legend_size, loc=legend_loc)


def mjd_to_dates(mjd):
    """MJD (UTC) values as `datetime.datetime` objects matplotlib can place on a date axis.

    Examples
    --------
    >>> mjd_to_dates([61375.5])[0].isoformat()[:16]
    '2026-12-01T12:00'
    """
    return Time(np.atleast_1d(np.asarray(mjd, dtype=float)), format="mjd", scale="utc").datetime


def date_axis(ax, *, which="x"):
    """Label a date axis compactly (``Dec 01 06:00`` ...); return the axis label text.

    Examples
    --------
    >>> fig, (ax,) = new_figure(figsize=(4, 3))
    >>> _ = ax.plot(mjd_to_dates([61375.0, 61376.0]), [1, 2])
    >>> date_axis(ax)
    'date (UTC)'
    """
    axis = ax.xaxis if which == "x" else ax.yaxis
    locator = AutoDateLocator(minticks=3, maxticks=8)
    axis.set_major_locator(locator)
    axis.set_major_formatter(ConciseDateFormatter(locator, show_offset=True))
    return "date (UTC)"


def log_axis(ax, which):
    """Make ``which`` ("x", "y" or "xy") of ``ax`` logarithmic with plain tick labels (100, 200).

    Examples
    --------
    >>> fig, (ax,) = new_figure(figsize=(4, 3))
    >>> _ = ax.plot([1, 10], [1, 100])
    >>> log_axis(ax, "xy")
    >>> ax.get_xscale(), ax.get_yscale()
    ('log', 'log')
    """
    fmt = FuncFormatter(lambda v, _pos: f"{v:g}")
    for name in which:
        axis = ax.xaxis if name == "x" else ax.yaxis
        (ax.set_xscale if name == "x" else ax.set_yscale)("log")
        axis.set_major_formatter(fmt)
        # minor labels only at 2 and 5 so they never run into each other
        axis.set_minor_locator(LogLocator(subs=(2.0, 5.0)))
        axis.set_minor_formatter(fmt if _span_decades(ax, name) < 1.5 else NullFormatter())


def _span_decades(ax, name):
    lo, hi = ax.get_xlim() if name == "x" else ax.get_ylim()
    if lo <= 0 or hi <= 0:
        return 0.0
    return abs(np.log10(hi / lo))
