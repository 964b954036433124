"""Phase dispersion minimisation (Stellingwerf 1978), vectorised over the frequency grid."""

import numpy as np

from photpipe.rotation.periodogram import Periodogram, fap_from_theta

__all__ = ["pdm_theta", "pdm_periodogram", "BINNINGS"]

#: Work of one bin-edge crossing in units of one binned (point, frequency) pair (measured: about
#: 21 ns against 9.5 ns on a 2-core development machine, 10^4 points).
_CROSSING_COST = 2.2


def _fixed_point(x):
    """Fractional part of ``x`` as a uint64 fraction of a cycle (2**-64 resolution)."""
    frac = np.mod(x, 1.0)
    hi = np.floor(frac * 2.0**32)
    lo = np.floor((frac * 2.0**32 - hi) * 2.0**32)
    return (hi.astype(np.uint64) << np.uint64(32)) + lo.astype(np.uint64)


def _narrow_sums_direct(tp, w, wy, f0, df, k0, m, n_narrow):
    """Per-narrow-bin ``Σ w``, ``Σ w y`` at frequencies ``k0..k0+m-1``, binning every pair.

    Phases are 64-bit fixed-point fractions of a cycle, ``φ_k = φ_0 + k δφ (mod 2^64)``, so the
    modulo is the integer overflow itself. Cost: ``n m`` (point, frequency) pairs.
    """
    start = _fixed_point((f0 + k0 * df) * tp)
    step = _fixed_point(df * tp)
    k = np.arange(m, dtype=np.uint64)
    phase = np.multiply(step[:, None], k[None, :])  # wraps modulo 2**64 by design
    phase += start[:, None]
    # narrow bin = floor(phase * n_narrow): top 32 bits times n_narrow, top part of that
    sh32 = np.uint64(32)
    phase >>= sh32
    phase *= np.uint64(n_narrow)
    phase >>= sh32
    phase += (np.arange(m, dtype=np.uint64) * np.uint64(n_narrow))[None, :]
    idx = phase.reshape(-1).view(np.int64)
    size = m * n_narrow
    sw = np.bincount(idx, weights=np.repeat(w, m), minlength=size).reshape(m, n_narrow)
    swy = np.bincount(idx, weights=np.repeat(wy, m), minlength=size).reshape(m, n_narrow)
    # the weights are positive and summed exactly once, so Σ w > 0 marks the filled bins
    return sw, swy, sw


def _crossing_count(tm, f0, df, k0, m):
    """Unwrapped narrow-bin numbers at the first and last frequency of a block."""
    first = np.floor((f0 + k0 * df) * tm)
    last = np.floor((f0 + (k0 + m - 1) * df) * tm)
    return first, (last - first).astype(np.int64)


def _narrow_sums_crossings(tm, w, wy, f0, df, k0, m, n_narrow):
    """As :func:`_narrow_sums_direct`, from the frequencies where points cross bin edges.

    With ``x_i(f) = f t_i n_narrow`` a point sits in narrow bin ``floor(x) mod n_narrow`` and
    moves to the next bin at ``f = E / (t_i n_narrow)`` for each integer E that ``x`` passes.
    The bin sums at the block's first frequency are binned directly; after that only the
    crossings are binned (``+w`` entering a bin, ``-w`` leaving the one before) and summed
    cumulatively over frequency. Cost: the number of crossings, ``≈ n_narrow (f_max - f0) Σ t_i``,
    independent of the grid spacing. Where a crossing falls within rounding (~1e-13 of a cycle)
    of a trial frequency, the side it is put on is as arbitrary as the phase itself.
    """
    n = tm.size
    size = m * n_narrow
    first, count = _crossing_count(tm, f0, df, k0, m)
    b0 = np.mod(first, n_narrow).astype(np.int64)
    # per crossing (np.repeat is far cheaper than fancy indexing): the edge E and the point's t
    starts = np.cumsum(count) - count
    edge_i = np.repeat(first.astype(np.int64) + 1 - starts, count)
    edge_i += np.arange(edge_i.size)
    edge = edge_i.astype(float)
    k = edge / np.repeat(tm, count)
    k -= f0
    k /= df
    np.ceil(k, out=k)
    np.clip(k, k0 + 1, k0 + m - 1, out=k)
    small = np.int32 if n and first.max() + count.max() < 2**31 else np.int64
    idx = (k.astype(np.int64) - k0) * n_narrow
    idx += np.remainder(edge_i.astype(small, copy=False), small(n_narrow))
    out = []
    for weights in (w, wy, None):
        enter = np.bincount(idx, weights=None if weights is None else np.repeat(weights, count),
                            minlength=size).reshape(m, n_narrow)
        enter = enter.astype(np.int64 if weights is None else float, copy=False)
        # a point entering bin b left bin b - 1 (cyclically); row 0 holds no crossing
        change = enter - np.roll(enter, -1, axis=1)
        change[0] = np.bincount(b0, weights=weights, minlength=n_narrow)
        out.append(np.cumsum(change, axis=0))
    return tuple(out)


