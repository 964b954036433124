"""Errors of the adopted period and amplitude: covariance, night-block bootstrap, 95 % interval."""

from dataclasses import dataclass

import numpy as np
from scipy import stats

from photpipe.rotation.fit import bootstrap_fourier_fit, expanded_percentile_interval
from photpipe.rotation.fourier_model import fourier_series
from photpipe.rotation.result import INTERVAL_METHODS

__all__ = ["PeriodErrors", "period_errors", "MIN_BOOTSTRAP_BLOCKS"]

# Fewest site-nights for resampling whole nights: below this the block bootstrap has too few
# distinct resamples (5 blocks give 126) and single points are drawn instead (project choice).
MIN_BOOTSTRAP_BLOCKS = 5
# Two-sided 95 % quantile of the normal distribution.
_Z95 = float(stats.norm.ppf(0.975))
# Fewest finite resamples for a bootstrap percentile interval: 40 puts at least one resample in
# each 2.5 % tail (project choice; Efron & Tibshirani 1993 advise about 1000, from memory).
_MIN_PERCENTILE_RESAMPLES = 40


@dataclass(frozen=True)
class PeriodErrors:
    """The period's and amplitude's errors (hours, mag) and how they were formed."""

    period_err_h: float
    err_covariance_h: float
    err_bootstrap_h: float
    interval_h: np.ndarray
    interval_method: str
    resampled: str
    n_blocks: int
    amplitude_err: float
    flags: tuple


def _covariance_amplitude_error(fit, rng):
    draws = rng.multivariate_normal(fit.coefficients, fit.covariance[:-1, :-1], size=400)
    phase = np.arange(1000) / 1000
    curves = np.stack([fourier_series(phase, 1.0, c) for c in draws])
    return float(np.std(np.ptp(curves, axis=1)))


def period_errors(t, y, dy, fit, blocks, *, n_bootstrap, rng):
    """Return the 1-σ period and amplitude errors and the 95 % period interval.

    The period error is the larger of the covariance error and the bootstrap spread; whole
    site-nights are drawn when there are at least five (Künsch 1989), single points otherwise
    (flag ``bootstrap_by_point``). The interval is the expanded percentile interval of the
    site-night bootstrap (Hesterberg 2015) from 40 resamples on, ``P ∓ 1.96σ`` otherwise.

    Examples
    --------
    >>> import numpy as np
    >>> from photpipe.rotation.fit import fit_fourier_series
    >>> rng = np.random.default_rng(4)
    >>> t = np.sort(rng.uniform(0, 20, 300))
    >>> y = 0.2 * np.cos(2 * np.pi * 1.1 * t) + rng.normal(0, 0.02, 300)
    >>> fit = fit_fourier_series(t, y, np.full(300, 0.02), 1.1, 1)
    >>> e = period_errors(t, y, np.full(300, 0.02), fit, np.floor(t).astype(int),
    ...                   n_bootstrap=10, rng=rng)
    >>> e.resampled, bool(e.period_err_h > 0)
    ('site-nights', True)
    """
    err_cov_h = 24.0 * fit.frequency_err / fit.frequency**2
    amp_err_cov = _covariance_amplitude_error(fit, rng)
    n_blocks = int(blocks.max()) + 1
    resampled, flags = "none", []
    err_boot_h, amp_err_boot = np.nan, np.nan
    p_boot = np.empty(0)
    if n_bootstrap > 0:
        by_night = n_blocks >= MIN_BOOTSTRAP_BLOCKS
        resampled = "site-nights" if by_night else "points"
        if not by_night:
            flags.append("bootstrap_by_point")
        f_boot, a_boot = bootstrap_fourier_fit(t, y, dy, fit, n_bootstrap=n_bootstrap, rng=rng,
                                               blocks=blocks if by_night else None)
        good = np.isfinite(f_boot)
        p_boot = 24.0 / f_boot[good]
        if good.sum() >= 2:
            err_boot_h = float(np.std(p_boot, ddof=1))
            amp_err_boot = float(np.std(a_boot[good], ddof=1))
    period_h = 24.0 / fit.frequency
    period_err_h = float(np.nanmax([err_cov_h, err_boot_h]))
    if resampled == "site-nights" and p_boot.size >= _MIN_PERCENTILE_RESAMPLES:
        # percentiles follow a skewed or heavy-tailed spread of the resampled periods that
        # ±1.96σ would make symmetric; expanded for the few site-nights drawn
        interval_h = expanded_percentile_interval(p_boot, n_blocks)
        method = INTERVAL_METHODS["bootstrap"]
    else:
        interval_h = period_h + _Z95 * period_err_h * np.array([-1.0, 1.0])
        method = INTERVAL_METHODS["normal"]
    return PeriodErrors(period_err_h=period_err_h, err_covariance_h=err_cov_h,
                        err_bootstrap_h=err_boot_h, interval_h=interval_h,
                        interval_method=method, resampled=resampled, n_blocks=n_blocks,
                        amplitude_err=float(np.nanmax([amp_err_cov, amp_err_boot])),
                        flags=tuple(flags))
