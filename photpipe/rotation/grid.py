"""The trial-frequency grid of a period search, chosen from the baseline and the sampling."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value

__all__ = ["FrequencyGrid", "frequency_grid"]


@dataclass(frozen=True)
class FrequencyGrid:
    """A regular grid of trial frequencies ``f_k = f0 + k df``, k = 0..n-1, in cycles per day.

    Attributes
    ----------
    f0, df : float
        First frequency and spacing (1/day).
    n : int
        Number of frequencies.
    baseline_d : float
        Time span of the data the grid was made for (days).

    Examples
    --------
    >>> g = FrequencyGrid(1.0, 0.5, 3, 20.0)
    >>> g.frequency
    array([1. , 1.5, 2. ])
    """

    f0: float
    df: float
    n: int
    baseline_d: float

    @property
    def frequency(self):
        """The trial frequencies (ndarray, 1/day)."""
        return self.f0 + self.df * np.arange(self.n)

    @property
    def f_max(self):
        """The highest trial frequency (1/day)."""
        return self.f0 + self.df * (self.n - 1)

    @property
    def n_independent(self):
        """Effective number of independent frequencies, ``max(1, (f_max - f0) T)``.

        Notes
        -----
        A peak has a width of about ``1/T``, so a band ``Δf`` holds about ``Δf T`` independent
        trials (Horne & Baliunas 1986, ApJ 302, 757; VanderPlas 2018, ApJS 236, 16, §7.4).
        """
        return max(1.0, (self.f_max - self.f0) * self.baseline_d)


def frequency_grid(t, *, min_period, max_period, oversample=10, max_frequencies=2_000_000):
    """Return the trial-frequency grid for times ``t`` and a range of rotation periods.

    Parameters
    ----------
    t : ndarray or `~astropy.units.Quantity` ['time']
        Observation epochs (days when plain numbers).
    min_period, max_period : `~astropy.units.Quantity` ['time']
        Shortest and longest trial rotation period.
    oversample : int, optional
        Grid points per peak width ``1/T``.
    max_frequencies : int, optional
        Refuse grids larger than this (the range or the baseline is implausible).

    Returns
    -------
    grid : FrequencyGrid

    Raises
    ------
    ValueError
        If the period range is empty or the grid would be too large.

    Notes
    -----
    The spacing is ``df = 1 / (oversample T)`` with T the baseline: a peak of width ``1/T`` is
    sampled ``oversample`` times, and 5-10 is the usual choice (VanderPlas 2018, ApJS 236, 16,
    §7.1). The grid runs from ``1/max_period`` to ``1/min_period``.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> g = frequency_grid(np.array([0.0, 10.0]), min_period=6 * u.h, max_period=48 * u.h)
    >>> g.f0, round(g.df, 3), g.n
    (0.5, 0.01, 351)
    """
    t = _as_days(t)
    pmin = as_positive_value(min_period, u.day, "min_period")
    pmax = as_positive_value(max_period, u.day, "max_period")
    if pmin >= pmax:
        msg = f"'min_period' ({pmin * 24:g} h) must be shorter than 'max_period' ({pmax * 24:g} h)"
        raise ValueError(msg)
    baseline = float(np.ptp(t))
    if not baseline > 0:
        msg = "the epochs span no time: a period cannot be searched for"
        raise ValueError(msg)
    f0, f1 = 1.0 / pmax, 1.0 / pmin
    df = 1.0 / (oversample * baseline)
    n = int(np.ceil((f1 - f0) / df)) + 1
    if n > max_frequencies:
        msg = (f"the grid would hold {n} frequencies (baseline {baseline:.1f} d, periods "
               f"{pmin * 24:g}-{pmax * 24:g} h, oversample {oversample}); narrow the period range "
               f"or raise 'max_frequencies'")
        raise ValueError(msg)
    return FrequencyGrid(f0, df, n, baseline)


def _as_days(t):
    """Return epochs as a float array in days (plain numbers are taken as days)."""
    if isinstance(t, u.Quantity):
        return np.asarray(t.to_value(u.day), dtype=float)
    return np.asarray(t, dtype=float)