#: Name -> function giving the narrow-bin sums of a block of frequencies (same numbers).
BINNINGS = {
    "pairs": _narrow_sums_direct,
    "crossings": _narrow_sums_crossings,
}


def pdm_theta(t, y, dy, f0, df, nf, *, n_bins=10, n_covers=2, weighted=True, binning="auto",
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
    binning : {"auto", "pairs", "crossings"}, optional
        How the bin sums are formed (see Notes and `BINNINGS`); ``"auto"`` takes the cheaper.
    chunk_elements : int, optional
        (point, frequency) pairs, or bin-edge crossings, handled at a time.

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
    The bins of all covers are sums of ``n_bins n_covers`` narrow bins. The narrow-bin sums come
    from whichever of two exact ways costs less: binning every (point, frequency) pair, or, on
    finely spaced grids where a point stays in its bin over many trial frequencies, binning only
    the frequencies where points cross bin edges.

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
    tm = tp * n_narrow
    if binning not in ("auto", *BINNINGS):
        msg = f"'binning' must be 'auto' or one of {sorted(BINNINGS)}, got {binning!r}"
        raise ValueError(msg)
    crossings = float(np.sum(np.floor((f0 + (nf - 1) * df) * tm) - np.floor(f0 * tm)))
    if binning == "auto":
        binning = "crossings" if crossings * _CROSSING_COST < float(n) * nf else "pairs"
    if binning == "crossings":
        ch = int(max(2, min(nf, chunk_elements // max(crossings / nf, 1.0))))
        times = tm
    else:
        ch = int(max(1, min(nf, chunk_elements // max(n, 1))))
        times = tp
    sums = BINNINGS[binning]
    theta = np.empty(nf)
    for k0 in range(0, nf, ch):
        m = min(ch, nf - k0)
        sw, swy, cnt = sums(times, w, wy, f0, df, k0, m, n_narrow)
        theta[k0:k0 + m] = _theta_from_narrow(sw, swy, cnt, n, n_covers, sum_wyy) / sigma2
    return theta


def _theta_from_narrow(sw, swy, cnt, n, n_covers, sum_wyy):
    """Pooled within-bin variance ``s²`` from narrow-bin sums of shape (m, n_narrow)."""
    # wide bins of every cover: sums of n_covers consecutive narrow bins, cyclically
    wide_w, wide_wy, wide_n = sw.copy(), swy.copy(), cnt.copy()
    for i in range(1, n_covers):
        wide_w += np.roll(sw, -i, axis=1)
        wide_wy += np.roll(swy, -i, axis=1)
        wide_n += np.roll(cnt, -i, axis=1)
    filled = wide_n > 0
    between = np.sum(np.where(filled, wide_wy**2 / np.where(filled, wide_w, 1.0), 0.0),
                     axis=1)
    dof = n_covers * n - filled.sum(axis=1)
    return (n_covers * sum_wyy - between) / np.maximum(dof, 1)


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
