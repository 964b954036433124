"""Multi-harmonic Fourier-series periodogram with the order chosen by the data."""

import numpy as np
from scipy import stats

from photpipe.rotation.aliases import periodogram_peaks
from photpipe.rotation.fit import fit_fourier_series, linear_chi2
from photpipe.rotation.harmonic_sums import harmonic_chi2
from photpipe.rotation.periodogram import Periodogram, fap_from_power

__all__ = ["fourier_periodogram", "choose_order", "refine_order_peaks", "ORDER_CRITERIA"]


def _order_by_bic(cross, n_points, *, p_threshold=None):
    """Order minimising ``N ln(χ²/N) + k ln N`` at each order's best frequency."""
    best = np.diag(cross)
    orders = np.arange(1, best.size + 1)
    bic = n_points * np.log(best / n_points) + (2 * orders + 2) * np.log(n_points)
    return int(orders[np.argmin(bic)]), {"bic": [float(b) for b in bic]}


def _order_by_ftest(cross, n_points, *, p_threshold=1e-3):
    """Raise the order while one more harmonic lowers χ² significantly (F test)."""
    order, p_values = 1, []
    for m in range(1, cross.shape[0]):
        dof = n_points - (2 * (m + 1) + 2)
        fstat = ((cross[m - 1, m] - cross[m, m]) / 2) / (cross[m, m] / dof)
        p = float(stats.f.sf(fstat, 2, dof))
        p_values.append(p)
        if p >= p_threshold:
            break
        order = m + 1
    return order, {"f_test_p": p_values}


#: Criterion name -> function(cross, n_points) -> (order, details), where ``cross[j, k]`` is the
#: χ² of order j + 1 at the best frequency of order k + 1.
ORDER_CRITERIA = {
    "bic": _order_by_bic,
    "f-test": _order_by_ftest,
}


def refine_order_peaks(t, y, dy, chi2, grid, *, n_peaks=3):
    """Refine each order's best grid frequencies by a least-squares fit with the frequency free.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), magnitudes and their 1-σ errors.
    chi2 : ndarray, shape (max_order, nf)
        χ² of each order on the grid (:func:`~photpipe.rotation.harmonic_sums.harmonic_chi2`).
    grid : `~photpipe.rotation.grid.FrequencyGrid`
        The grid ``chi2`` was computed on.
    n_peaks : int, optional
        Grid peaks of each order refined; the best refined one is kept.

    Returns
    -------
    frequency : ndarray, shape (max_order,)
        Refined best frequency of each order (1/day).
    cross : ndarray, shape (max_order, max_order)
        ``cross[j, k]``: χ² of order ``j + 1`` at the refined best frequency of order ``k + 1``.

    Notes
    -----
    A grid of spacing ``1/(oversample T)`` misses a peak's top by up to half a step. For the
    ``k``-th harmonic the phase then drifts by up to ``k`` times as much over the baseline, so a
    strong signal loses tens in χ² on the grid, by an amount that depends on where the grid
    points fall for each order. Comparing orders on those grid values lets, for a symmetric
    double-peaked lightcurve at frequency f, a three-harmonic curve at ``2f/3`` (whose third
    harmonic is the dominant ``2f``) beat the curve at ``f`` by chance, giving 1.5 times the
    period. Each order's peak is therefore polished by
    :func:`~photpipe.rotation.fit.fit_fourier_series` before the orders are compared.

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.rotation.grid import frequency_grid
    >>> from photpipe.rotation.harmonic_sums import harmonic_chi2
    >>> from astropy import units as u
    >>> rng = np.random.default_rng(0)
    >>> t = np.sort(rng.uniform(0, 10, 300))
    >>> y = 0.3 * np.cos(4 * np.pi * 1.5 * t) + rng.normal(0, 0.02, 300)
    >>> grid = frequency_grid(t, min_period=6 * u.h, max_period=48 * u.h)
    >>> chi2, _ = harmonic_chi2(t, y, np.full(300, 0.02), grid.f0, grid.df, grid.n, max_order=2)
    >>> f, cross = refine_order_peaks(t, y, np.full(300, 0.02), chi2, grid)
    >>> round(float(f[0]), 3), bool(abs(cross[0, 0] - cross[1, 1]) < 10)
    (3.0, True)
    """
    max_order = chi2.shape[0]
    best_f = np.empty(max_order)
    for j in range(max_order):
        fits = [fit_fourier_series(t, y, dy, float(grid.frequency[i]), j + 1,
                                   search_half_width=grid.df, n_search=5)
                for i in periodogram_peaks(-chi2[j], n_peaks=n_peaks, distance=2)]
        good = [f for f in fits if grid.f0 - grid.df <= f.frequency <= grid.f_max + grid.df]
        best_f[j] = (min(good, key=lambda f: f.chi2).frequency if good
                     else float(grid.frequency[np.argmin(chi2[j])]))
    cross = np.array([[linear_chi2(t, y, dy, best_f[k], j + 1) for k in range(max_order)]
                      for j in range(max_order)])
    return best_f, cross


