"""Synthetic campaign lightcurves with a known rotation, for tests and the demo.

An invented nucleus watched from invented sites: nightly windows around local midnight, weather
losses, noise, slowly changing geometry and the light time, in the ``lightcurve.ecsv`` layout.
"""

from dataclasses import dataclass

import numpy as np
from astropy import constants as const
from astropy import units as u
from astropy.table import QTable

from photpipe._quantity import as_positive_value, as_value
from photpipe.rotation.fourier_model import fourier_series, peak_to_peak

__all__ = ["SyntheticRotation", "synthetic_lightcurve", "DEMO_SITES"]

#: Invented sites: name -> east longitude (deg).
DEMO_SITES = {"kettle_rock": -111.4, "harrow_fell": 20.8}


@dataclass(frozen=True)
class SyntheticRotation:
    """The truth behind a synthetic lightcurve.

    Attributes
    ----------
    period : `~astropy.units.Quantity` ['time']
        Rotation period.
    amplitude : `~astropy.units.Quantity` ['mag']
        Peak-to-peak amplitude of the rotational signal.
    coefficients : ndarray
        Fourier coefficients ``[0, a1, b1, ...]`` of the signal at the rotation frequency (mag).
    t0_mjd : float
        Reference epoch of the coefficients (emission time, MJD).
    absolute_mag : float
        Mean magnitude at r_h = Δ = 1 AU and 0° phase.
    """

    period: u.Quantity
    amplitude: u.Quantity
    coefficients: np.ndarray
    t0_mjd: float
    absolute_mag: float

    def signal(self, epoch_mjd):
        """Return the rotational signal (mag) at emission epochs (MJD)."""
        return fourier_series(epoch_mjd, 1.0 / self.period.to_value(u.day), self.coefficients,
                              t0=self.t0_mjd)


def synthetic_lightcurve(*, period=7.3 * u.h, amplitude=0.4 * u.mag, asymmetry=0.25,
                         n_nights=10, sites=None, start_mjd=61010.0, night_hours=5.0,
                         cadence=12 * u.min, cloud_fraction=0.2, noise=0.03 * u.mag,
                         night_offset=0.0 * u.mag, symmetric=False,
                         absolute_mag=16.5, phase_coefficient=0.035 * u.mag / u.deg,
                         r_h=(2.4, 2.2) * u.au, delta=(1.5, 1.3) * u.au,
                         phase=(18.0, 22.0) * u.deg, source="nucleus_fit", filter_name="R",
                         rng=None):
    """Return a synthetic campaign lightcurve and its truth.

    Parameters
    ----------
    period : `~astropy.units.Quantity` ['time'], optional
        Rotation period.
    amplitude : `~astropy.units.Quantity` ['mag'], optional
        Peak-to-peak rotational amplitude.
    asymmetry : float, optional
        First-harmonic amplitude relative to the second: 0 gives two identical halves per
        rotation; larger values make the two maxima differ (as real nuclei do).
    n_nights : int, optional
        Number of calendar nights of the campaign.
    sites : dict, optional
        Site name -> east longitude (deg); default `DEMO_SITES`.
    start_mjd : float, optional
        First night (MJD, 0h UTC).
    night_hours : float, optional
        Longest observing window per night and site (hours, centred near local midnight).
    cadence : `~astropy.units.Quantity` ['time'], optional
        Time between exposures.
    cloud_fraction : float, optional
        Chance a site loses a night.
    noise : `~astropy.units.Quantity` ['mag'], optional
        Typical 1-σ photometric error (each point's error is 0.8-1.3 times it).
    symmetric : bool, optional
        When True the odd harmonics are left out, so the two halves of a rotation are identical
        (a symmetric double-peaked lightcurve: the data alone cannot tell P from P/2).
    night_offset : `~astropy.units.Quantity` ['mag'], optional
        1-σ zero-point error shared by all points of one site-night (as a nightly calibration
        error is) and not included in the stated errors; 0 for none. Drawn after everything
        else, so a seed gives the same campaign whatever this is.
    absolute_mag : float, optional
        Mean magnitude at unit distances and 0° phase.
    phase_coefficient : `~astropy.units.Quantity` ['mag/angle'], optional
        Linear phase coefficient of the synthetic nucleus.
    r_h, delta, phase : `~astropy.units.Quantity`, optional
        (start, end) of the geometry, changing linearly over the campaign.
    source : str, optional
        Value of the ``source`` column.
    filter_name : str, optional
        Value of the ``filter`` column.
    rng : `numpy.random.Generator`, optional
        Random generator.

    Returns
    -------
    table : `~astropy.table.QTable`
        Columns of the ``lightcurve.ecsv`` contract.
    truth : SyntheticRotation

    Examples
    --------
    >>> import numpy as np
    >>> table, truth = synthetic_lightcurve(rng=np.random.default_rng(1))
    >>> len(table) > 100, round(float(truth.amplitude.to_value("mag")), 3)
    (True, 0.4)
    """
    rng = np.random.default_rng() if rng is None else rng
    sites = DEMO_SITES if sites is None else sites
    p_day = as_positive_value(period, u.day, "period")
    amp = as_positive_value(amplitude, u.mag, "amplitude")
    sigma = as_positive_value(noise, u.mag, "noise")
    zp_sigma = as_value(night_offset, u.mag, "night_offset")
    if not zp_sigma >= 0:
        msg = f"'night_offset' must be zero or positive, got {night_offset}"
        raise ValueError(msg)
    step_d = as_positive_value(cadence, u.day, "cadence")
    beta = as_value(phase_coefficient, u.mag / u.deg, "phase_coefficient")
    geometry = (as_positive_value(r_h, u.au, "r_h"), as_positive_value(delta, u.au, "delta"),
                as_value(phase, u.deg, "phase"))

    coef = _shape_coefficients(asymmetry, symmetric, amp)
    obs = _observing_times(n_nights, sites, start_mjd, night_hours, step_d, cloud_fraction, rng)
    rh, dl, ph, light_time = _linear_geometry(obs.mjd, start_mjd, n_nights, *geometry)
    emission = obs.mjd - light_time / 86400.0
    truth = SyntheticRotation(period=(p_day * u.day).to(u.h), amplitude=amp * u.mag,
                              coefficients=coef, t0_mjd=start_mjd, absolute_mag=absolute_mag)
    err = sigma * rng.uniform(0.8, 1.3, obs.mjd.size)
    mag = (absolute_mag + 5 * np.log10(rh * dl) + beta * ph + truth.signal(emission)
           + rng.normal(0.0, err))
    if zp_sigma > 0 and mag.size:
        mag = mag + rng.normal(0.0, zp_sigma, obs.n_blocks)[obs.block]
    n = obs.mjd.size
    table = QTable({
        "frame": obs.frames, "mjd_utc_mid": obs.mjd, "nucleus_mag": mag, "nucleus_mag_err": err,
        "r_h_au": rh, "delta_au": dl, "phase_deg": ph, "light_time_s": light_time,
        "site": obs.site, "filter": np.full(n, filter_name),
        "source": np.full(n, source), "flags": np.full(n, "", dtype="<U64"),
    }, meta={"synthetic": True, "period_h": float(p_day * 24), "amplitude_mag": amp})
    return table, truth


