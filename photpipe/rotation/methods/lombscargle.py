"""Generalised Lomb-Scargle periodogram with a floating mean and several harmonics."""

import numpy as np
from astropy.timeseries import LombScargle

from photpipe.rotation.harmonic_sums import harmonic_chi2
from photpipe.rotation.periodogram import Periodogram, fap_from_power

__all__ = ["lomb_scargle_periodogram", "LS_ENGINES"]


def _power_trig_sums(t, y, dy, grid, nterms, harmonics=None):
    if harmonics is None or harmonics[0].shape[0] < nterms:
        harmonics = harmonic_chi2(t, y, dy, grid.f0, grid.df, grid.n, max_order=nterms)
    chi2, chi2_ref = harmonics
    return 1.0 - chi2[nterms - 1] / chi2_ref


def _power_astropy(t, y, dy, grid, nterms, harmonics=None):
    ls = LombScargle(t, y, dy, nterms=nterms, fit_mean=True, center_data=True)
    return np.asarray(ls.power(grid.frequency, method="fast" if nterms == 1 else "fastchi2",
                               normalization="standard"))


#: Engine name -> function giving the standard-normalised power on a grid.
LS_ENGINES = {
    "trig-sums": _power_trig_sums,
    "astropy": _power_astropy,
}


def lomb_scargle_periodogram(t, y, dy, grid, *, nterms=2, engine="trig-sums",
                             harmonics=None):
    """Return the generalised Lomb-Scargle periodogram of a lightcurve on a grid.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), magnitudes and their 1-σ errors.
    grid : `~photpipe.rotation.grid.FrequencyGrid`
        Trial frequencies.
    nterms : int, optional
        Number of harmonics fitted at each frequency (2 lets a double-peaked lightcurve show at
        its rotation frequency).
    engine : {"trig-sums", "astropy"}, optional
        ``"trig-sums"`` solves all frequencies at once from FFT trigonometric sums (see
        :func:`~photpipe.rotation.harmonic_sums.harmonic_chi2`); ``"astropy"`` calls
        `astropy.timeseries.LombScargle` (same numbers, slower for ``nterms > 1``).
    harmonics : tuple, optional
        ``(chi2, chi2_ref)`` already computed by
        :func:`~photpipe.rotation.harmonic_sums.harmonic_chi2` on the same data and grid with
        ``max_order >= nterms`` (e.g. for the Fourier-series periodogram); used by the
        ``"trig-sums"`` engine instead of computing them again.

    Returns
    -------
    periodogram : `~photpipe.rotation.periodogram.Periodogram`
        ``statistic`` is the standard-normalised power ``1 - χ²(f)/χ²_ref``.

    Notes
    -----
    Floating-mean least-squares periodogram of Zechmeister & Kürster (2009, A&A 496, 577),
    extended to ``nterms`` harmonics (Schwarzenberg-Czerny 1996, ApJ 460, L107; VanderPlas 2018,
    ApJS 236, 16, §6). False-alarm probabilities from the F distribution over the grid's
    independent frequencies (:func:`~photpipe.rotation.periodogram.fap_from_power`).

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.rotation.grid import FrequencyGrid
    >>> t = np.linspace(0, 10, 300)
    >>> y = 0.3 * np.cos(2 * np.pi * 2.0 * t)
    >>> grid = FrequencyGrid(1.0, 0.01, 201, 10)
    >>> pg = lomb_scargle_periodogram(t, y, np.full(300, 0.05), grid, nterms=1)
    >>> round(pg.best_frequency, 2)
    2.0
    """
    power = LS_ENGINES[engine](t, y, dy, grid, nterms, harmonics)
    fap = fap_from_power(power, len(t), 2 * nterms, grid.n_independent)
    return Periodogram("lomb-scargle", grid.frequency, power, power, fap,
                       f"power ({nterms} harmonics)", info={"nterms": nterms, "engine": engine})
