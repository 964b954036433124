"""Rotation-averaged flux when the period is not known: averaged over the periods the data allow."""

import numpy as np

__all__ = ["period_averaged_mean", "UNKNOWN_PERIOD_RANGE_H", "AMPLITUDE_PRIOR"]

#: Rotation periods (hours) the average runs over: the rotation search's default range.
UNKNOWN_PERIOD_RANGE_H = (2.0, 60.0)
#: Prior standard deviation of each Fourier coefficient of the relative flux. A coefficient of
#: 0.2 is a 0.4-mag peak-to-peak sinusoid; nucleus lightcurve amplitudes of 0.1-1 mag are the
#: usual range (common practice), so the prior is weak against any well-sampled night.
AMPLITUDE_PRIOR = 0.2
_HARMONICS = 4
_OVERSAMPLE = 5
_MAX_FREQUENCIES = 20000
_CHUNK = 256
# coarse points within this much log-likelihood of the best are resampled _FINE times finer
_REFINE_WITHIN = 30.0
_FINE = 15
_MAX_REFINED = 200


def _nights(times):
    order = np.argsort(times)
    return 1 + int(np.sum(np.diff(times[order]) > 0.3))


def _design(t_h, freqs):
    """Design matrices (nf, n, 1 + 2K): constant, then cos/sin of K harmonics of each f."""
    arg = 2 * np.pi * freqs[:, None, None] * t_h[None, :, None] * np.arange(1, _HARMONICS + 1)
    cols = np.concatenate([np.cos(arg), np.sin(arg)], axis=2)
    ones = np.ones(cols.shape[:2] + (1,))
    return np.concatenate([ones, cols], axis=2)


def _posterior(t_h, y, w, freqs):
    """Per frequency: log marginal likelihood, posterior mean constant and its variance."""
    prior = np.zeros(1 + 2 * _HARMONICS)
    prior[1:] = AMPLITUDE_PRIOR ** -2
    out = []
    for i in range(0, freqs.size, _CHUNK):
        x = _design(t_h, freqs[i:i + _CHUNK])
        lam = np.einsum("fni,n,fnj->fij", x, w, x) + np.diag(prior)
        b = np.einsum("fni,n->fi", x, w * y)
        c = np.linalg.cholesky(lam)
        beta = np.linalg.solve(lam, b[..., None])[..., 0]
        inv00 = np.linalg.inv(lam)[:, 0, 0]
        logdet = 2 * np.sum(np.log(np.diagonal(c, axis1=1, axis2=2)), axis=1)
        out.append(np.column_stack([0.5 * np.sum(b * beta, axis=1) - 0.5 * logdet,
                                    beta[:, 0], inv00]))
    return np.vstack(out)


def _refine(t_h, y, w, freqs, post):
    """Resample the likely frequencies 15 times finer (a sharp peak can fall between points).

    Returns the frequencies, their posterior rows and the width each stands for (the prior is
    flat in frequency, so a point's weight is its likelihood times its width).
    """
    step = freqs[1] - freqs[0] if freqs.size > 1 else 1.0
    likely = np.flatnonzero(post[:, 0] > post[:, 0].max() - _REFINE_WITHIN)
    likely = likely[np.argsort(post[likely, 0])[::-1][:_MAX_REFINED]]
    keep = np.ones(freqs.size, dtype=bool)
    keep[likely] = False
    offsets = (np.arange(_FINE) + 0.5) / _FINE - 0.5
    fine = (freqs[likely][:, None] + offsets[None, :] * step).ravel()
    fine_post = _posterior(t_h, y, w, fine) if fine.size else np.empty((0, 3))
    return (np.concatenate([freqs[keep], fine]), np.vstack([post[keep], fine_post]),
            np.concatenate([np.full(keep.sum(), step), np.full(fine.size, step / _FINE)]))


def period_averaged_mean(mag, err, *, times=None, period=None, n_bins=None, n_harmonics=None):
    """Return ``(mean flux, its error, flags)`` averaged over the rotation periods allowed.

    Without a period, how well the points average the rotation depends on it: a night as long
    as the period averages it out, a night that sees a tenth of a slow rotation does not. So
    the mean is taken under every period of `UNKNOWN_PERIOD_RANGE_H` and the results are
    averaged with the weight the data give each period (Bayesian model averaging; Hoeting et
    al. 1999, Statist. Sci. 14, 382). For each trial frequency, the relative flux is a constant
    plus 4 harmonics whose coefficients have a Gaussian prior of sd `AMPLITUDE_PRIOR` (the
    constant a flat one); the model is linear, so the marginal likelihood and the posterior of
    the constant are exact (Bishop 2006, eqs. 3.53-3.54, 3.86). The frequencies are uniform
    (flat prior), spaced a fifth of 1/baseline, and resampled 15 times finer where the
    likelihood is within e^-30 of its best (a well-sampled campaign's peak is far narrower
    than 1/baseline). The mean is the weighted mean of the constant,
    the error the square root of the mixture's variance (each period's posterior variance plus
    the spread of the constants between periods).

    Without ``times`` the points are taken as one instant (the plain mean and its propagated
    error, flag ``rotation_unknown``). Flags ``rotation_unknown``, and ``single_night`` for one
    night.
    """
    flags = ["rotation_unknown"]
    ref = float(np.median(mag))
    f = 10.0 ** (-0.4 * (mag - ref))
    sf = 0.4 * np.log(10.0) * f * np.maximum(err, 1e-4)
    scale = 10.0 ** (-0.4 * ref)
    if times is None or f.size < 2:
        return f.mean() * scale, float(np.sqrt(np.sum(sf**2)) / f.size * scale), tuple(flags)
    t = np.asarray(times, dtype=float)
    if _nights(t) == 1:
        flags.append("single_night")
    t_h = (t - t.mean()) * 24.0
    span = max(float(np.ptp(t_h)), 1.0)
    lo, hi = 1.0 / UNKNOWN_PERIOD_RANGE_H[1], 1.0 / UNKNOWN_PERIOD_RANGE_H[0]
    n_f = int(min(max(np.ceil((hi - lo) * span * _OVERSAMPLE), 20), _MAX_FREQUENCIES))
    freqs = np.linspace(lo, hi, n_f)
    w = 1.0 / sf**2
    post = _posterior(t_h, f, w, freqs)
    freqs, post, width = _refine(t_h, f, w, freqs, post)
    wts = np.exp(post[:, 0] - post[:, 0].max()) * width
    wts /= wts.sum()
    mean = float(np.sum(wts * post[:, 1]))
    var = float(np.sum(wts * (post[:, 2] + (post[:, 1] - mean) ** 2)))
    return mean * scale, float(np.sqrt(var) * scale), tuple(flags)
