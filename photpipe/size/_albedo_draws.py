"""Ways of drawing albedo samples across an assumed range, one function per prior."""

import numpy as np

__all__ = ["ALBEDO_PRIORS"]


def _uniform(rng, lo, hi, n):
    """Albedo uniform in [lo, hi]."""
    return rng.uniform(lo, hi, n)


def _log_uniform(rng, lo, hi, n):
    """Albedo uniform in log p over [lo, hi] (scale-free: each factor of p equally likely)."""
    return np.exp(rng.uniform(np.log(lo), np.log(hi), n))


#: Prior name -> function(rng, lo, hi, n) returning n albedo samples.
ALBEDO_PRIORS = {"uniform": _uniform, "log-uniform": _log_uniform}
