"""Figure set-up shared by the figure modules: a stack of axes, and their labels and legend.

Figures are built as `matplotlib.figure.Figure` objects, never through pyplot's global state,
so they are safe in batch runs, threads and on machines without a display.
"""

from matplotlib.figure import Figure

__all__ = ["new_figure", "label_axes"]


def new_figure(nrows=1, *, figsize, sharex=False, grid=False):
    """Return a figure with ``nrows`` axes stacked in one column, and the axes.

    Parameters
    ----------
    nrows : int, optional
        Number of axes, top to bottom.
    figsize : tuple of float
        Width and height in inches.
    sharex : bool, optional
        Share the x axis between the axes.
    grid : bool, optional
        Draw a light grid behind the data of every axis.

    Returns
    -------
    fig : `matplotlib.figure.Figure`
    axes : ndarray of `matplotlib.axes.Axes`
        One-dimensional, ``nrows`` long (also for one axis).

    Examples
    --------
    >>> fig, axes = new_figure(2, figsize=(6, 4), sharex=True)
    >>> len(axes), len(fig.axes)
    (2, 2)
    """
    fig = Figure(figsize=figsize, layout="constrained")
    axes = fig.subplots(nrows, 1, sharex=sharex, squeeze=False)[:, 0]
    if grid:
        for ax in axes:
            ax.grid(True, color="0.88", linewidth=0.6)
            ax.set_axisbelow(True)
    return fig, axes


def label_axes(ax, *, xlabel, ylabel, title, title_size=None, legend_size=8, legend_loc="best"):
    """Set an axis's labels and title and draw its legend.

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
    ax.legend(fontsize=legend_size, loc=legend_loc)
