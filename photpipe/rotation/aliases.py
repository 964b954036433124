"""The spectral window of the sampling, its named peaks, and how candidates relate to a period.

Gaps between nights repeat with the day (and with the pattern of sites and weather), so every
true peak is accompanied by copies shifted by the window's peaks. This module computes the
window, names its peaks, and says what a candidate frequency is relative to the adopted one.
"""

import numpy as np
from astropy import units as u
from astropy.table import QTable
from scipy.signal import find_peaks

from photpipe.rotation.trigsums import trig_sums

__all__ = ["spectral_window", "window_peaks", "describe_relation", "periodogram_peaks",
           "SYNODIC_MONTH_D"]

#: Mean synodic month (days; common practice): a campaign's dark-time pattern repeats with it.
SYNODIC_MONTH_D = 29.530589


def spectral_window(t, f0, df, nf):
    """Return the spectral window ``|Σ_j exp(2πi f t_j)|² / N²`` on a frequency grid.

    Parameters
    ----------
    t : ndarray, shape (n,)
        Epochs (days).
    f0, df : float
        First frequency and spacing (1/day).
    nf : int
        Number of frequencies.

    Returns
    -------
    frequency, power : ndarray, shape (nf,)
        Frequencies (1/day) and window power (1 at f = 0).

    Notes
    -----
    The periodogram of a pure sinusoid sampled at ``t`` is the window shifted to the signal's
    frequency (Deeming 1975, Ap&SS 36, 137; Roberts et al. 1987, AJ 93, 968).

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(20.0)  # one point a day
    >>> f, w = spectral_window(t, 0.0, 0.05, 41)
    >>> round(float(w[0]), 6), round(float(w[20]), 6)
    (1.0, 1.0)
    """
    t = np.asarray(t, dtype=float)
    s = trig_sums(t, np.ones(t.size), f0, df, nf)
    return f0 + df * np.arange(nf), np.abs(s) ** 2 / t.size**2


def _window_name(fw, baseline_d, multi_site):
    k = int(round(fw))
    tol = max(0.02, 1.0 / baseline_d)
    if k >= 1 and abs(fw - k) < tol:
        return "1/day" if k == 1 else f"{k}/day"
    if baseline_d > 1.5 * SYNODIC_MONTH_D and abs(fw - 1 / SYNODIC_MONTH_D) < 0.5 / baseline_d:
        return "1/month"
    kind = "site pattern" if multi_site else "sampling pattern"
    return f"{kind} 1/({1 / fw:.2f} d)"


def window_peaks(t, *, sites=None, f_max=3.5, min_power=0.1, max_peaks=6, oversample=10):
    """Return the strong peaks of the spectral window, named.

    Parameters
    ----------
    t : ndarray, shape (n,)
        Epochs (days).
    sites : array-like of str, optional
        Site of each point; with more than one site, unexplained peaks are named site patterns.
    f_max : float, optional
        Highest window frequency examined (1/day).
    min_power : float, optional
        Window power a peak needs to be kept.
    max_peaks : int, optional
        At most this many peaks, strongest first.
    oversample : int, optional
        Grid points per ``1/T``.

    Returns
    -------
    peaks : `~astropy.table.QTable`
        Columns ``name, frequency (1/d), period (d), power``, strongest first.

    Notes
    -----
    The central lobe (``f < 1.5/T``) is skipped; the peak near 1/day is always kept (if its
    power exceeds 0.02), as it is the alias every single-site campaign has. Peaks within
    ``max(0.02, 1/T)`` of an integer are ``k/day`` (common practice: nightly sampling from one
    longitude).

    Examples
    --------
    >>> import numpy as np
    >>> t = np.concatenate([n + np.linspace(0, 0.2, 10) for n in range(12)])
    >>> str(window_peaks(t)["name"][0])
    '1/day'
    """
    t = np.asarray(t, dtype=float)
    baseline = float(np.ptp(t))
    df = 1.0 / (oversample * baseline)
    nf = int(np.ceil(f_max / df)) + 1
    freq, power = spectral_window(t, 0.0, df, nf)
    start = int(np.ceil(1.5 / baseline / df))
    idx, _ = find_peaks(power[start:], height=min(min_power, 0.02), distance=oversample)
    idx = idx + start
    # keep the strong peaks, and the daily one however weak: it is the alias observers expect
    daily = idx[np.abs(freq[idx] - 1.0) < max(0.02, 1.0 / baseline)]
    keep = idx[power[idx] >= min_power]
    if daily.size:
        keep = np.union1d(keep, daily[np.argmax(power[daily])])
    idx = keep[np.argsort(power[keep])[::-1]][:max_peaks]
    if daily.size and not np.isin(daily[np.argmax(power[daily])], idx):
        idx = np.append(idx[:max_peaks - 1], daily[np.argmax(power[daily])])
    multi = sites is not None and len(set(np.asarray(sites, dtype=str))) > 1
    names = [_window_name(freq[i], baseline, multi) for i in idx]
    return QTable({"name": np.array(names, dtype=str),
                   "frequency": freq[idx] / u.day, "period": (1 / freq[idx]) * u.day,
                   "power": power[idx]})


