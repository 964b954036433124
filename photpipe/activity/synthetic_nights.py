"""One synthetic night of frame-level Afρ with realistic, partly unstated noise (tests, benches).

Every number belongs to an invented scenario. The noise is what a night gives: the stated
photometric error of each frame (1.5-3 %, growing with airmass), a zero-point jitter that the
stated errors do not contain, and a slow wander (seeing and transparency changes) with a
correlation time, drawn as an Ornstein-Uhlenbeck process at the frame times (Gillespie 1996,
Phys. Rev. E 54, 2084, eq. 1.3: exact update x' = x e^(-Δt/ℓ) + σ sqrt(1 - e^(-2Δt/ℓ)) n).
Unless given, the jitter, wander and its correlation time are drawn per night, so a set of
nights spans quiet and rough conditions. An outburst is a flux excess A e^(-(t - t_on)/τ) on top
of the coma (so its size in magnitudes decays as the excess fades).
"""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.time import Time

__all__ = ["SimulatedNight", "simulate_night"]


@dataclass(frozen=True)
class SimulatedNight:
    """One night's frame-level Afρ and the truth behind it.

    Attributes
    ----------
    time : `~astropy.time.Time`
    afrho, afrho_err : `~astropy.units.Quantity` ['length']
    onset : `~astropy.time.Time` or None
        True onset time of the outburst.
    delta_mag : float or None
        True excess (mag, negative brighter) at the first frame after the onset.
    truth : dict
        The noise parameters drawn (``white_mag``, ``wander_mag``, ``wander_time_h``).
    """

    time: Time
    afrho: u.Quantity
    afrho_err: u.Quantity
    onset: Time | None
    delta_mag: float | None
    truth: dict


def _ou(t_h, amplitude, ell_h, rng):
    x = np.empty(t_h.size)
    x[0] = amplitude * rng.standard_normal()
    for i in range(1, t_h.size):
        rho = np.exp(-(t_h[i] - t_h[i - 1]) / ell_h)
        x[i] = rho * x[i - 1] + amplitude * np.sqrt(1.0 - rho * rho) * rng.standard_normal()
    return x


def simulate_night(*, seed=0, n_frames=None, spacing_h=None, outburst_mag=None, decay_h=None,
                   onset_frame=None, white_mag=None, wander_mag=None, wander_time_h=None,
                   afrho_cm=250.0, start_mjd=61420.85):
    """Simulate one night of frame-level Afρ.

    Parameters
    ----------
    seed : int
        Seed of `numpy.random.default_rng`.
    n_frames : int, optional
        Frames in the night (default drawn from 16-30).
    spacing_h : float, optional
        Mean hours between frames (default drawn from 0.15-0.3).
    outburst_mag : float, optional
        Outburst size at onset in magnitudes (negative is brighter); None for a quiet night.
    decay_h : float, optional
        e-folding time of the excess flux (default drawn log-uniformly from 1-20 h).
    onset_frame : int, optional
        Index of the first frame after the onset (default drawn, leaving 3 frames before and
        3 after).
    white_mag, wander_mag, wander_time_h : float, optional
        Unstated zero-point jitter (default 0-0.03 mag), wander amplitude (0-0.03 mag) and its
        correlation time (0.3-3 h, log-uniform).
    afrho_cm : float
    start_mjd : float

    Returns
    -------
    night : `SimulatedNight`

    Examples
    --------
    >>> night = simulate_night(seed=0, n_frames=20)
    >>> len(night.time), night.onset is None
    (20, True)
    """
    rng = np.random.default_rng(seed)
    n = int(rng.integers(16, 31)) if n_frames is None else int(n_frames)
    spacing = rng.uniform(0.15, 0.3) if spacing_h is None else float(spacing_h)
    white = rng.uniform(0.0, 0.03) if white_mag is None else float(white_mag)
    wander = rng.uniform(0.0, 0.03) if wander_mag is None else float(wander_mag)
    ell = np.exp(rng.uniform(np.log(0.3), np.log(3.0))) if wander_time_h is None \
        else float(wander_time_h)
    t_h = np.cumsum(np.r_[0.0, spacing * rng.uniform(0.8, 1.2, n - 1)])
    airmass = 1.1 + 0.9 * ((t_h - t_h.mean()) / max(np.ptp(t_h), 1e-9)) ** 2 * 2.0
    frac_err = rng.uniform(0.015, 0.025) * airmass ** 0.5
    excess = np.zeros(n)
    onset = delta = None
    if outburst_mag is not None:
        j = int(rng.integers(3, n - 2)) if onset_frame is None else int(onset_frame)
        tau = np.exp(rng.uniform(0.0, np.log(20.0))) if decay_h is None else float(decay_h)
        t_on = t_h[j - 1] + rng.uniform(0.05, 0.95) * (t_h[j] - t_h[j - 1])
        amp = 10 ** (-0.4 * outburst_mag) - 1.0
        after = t_h >= t_on
        excess = np.where(after, amp * np.exp(-(t_h - t_on) / tau), 0.0)
        onset = Time(start_mjd + t_on / 24.0, format="mjd", scale="utc")
        delta = float(-2.5 * np.log10(1.0 + excess[j]))
    log_noise = (frac_err * rng.standard_normal(n) + white * rng.standard_normal(n)
                 + _ou(t_h, wander, ell, rng)) / 1.0857
    true = afrho_cm * (1.0 + excess)
    meas = true * np.exp(log_noise)
    return SimulatedNight(
        time=Time(start_mjd + t_h / 24.0, format="mjd", scale="utc"), afrho=meas * u.cm,
        afrho_err=frac_err * meas * u.cm, onset=onset, delta_mag=delta,
        truth={"white_mag": white, "wander_mag": wander, "wander_time_h": ell,
               "n_frames": n, "spacing_h": spacing})
