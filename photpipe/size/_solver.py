"""A vectorised bracketing root finder (the Illinois variant of regula falsi)."""

import numpy as np

__all__ = ["bracketed_root"]


def bracketed_root(func, lo, hi, *, xtol=1e-9, rtol=1e-12, maxiter=200):
    """Return x in [lo, hi] with func(x) = 0, element by element, for a bracketed root.

    Parameters
    ----------
    func : callable
        ``func(x, index)`` returns f at the points x of the elements ``index`` (flat indices
        into the broadcast shape of lo and hi), so per-element parameters can be taken with
        ``param.flat[index]``-style lookups.
    lo, hi : ndarray
        Brackets, broadcast to one shape; ``func(lo)`` and ``func(hi)`` must differ in sign
        (or be zero).
    xtol, rtol : float
        Stop when the bracket is narrower than ``xtol + rtol |x|``, or a regula-falsi step
        moved the estimate by less than that.
    maxiter : int
        Iteration cap (a bisection step is forced whenever regula falsi stalls).

    Returns
    -------
    x : ndarray

    Raises
    ------
    ValueError
        If some bracket does not hold a sign change.
    RuntimeError
        If the cap is reached before every element converged.

    Notes
    -----
    Illinois method (Dowell & Jarratt 1971, BIT 11, 168): regula falsi that halves the
    retained end's function value when the same end is kept twice, giving superlinear
    convergence while the bracket always holds the root. Each third step is a bisection, which
    bounds the worst case by that of bisection.
    """
    a, b = np.broadcast_arrays(np.asarray(lo, dtype=float), np.asarray(hi, dtype=float))
    shape = a.shape
    a, b = a.astype(float).ravel().copy(), b.astype(float).ravel().copy()
    every = np.arange(a.size)
    fa = np.asarray(func(a, every), dtype=float)
    fb = np.asarray(func(b, every), dtype=float)
    if np.any(fa * fb > 0) or not np.all(np.isfinite(fa) & np.isfinite(fb)):
        bad = np.flatnonzero((fa * fb > 0) | ~np.isfinite(fa) | ~np.isfinite(fb))
        msg = f"no sign change in {bad.size} bracket(s), first at index {bad[0]}"
        raise ValueError(msg)
    x = np.where(fa == 0, a, b)
    done = (fa == 0) | (fb == 0)
    for it in range(maxiter):
        if np.all(done):
            return x.reshape(shape)
        idx = np.flatnonzero(~done)
        ai, bi, fai, fbi = a[idx], b[idx], fa[idx], fb[idx]
        denom = fbi - fai
        with np.errstate(divide="ignore", invalid="ignore"):
            c = bi - fbi * (bi - ai) / denom
        mid = 0.5 * (ai + bi)
        c = np.where(~np.isfinite(c) | (it % 3 == 2), mid, c)
        c = np.clip(c, np.minimum(ai, bi), np.maximum(ai, bi))
        fc = np.asarray(func(c, idx), dtype=float)
        # the root lies between b and c: move a to b; otherwise keep a and halve its value
        flip = fc * fbi < 0
        new_a = np.where(flip, bi, ai)
        new_fa = np.where(flip, fbi, 0.5 * fai)
        a[idx], fa[idx], b[idx], fb[idx] = new_a, new_fa, c, fc
        x[idx] = c
        tol = xtol + rtol * np.abs(c)
        # converged when the bracket is narrow, or a regula-falsi step moved less than tol
        # (the Illinois halving keeps such steps from stalling on one side)
        small_step = (np.abs(c - bi) <= tol) & (it % 3 != 2)
        done[idx] = (fc == 0) | (np.abs(b[idx] - a[idx]) <= tol) | small_step
    if not np.all(done):
        msg = f"root not found to tolerance in {maxiter} iterations for {np.sum(~done)} element(s)"
        raise RuntimeError(msg)
    return x.reshape(shape)