def describe_relation(frequency, adopted, *, tolerance, window=None, max_ratio_error=0.05):
    """Say how a candidate frequency relates to the adopted rotation frequency.

    Parameters
    ----------
    frequency, adopted : float
        Candidate and adopted frequencies (1/day).
    tolerance : float
        Frequencies closer than this count as equal (1/day).
    window : `~astropy.table.QTable`, optional
        Named window peaks (:func:`window_peaks`).
    max_ratio_error : float, optional
        A relation is named only when the frequencies also agree to this fraction. On a short
        baseline the frequency ``tolerance`` is wide (half a cycle over the baseline can be a
        factor of two in frequency); without this cap a period 1.6 times the adopted one would
        be called "twice the period".

    Returns
    -------
    relation : str
        ``"adopted"``, ``"half period"``, ``"twice the period"``, ``"adopted + 1/day"``,
        ``"half period - 1/day"``, ..., or ``"unrelated"``.

    Examples
    --------
    >>> describe_relation(3.0, 1.5, tolerance=0.01)
    'half period'
    >>> from astropy.table import QTable
    >>> from astropy import units as u
    >>> w = QTable({"name": ["1/day"], "frequency": [1.0027] / u.day})
    >>> describe_relation(2.5, 1.5, tolerance=0.01, window=w)
    'adopted + 1/day'
    """
    bases = [("adopted", adopted), ("half period", 2 * adopted),
             ("twice the period", adopted / 2), ("2/3 of the period", 1.5 * adopted),
             ("3/2 of the period", adopted / 1.5), ("1/3 of the period", 3 * adopted)]
    def close(f):
        return abs(frequency - f) < min(tolerance, max_ratio_error * abs(f))

    for name, f in bases:
        if close(f):
            return name
    if window is not None:
        for row in window:
            fw = float(row["frequency"].to_value(1 / u.day))
            for name, f in bases[:3]:
                for sign, text in ((1, "+"), (-1, "-")):
                    if close(f + sign * fw):
                        return f"{name} {text} {row['name']}"
    return "unrelated"


def periodogram_peaks(score, *, n_peaks=5, distance=5):
    """Return the indices of the highest local maxima of a score, best first.

    Examples
    --------
    >>> import numpy as np
    >>> periodogram_peaks(np.array([0, 3, 0, 0, 5, 0, 1, 0.0]), n_peaks=2, distance=1)
    array([4, 1])
    """
    score = np.nan_to_num(np.asarray(score, dtype=float), nan=-np.inf)
    idx, _ = find_peaks(np.concatenate([[-np.inf], score, [-np.inf]]), distance=distance)
    idx = idx - 1
    return idx[np.argsort(score[idx])[::-1]][:n_peaks]
