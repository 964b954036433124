"""χ² of multi-harmonic series fits at every frequency of a grid, all orders at once.

The engine behind the Lomb-Scargle and Fourier-series periodograms. For each trial frequency f
the weighted least-squares fit of ``y ≈ c0 + Σ_{k=1..m} [a_k cos(2πkft) + b_k sin(2πkft)]`` is
solved through its normal equations, whose entries are trigonometric sums (see
:mod:`photpipe.rotation.trigsums`). One Cholesky factorisation of the largest order's matrix gives
the χ² of every lower order as well, because their matrices are its leading blocks.
"""

import numpy as np

from photpipe.rotation.trigsums import direct_trig_sums, trig_sums

__all__ = ["harmonic_chi2", "SUM_ENGINES"]

#: Name -> function computing ``Σ w exp(2πi f_k t)`` on a regular grid.
SUM_ENGINES = {
    "fft": trig_sums,
    "direct": direct_trig_sums,
}


def _normal_blocks(c, s, yc, ys, max_order):
    """Assemble the normal matrices (nf, p, p) and right-hand sides (nf, p), p = 2m + 1.

    ``c[h]``, ``s[h]`` are Σw cos(hθ), Σw sin(hθ) for h = 0..2m; ``yc``, ``ys`` the same with
    w·y for h = 0..m. Column order: 1, cos θ, sin θ, cos 2θ, sin 2θ, ...
    """
    nf = c.shape[1]
    p = 2 * max_order + 1
    mat = np.empty((nf, p, p))
    rhs = np.empty((nf, p))
    mat[:, 0, 0] = c[0]
    rhs[:, 0] = yc[0]

    def s_signed(h):
        return s[h] if h >= 0 else -s[-h]

    for k in range(1, max_order + 1):
        ck, sk = 2 * k - 1, 2 * k
        mat[:, 0, ck] = mat[:, ck, 0] = c[k]
        mat[:, 0, sk] = mat[:, sk, 0] = s[k]
        rhs[:, ck] = yc[k]
        rhs[:, sk] = ys[k]
        for m in range(1, max_order + 1):
            cm, sm = 2 * m - 1, 2 * m
            # product-to-sum identities: cos kθ cos mθ = [cos(k-m)θ + cos(k+m)θ] / 2, etc.
            mat[:, ck, cm] = 0.5 * (c[abs(k - m)] + c[k + m])
            mat[:, sk, sm] = 0.5 * (c[abs(k - m)] - c[k + m])
            mat[:, ck, sm] = 0.5 * (s[k + m] + s_signed(m - k))
            mat[:, sm, ck] = mat[:, ck, sm]
    return mat, rhs


def harmonic_chi2(t, y, dy, f0, df, nf, *, max_order=2, engine="fft", chunk=16384):
    """Return the χ² of the best multi-harmonic fit of each order at each grid frequency.

    Parameters
    ----------
    t, y, dy : ndarray, shape (n,)
        Times (days), values and their 1-σ errors (all finite, ``dy > 0``).
    f0, df : float
        First frequency and spacing of the grid (cycles per day).
    nf : int
        Number of grid frequencies.
    max_order : int, optional
        Highest number of harmonics; every order 1..max_order is returned.
    engine : {"fft", "direct"}, optional
        How the trigonometric sums are computed (see `SUM_ENGINES`).
    chunk : int, optional
        Frequencies solved at a time (bounds the memory to ``chunk (2m+1)^2`` floats).

    Returns
    -------
    chi2 : ndarray, shape (max_order, nf)
        ``chi2[m - 1]`` is the χ² of the order-m fit (floating mean included).
    chi2_ref : float
        χ² of the constant (weighted mean) model.

    Notes
    -----
    The fit with a floating mean is the generalised Lomb-Scargle periodogram (Zechmeister &
    Kürster 2009, A&A 496, 577) for m = 1 and its multi-harmonic extension (Schwarzenberg-Czerny
    1996, ApJ 460, L107) for m > 1. With ``A = L Lᵀ`` and ``z = L⁻¹ b``,
    ``χ²_m = Σ w y² - Σ_{i < 2m+1} z_i²``.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.linspace(0, 10, 200)
    >>> y = np.sin(2 * np.pi * 1.3 * t)
    >>> chi2, ref = harmonic_chi2(t, y, np.full(200, 0.1), 1.0, 0.1, 7, max_order=1)
    >>> int(np.argmin(chi2[0]))
    3
    """
    t = np.asarray(t, dtype=float)
    w = 1.0 / np.asarray(dy, dtype=float) ** 2
    y = np.asarray(y, dtype=float)
    y = y - np.sum(w * y) / np.sum(w)
    chi2_ref = float(np.sum(w * y**2))
    sums = SUM_ENGINES[engine]
    # Reference the times at their middle: the sums do not depend on it, but it keeps the
    # phases small and the matrices well scaled.
    tc = t - 0.5 * (t.min() + t.max())
    n_w = 2 * max_order + 1
    c = np.empty((n_w, nf))
    s = np.empty((n_w, nf))
    yc = np.empty((max_order + 1, nf))
    ys = np.empty((max_order + 1, nf))
    c[0], s[0] = w.sum(), 0.0
    yc[0], ys[0] = np.sum(w * y), 0.0
    for h in range(1, n_w):
        if h <= max_order:
            both = sums(tc, np.vstack([w, w * y]), h * f0, h * df, nf)
            c[h], s[h] = both[0].real, both[0].imag
            yc[h], ys[h] = both[1].real, both[1].imag
        else:
            one = sums(tc, w, h * f0, h * df, nf)
            c[h], s[h] = one.real, one.imag

    chi2 = np.empty((max_order, nf))
    for start in range(0, nf, chunk):
        sl = slice(start, min(nf, start + chunk))
        mat, rhs = _normal_blocks(c[:, sl], s[:, sl], yc[:, sl], ys[:, sl], max_order)
        # A relative ridge of 1e-12 keeps frequencies where the harmonics are degenerate with
        # the sampling factorisable without changing any well-posed fit measurably.
        diag = np.einsum("fii->fi", mat)
        diag += 1e-12 * diag.mean(axis=1, keepdims=True)
        chol = np.linalg.cholesky(mat)
        z = np.linalg.solve(chol, rhs[..., None])[..., 0]
        explained = np.cumsum(z**2, axis=1)[:, 2::2]  # after 1 + 2m columns
        chi2[:, sl] = (chi2_ref - explained).T
    np.maximum(chi2, 0.0, out=chi2)
    return chi2, chi2_ref
