"""The result of one period-search method over a frequency grid, and false-alarm probabilities."""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from scipy import stats

__all__ = ["Periodogram", "fap_from_power", "fap_from_theta"]


@dataclass(frozen=True)
class Periodogram:
    """One method's statistic over the trial frequencies.

    Attributes
    ----------
    method : str
        Name of the method (a key of `photpipe.rotation.methods.METHODS`).
    frequency : ndarray
        Trial frequencies (1/day).
    statistic : ndarray
        The method's own statistic (power for least squares, Θ for PDM).
    score : ndarray
        The same turned "higher is better" (power, or ``1 - Θ``), for peak finding.
    fap : ndarray
        False-alarm probability of each value over the whole grid.
    statistic_name : str
        What ``statistic`` is, for axis labels.
    lower_is_better : bool
        True when a signal shows as a minimum of ``statistic`` (PDM).
    info : dict
        Method details (harmonic order, bins, ...), JSON-friendly.
    """

    method: str
    frequency: np.ndarray
    statistic: np.ndarray
    score: np.ndarray
    fap: np.ndarray
    statistic_name: str
    lower_is_better: bool = False
    info: dict = field(default_factory=dict)

    @property
    def best_index(self):
        """Index of the best trial frequency."""
        return int(np.nanargmax(self.score))

    @property
    def best_frequency(self):
        """The best trial frequency (1/day)."""
        return float(self.frequency[self.best_index])

    def to_table(self):
        """Return the periodogram as a QTable (frequency, period, statistic, fap)."""
        freq = self.frequency / u.day
        return QTable({"frequency": freq, "period": (1 / freq).to(u.h),
                       "statistic": self.statistic, "fap": self.fap},
                      meta={"method": self.method, "statistic": self.statistic_name,
                            **self.info})


def _grid_fap(p_single, n_independent):
    """``1 - (1 - p)^M`` computed without losing small probabilities."""
    p_single = np.clip(p_single, 0.0, 1.0)
    with np.errstate(divide="ignore"):
        return -np.expm1(n_independent * np.log1p(-p_single))


def fap_from_power(power, n_points, n_params, n_independent):
    """False-alarm probability of a least-squares power ``1 - χ²/χ²_ref``.

    Parameters
    ----------
    power : ndarray
        Fraction of the variance about the mean explained by the model.
    n_points : int
        Number of data points.
    n_params : int
        Number of parameters the model adds to the mean (2 per harmonic).
    n_independent : float
        Effective number of independent frequencies searched.

    Returns
    -------
    fap : ndarray

    Notes
    -----
    With noise only, ``F = [P / k] / [(1 - P) / (N - k - 1)]`` follows the F distribution with
    (k, N - k - 1) degrees of freedom at one frequency, whatever the error scale
    (Schwarzenberg-Czerny 1996, ApJ 460, L107); over M independent frequencies
    ``FAP = 1 - (1 - p)^M`` (Horne & Baliunas 1986, ApJ 302, 757).

    Examples
    --------
    >>> float(fap_from_power(0.0, 100, 2, 50.0))
    1.0
    """
    power = np.asarray(power, dtype=float)
    dof = n_points - n_params - 1
    with np.errstate(divide="ignore", invalid="ignore"):
        fstat = (power / n_params) / (np.maximum(1 - power, 1e-300) / dof)
    return _grid_fap(stats.f.sf(fstat, n_params, dof), n_independent)


def fap_from_theta(theta, n_points, n_bins, n_independent):
    """False-alarm probability of a PDM statistic Θ.

    Parameters
    ----------
    theta : ndarray
        Stellingwerf's Θ.
    n_points, n_bins : int
        Number of points and of phase bins (one cover).
    n_independent : float
        Effective number of independent frequencies searched.

    Returns
    -------
    fap : ndarray

    Notes
    -----
    For noise, ``Θ (N - M)/(N - 1)`` follows a Beta((N - M)/2, (M - 1)/2) distribution
    (Schwarzenberg-Czerny 1997, ApJ 489, 941); covers make the bins overlap, so this is an
    approximation for them.

    Examples
    --------
    >>> round(float(fap_from_theta(1.0, 100, 10, 50.0)), 6)
    1.0
    """
    theta = np.asarray(theta, dtype=float)
    a, b = (n_points - n_bins) / 2, (n_bins - 1) / 2
    p_single = stats.beta.cdf(theta * (n_points - n_bins) / (n_points - 1), a, b)
    return _grid_fap(p_single, n_independent)