def _shape_coefficients(asymmetry, symmetric, amp):
    """Fourier coefficients of the rotational signal, scaled to ``amp`` peak to peak."""
    shape = np.array([0.0,
                      asymmetry * np.cos(0.7), asymmetry * np.sin(0.7),
                      1.0, 0.0,
                      0.12 * np.cos(1.9), 0.12 * np.sin(1.9),
                      0.08, 0.05])
    if symmetric:
        shape[[1, 2, 5, 6]] = 0.0
    return shape * amp / peak_to_peak(shape)


@dataclass(frozen=True)
class _Observations:
    """Exposure times in time order, with site, frame name and site-night index of each."""

    mjd: np.ndarray
    site: np.ndarray
    frames: np.ndarray
    block: np.ndarray
    n_blocks: int


def _observing_times(n_nights, sites, start_mjd, night_hours, step_d, cloud_fraction, rng):
    """The exposures of every site-night that is not clouded out."""
    epochs, site_col, frames, block = [], [], [], []
    for night in range(n_nights):
        for name, lon in sites.items():
            if rng.random() < cloud_fraction:
                continue
            midnight = start_mjd + night + np.mod(0.5 - lon / 360.0, 1.0)
            length = night_hours / 24.0 * rng.uniform(0.5, 1.0)
            begin = midnight + rng.uniform(-0.04, 0.04) - length / 2
            times = begin + np.arange(0.0, length, step_d)
            times = times + rng.uniform(-0.1, 0.1, times.size) * step_d
            epochs.append(times)
            site_col += [name] * times.size
            frames += [f"n{night + 1:02d}_{name}_{i:03d}" for i in range(times.size)]
            block += [len(epochs) - 1] * times.size
    mjd = np.concatenate(epochs) if epochs else np.empty(0)
    order = np.argsort(mjd)
    return _Observations(mjd[order], np.array(site_col, dtype=str)[order],
                         np.array(frames, dtype=str)[order], np.array(block, dtype=int)[order],
                         len(epochs))


def _linear_geometry(mjd, start_mjd, n_nights, r_h, delta, alpha):
    """r_h, Δ, phase changing linearly over the campaign, and the light time (s)."""
    span = max(n_nights - 1, 1)
    frac = (mjd - start_mjd) / span
    rh = r_h[0] + (r_h[1] - r_h[0]) * frac
    dl = delta[0] + (delta[1] - delta[0]) * frac
    ph = alpha[0] + (alpha[1] - alpha[0]) * frac
    light_time = dl * (const.au / const.c).to_value(u.s)
    return rh, dl, ph, light_time
