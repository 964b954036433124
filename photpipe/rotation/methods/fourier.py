"""Multi-harmonic Fourier-series periodogram with the order chosen by the data."""

import numpy as np
from scipy import stats

from photpipe.rotation.harmonic_sums import harmonic_chi2
from photpipe.rotation.periodogram import Periodogram, fap_from_power

__all__ = ["fourier_periodogram", "choose_order", "ORDER_CRITERIA"]


def _order_by_bic(chi2, n_points, *, p_threshold=None):
    """Order minimising ``N ln(χ²/N) + k ln N`` at each order's best frequency."""
    best = chi2.min(axis=1)
    orders = np.arange(1, chi2.shape[0] + 1)
    bic = n_points * np.log(best / n_points) + (2 * orders + 2) * np.log(n_points)
    return int(orders[np.argmin(bic)]), {"bic": [float(b) for b in bic]}


def _order_by_ftest(chi2, n_points, *, p_threshold=1e-3):
    """Raise the order while one more harmonic lowers χ² significantly (F test)."""
    order, p_values = 1, []
    for m in range(1, chi2.shape[0]):
        k = np.argmin(chi2[m])
        dof = n_points - (2 * (m + 1) + 2)
        fstat = ((chi2[m - 1, k] - chi2[m, k]) / 2) / (chi2[m, k] / dof)
        p = float(stats.f.sf(fstat, 2, dof))
        p_values.append(p)
        if p >= p_threshold:
            break
        order = m + 1
    return order, {"f_test_p": p_values}


#: Criterion name -> function(chi2 per order, n_points) -> (order, details).
ORDER_CRITERIA = {
    "bic": _order_by_bic,
    "f-test": _order_by_ftest,
}


def choose_order(chi2, n_points, *, criterion="bic", p_threshold=1e-3):
    """Choose the number of harmonics from the χ² of each order over the grid.

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
    fn = ORDER_CRITERIA[criterion]
    return fn(chi2, n_points, p_threshold=p_threshold)


def fourier_periodogram(t, y, dy, grid, *, max_order=4, criterion="bic", p_threshold=1e-3,
                        harmonics=None):
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
    order, details = choose_order(chi2, len(t), criterion=criterion, p_threshold=p_threshold)
    power = 1.0 - chi2[order - 1] / chi2_ref
    fap = fap_from_power(power, len(t), 2 * order, grid.n_independent)
    info = {"order": order, "max_order": max_order, "criterion": criterion, **details}
    return Periodogram("fourier", grid.frequency, power, power, fap,
                       f"power (order {order})", info=info)
