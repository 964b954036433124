"""Phase dispersion minimisation (Stellingwerf 1978), vectorised over the frequency grid."""

import numpy as np

from photpipe.rotation.periodogram import Periodogram, fap_from_theta

__all__ = ["pdm_theta", "pdm_periodogram"]

_TWO64 = 2.0**64


def _fixed_point(x):
    """Fractional part of ``x`` as a uint64 fraction of a cycle (2**-64 resolution)."""
    frac = np.mod(x, 1.0)
    hi = np.floor(frac * 2.0**32)
    lo = np.floor((frac * 2.0**32 - hi) * 2.0**32)
    return (hi.astype(np.uint64) << np.uint64(32)) + lo.astype(np.uint64)


def pdm_theta(t, y, dy, f0, df, nf, *, n_bins=10, n_covers=2, weighted=True,
              chunk_elements=2**19):
    r"""Return Stellingwerf's Θ at frequencies ``f0 + k df``, k = 0..nf-1.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), values and 1-σ errors (errors are used only when ``weighted``).
    f0, df : float
        First frequency and spacing (1/day).
    nf : int
        Number of frequencies.
    n_bins : int, optional
        Phase bins per cover (bin width ``1/n_bins``).
    n_covers : int, optional
        Number of bin sets, each shifted by ``1/(n_bins n_covers)`` in phase.
    weighted : bool, optional
        Weight points by ``1/dy²`` (normalised to mean 1); False gives Stellingwerf's
        unweighted statistic.
    chunk_elements : int, optional
        (point, frequency) pairs handled at a time.

    Returns
    -------
    theta : ndarray, shape (nf,)

    Notes
    -----
    Stellingwerf (1978, ApJ 224, 953, eqs. 1-3): with ``M`` bins over all covers, ``n_j`` points
    and variance ``s_j²`` in bin j,

    .. math::

        s^2 = \frac{\sum_j (n_j - 1) s_j^2}{\sum_j n_j - M}, \qquad
        σ^2 = \frac{\sum_i (y_i - \bar y)^2}{N - 1}, \qquad Θ = s^2 / σ^2 .

    Weighted sums of squares in a bin are ``Σ w y² - (Σ w y)² / Σ w``; as every point falls in
    exactly one bin of each cover, only the per-bin ``Σ w`` and ``Σ w y`` vary with frequency.
    Phases are kept as 64-bit fixed-point fractions of a cycle, ``φ_k = φ_0 + k δφ (mod 2^64)``,
    so the modulo is the integer overflow itself; the bins of all covers are sums of
    ``n_bins n_covers`` narrow bins.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(8) / 8.0
    >>> y = np.array([0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 1.0, 1.0])
    >>> theta = pdm_theta(t, y, np.ones(8), 1.0, 1.0, 2, n_bins=2, n_covers=1)
    >>> [round(float(v), 4) for v in theta]
    [1.1667, 0.0]
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    n = t.size
    w = 1.0 / np.asarray(dy, dtype=float) ** 2 if weighted else np.ones(n)
    w = w / w.mean()
    y = y - np.sum(w * y) / np.sum(w)
    wy = w * y
    sum_wyy = float(np.sum(wy * y))
    sigma2 = sum_wyy / (n - 1)

    n_narrow = n_bins * n_covers
    tp = t - t.min()
    start = _fixed_point(f0 * tp)
    step = _fixed_point(df * tp)
    ch = int(max(1, min(nf, chunk_elements // max(n, 1))))
    w_rep = np.repeat(w, ch)
    wy_rep = np.repeat(wy, ch)
    offsets = (np.arange(ch, dtype=np.uint64) * np.uint64(n_narrow))[None, :]
    phase = np.empty((n, ch), dtype=np.uint64)
    sh32, n_narrow_u = np.uint64(32), np.uint64(n_narrow)
    theta = np.empty(nf)
    for k0 in range(0, nf, ch):
        m = min(ch, nf - k0)
        if m != ch:
            phase = phase[:, :m]
            w_rep, wy_rep = np.repeat(w, m), np.repeat(wy, m)
            offsets = offsets[:, :m]
        k = np.arange(k0, k0 + m, dtype=np.uint64)
        np.multiply(step[:, None], k[None, :], out=phase)  # wraps modulo 2**64 by design
        phase += start[:, None]
        # narrow bin = floor(phase * n_narrow): top 32 bits times n_narrow, top part of that
        phase >>= sh32
        phase *= n_narrow_u
        phase >>= sh32
        phase += offsets
        idx = phase.reshape(-1).view(np.int64)
        sw = np.bincount(idx, weights=w_rep, minlength=m * n_narrow).reshape(m, n_narrow)
        swy = np.bincount(idx, weights=wy_rep, minlength=m * n_narrow).reshape(m, n_narrow)
        # wide bins of every cover: sums of n_covers consecutive narrow bins, cyclically
        wide_w = sw.copy()
        wide_wy = swy.copy()
        for i in range(1, n_covers):
            wide_w += np.roll(sw, -i, axis=1)
            wide_wy += np.roll(swy, -i, axis=1)
        filled = wide_w > 0
        between = np.sum(np.where(filled, wide_wy**2 / np.where(filled, wide_w, 1.0), 0.0),
                         axis=1)
        dof = n_covers * n - filled.sum(axis=1)
        within = (n_covers * sum_wyy - between) / np.maximum(dof, 1)
        theta[k0:k0 + m] = within / sigma2
    return theta


def pdm_periodogram(t, y, dy, grid, *, n_bins=10, n_covers=2, weighted=True):
    """Return the PDM periodogram (Θ, lower is better) of a lightcurve on a grid.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Epochs (days), magnitudes and their 1-σ errors.
    grid : `~photpipe.rotation.grid.FrequencyGrid`
        Trial frequencies.
    n_bins, n_covers : int, optional
        Stellingwerf's bin structure (default 10 bins, 2 covers).
    weighted : bool, optional
        Weight the points by their errors.

    Returns
    -------
    periodogram : `~photpipe.rotation.periodogram.Periodogram`
        ``statistic`` is Θ; ``score`` is ``1 - Θ``.

    Notes
    -----
    See :func:`pdm_theta`. PDM makes no assumption on the lightcurve's shape, so it also dips at
    multiples of the true period (the lightcurve folded on 2P is as tight as on P).

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.rotation.grid import FrequencyGrid
    >>> t = np.linspace(0, 10, 300)
    >>> y = 0.3 * np.cos(2 * np.pi * 2.0 * t)
    >>> pg = pdm_periodogram(t, y, np.full(300, 0.05), FrequencyGrid(1.0, 0.01, 151, 10))
    >>> round(pg.best_frequency, 2)
    2.0
    """
    theta = pdm_theta(t, y, dy, grid.f0, grid.df, grid.n, n_bins=n_bins, n_covers=n_covers,
                      weighted=weighted)
    fap = fap_from_theta(theta, len(t), n_bins, grid.n_independent)
    info = {"n_bins": n_bins, "n_covers": n_covers, "weighted": weighted}
    return Periodogram("pdm", grid.frequency, theta, 1.0 - theta, fap, "Θ (PDM)",
                       lower_is_better=True, info=info)