def choose_order(chi2, n_points, *, criterion="bic", p_threshold=1e-3, cross=None):
    """Choose the number of harmonics from the χ² of each order.

    Parameters
    ----------
    chi2 : ndarray, shape (max_order, nf)
        χ² of each order at each trial frequency.
    n_points : int
        Number of data points.
    criterion : {"bic", "f-test"}, optional
        Bayesian information criterion with the error scale fitted, or successive F tests.
    p_threshold : float, optional
        Significance an added harmonic needs under ``"f-test"``.
    cross : ndarray, shape (max_order, max_order), optional
        χ² of each order at each order's refined best frequency (:func:`refine_order_peaks`);
        when None, the grid's best values are used.

    Returns
    -------
    order : int
    details : dict
        The criterion's values per order.

    Notes
    -----
    Harris et al. (1989, Icarus 77, 171) fit Fourier series of increasing order and keep the
    lowest order beyond which the residuals stop falling significantly. Both criteria here are
    scale-free: ``N ln(χ²/N)`` is the Gaussian log-likelihood with the variance fitted, and the F
    test compares variances.

    Examples
    --------
    >>> import numpy as np
    >>> chi2 = np.array([[400.0, 500.0], [100.0, 480.0], [99.0, 470.0]])
    >>> choose_order(chi2, 100)[0]
    2
    """
    if cross is None:
        at = np.argmin(chi2, axis=1)
        cross = chi2[:, at]
    fn = ORDER_CRITERIA[criterion]
    return fn(np.asarray(cross, dtype=float), n_points, p_threshold=p_threshold)


def fourier_periodogram(t, y, dy, grid, *, max_order=4, criterion="bic", p_threshold=1e-3,
                        harmonics=None, refine=True):
    """Return the Fourier-series periodogram at the order the data support.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), magnitudes and their 1-σ errors.
    grid : `~photpipe.rotation.grid.FrequencyGrid`
        Trial frequencies.
    max_order : int, optional
        Highest number of harmonics tried.
    criterion : {"bic", "f-test"}, optional
        How the order is chosen (see :func:`choose_order`).
    p_threshold : float, optional
        Significance threshold of the F test.
    harmonics : tuple, optional
        ``(chi2, chi2_ref)`` already computed by
        :func:`~photpipe.rotation.harmonic_sums.harmonic_chi2` on the same data and grid with at
        least the orders tried here; the orders beyond them are ignored.
    refine : bool, optional
        Polish each order's best grid peaks by a fit with the frequency free before the orders
        are compared (:func:`refine_order_peaks`); ``info["refined_frequency"]`` then holds the
        chosen order's polished frequency.

    Returns
    -------
    periodogram : `~photpipe.rotation.periodogram.Periodogram`
        ``statistic`` is ``1 - χ²_m(f)/χ²_ref`` at the chosen order m; ``info`` holds the order
        and the criterion's values.

    Notes
    -----
    ``V(t) = c0 + Σ_{k=1..m} [a_k cos(2πk(t - t0)/P) + b_k sin(2πk(t - t0)/P)]``
    (Harris et al. 1989, Icarus 77, 171, eq. 1), fitted by weighted least squares at every trial
    frequency for every order at once (:func:`~photpipe.rotation.harmonic_sums.harmonic_chi2`).

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.rotation.grid import FrequencyGrid
    >>> rng = np.random.default_rng(0)
    >>> t = np.sort(rng.uniform(0, 10, 300))
    >>> y = 0.3 * np.cos(4 * np.pi * 1.5 * t) + 0.1 * np.cos(2 * np.pi * 1.5 * t)
    >>> pg = fourier_periodogram(t, y, np.full(300, 0.02), FrequencyGrid(1.0, 0.01, 101, 10))
    >>> round(pg.best_frequency, 2), pg.info["order"]
    (1.5, 2)
    """
    max_order = min(max_order, max(1, (len(t) - 3) // 2 - 1))
    if harmonics is None or harmonics[0].shape[0] < max_order:
        harmonics = harmonic_chi2(t, y, dy, grid.f0, grid.df, grid.n, max_order=max_order)
    chi2, chi2_ref = harmonics[0][:max_order], harmonics[1]
    refined, cross = (refine_order_peaks(t, y, dy, chi2, grid) if refine
                      else (None, None))
    order, details = choose_order(chi2, len(t), criterion=criterion, p_threshold=p_threshold,
                                  cross=cross)
    if refine:
        details["refined_frequency"] = float(refined[order - 1])
    power = 1.0 - chi2[order - 1] / chi2_ref
    fap = fap_from_power(power, len(t), 2 * order, grid.n_independent)
    info = {"order": order, "max_order": max_order, "criterion": criterion, **details}
    return Periodogram("fourier", grid.frequency, power, power, fap,
                       f"power (order {order})", info=info)
