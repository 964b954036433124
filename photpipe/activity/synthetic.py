"""A small synthetic activity campaign with known truth, for tests, demos and benchmarks.

Every number here belongs to an invented scenario: an invented comet on a hyperbolic-looking
path seen over several weeks. The geometry is a straight-line fly-by, r_h(t) = sqrt(q² + (v t)²),
which is adequate for exercising the trend and outburst code but is not an orbit.
"""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time

from photpipe.activity.powerlaw import log_afrho_power_law

__all__ = ["SimulatedActivity", "simulate_activity", "simulate_campaign_tables"]

_DEFAULT_OFFSETS = np.arange(-44.0, 47.0, 5.0)  # days from perihelion: 19 nights
_AU_CM = (1 * u.au).to_value(u.cm)
_AU_KM = (1 * u.au).to_value(u.km)
_M_SUN_R = -27.15  # apparent R magnitude of the Sun (from memory; synthetic use only)
_RAD_TO_ARCSEC = 206264.806


@dataclass(frozen=True)
class SimulatedActivity:
    """Per-row synthetic measurements (frames × apertures) and the truth behind them."""

    time: Time
    r_h: u.Quantity
    delta: u.Quantity
    phase: u.Quantity
    elong: u.Quantity
    rho: u.Quantity
    afrho: u.Quantity
    afrho_err: u.Quantity
    afrho_true: u.Quantity
    night: np.ndarray
    frame: np.ndarray
    perihelion_time: Time
    truth: dict = field(default_factory=dict)


def simulate_activity(*, seed=0, night_offsets=None, frames_per_night=8, frame_spacing_h=0.4,
                      q_au=1.31, speed_au_per_day=0.03, k_pre=-3.5, k_post=-2.5,
                      afrho_at_q_cm=300.0, scatter_dex=0.03, frame_error=0.03,
                      outburst_night=None, outburst_mag=-1.0, outburst_decay_days=3.0,
                      apertures_km=(1.0e4,), perihelion_mjd=61400.0):
    """Simulate night-by-night Afρ following r_h^k on each side of perihelion.

    Parameters
    ----------
    seed : int
        Seed of `numpy.random.default_rng`.
    night_offsets : array-like of float, optional
        Nights, in days from perihelion (default every 5 days from -44 to +46).
    frames_per_night : int
    frame_spacing_h : float
        Hours between frames of one night.
    q_au, speed_au_per_day : float
        Perihelion distance and fly-by speed of the straight-line path.
    k_pre, k_post : float
        True power-law indices before and after perihelion; both branches meet at r_h = q.
    afrho_at_q_cm : float
        True A(0)fρ at perihelion.
    scatter_dex : float
        True night-to-night scatter about the power law (dex, Gaussian).
    frame_error : float
        Fractional 1σ error of each frame's Afρ (drawn and also reported as the error).
    outburst_night : int, optional
        Index of the night on whose first frame an outburst is already under way (it starts
        0.02 d before); None for a quiet campaign.
    outburst_mag : float
        Brightening at onset, in magnitudes (negative is brighter).
    outburst_decay_days : float
        e-folding time of the extra Afρ after the onset.
    apertures_km : sequence of float
        Aperture radii; a steady-state coma gives the same Afρ in each (noise drawn apart).
    perihelion_mjd : float

    Returns
    -------
    sim : `SimulatedActivity`

    Examples
    --------
    >>> sim = simulate_activity(seed=2, frames_per_night=4)
    >>> len(sim.time), sim.truth["k_pre"]
    (76, -3.5)
    """
    rng = np.random.default_rng(seed)
    offsets = _DEFAULT_OFFSETS if night_offsets is None else np.asarray(night_offsets, float)
    n_n = offsets.size
    n_f = int(frames_per_night)
    apertures = np.asarray(apertures_km, dtype=float)
    # Frames of each night start at the offset; times relative to perihelion (days).
    dt_frame = offsets[:, None] + np.arange(n_f)[None, :] * frame_spacing_h / 24.0
    night_idx = np.repeat(np.arange(n_n), n_f)
    dt = dt_frame.ravel()
    r_h = np.sqrt(q_au ** 2 + (speed_au_per_day * dt) ** 2)
    log_q = np.log10(q_au)
    k = np.where(dt < 0, k_pre, k_post)
    log_norm = np.log10(afrho_at_q_cm) - k * log_q
    night_noise = rng.normal(0.0, scatter_dex, n_n)
    log_true = log_afrho_power_law(np.log10(r_h), log_norm, k) + night_noise[night_idx]
    onset = None
    if outburst_night is not None:
        onset = offsets[outburst_night] - 0.02
        after = dt >= onset
        extra = (10 ** (-0.4 * outburst_mag) - 1.0) * np.exp(
            -np.where(after, dt - onset, 0.0) / outburst_decay_days)
        log_true = log_true + np.where(after, np.log10(1.0 + extra), 0.0)
    true = 10 ** log_true
    # Repeat over apertures, each with its own noise.
    n_a = apertures.size
    dt_all = np.repeat(dt, n_a)
    true_all = np.repeat(true, n_a)
    err = frame_error * true_all
    meas = true_all + rng.normal(0.0, 1.0, true_all.size) * err
    delta = 0.9 + 0.012 * np.abs(dt_all)
    phase = np.clip(35.0 - 0.3 * dt_all, 5.0, 60.0)
    elong = 40.0 + 0.6 * (dt_all - offsets.min())
    t = Time(perihelion_mjd + dt_all, format="mjd", scale="utc")
    truth = {"k_pre": k_pre, "k_post": k_post, "afrho_at_q_cm": afrho_at_q_cm, "q_au": q_au,
             "scatter_dex": scatter_dex, "outburst_night": outburst_night,
             "outburst_mag": outburst_mag if outburst_night is not None else None,
             "outburst_onset_mjd": None if onset is None else perihelion_mjd + onset,
             "night_offsets_d": offsets.tolist()}
    frames = np.repeat(np.arange(n_n * n_f), n_a)
    return SimulatedActivity(
        time=t, r_h=np.repeat(r_h, n_a) * u.au, delta=delta * u.au, phase=phase * u.deg,
        elong=elong * u.deg, rho=np.tile(apertures, n_n * n_f) * u.km, afrho=meas * u.cm,
        afrho_err=err * u.cm, afrho_true=true_all * u.cm, night=np.repeat(night_idx, n_a),
        frame=frames, perihelion_time=Time(perihelion_mjd, format="mjd", scale="utc"),
        truth=truth)


def simulate_campaign_tables(*, seed=0, apertures_km=(5.0e3, 1.0e4, 2.0e4),
                             phase_coeff_mag_per_deg=0.02, **kwargs):
    """Synthetic ``measurements`` and ``nucleus`` tables with every contract column.

    Parameters
    ----------
    seed : int
    apertures_km : sequence of float
    phase_coeff_mag_per_deg : float
        Linear dust phase law used to turn A(0)fρ into Afρ (invented for this scenario).
    **kwargs
        Passed to `simulate_activity`.

    Returns
    -------
    measurements, nucleus : `~astropy.table.QTable`
        Column names as in the ``measurements.ecsv`` and ``nucleus.ecsv`` contracts, with
        units; ``measurements.meta["perihelion_time"]`` holds the perihelion (ISO, UTC).
    sim : `SimulatedActivity`

    Examples
    --------
    >>> meas, nuc, sim = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> len(meas) == 3 * len(nuc), "a0frho_cm" in meas.colnames
    (True, True)
    """
    sim = simulate_activity(seed=seed, apertures_km=apertures_km, **kwargs)
    rng = np.random.default_rng(seed + 10_000)
    n = len(sim.time)
    n_frames = int(sim.frame.max()) + 1
    per_frame = np.repeat(np.arange(n_frames), len(apertures_km))
    zp = 24.6 + rng.normal(0.0, 0.04, n_frames)
    fwhm = np.clip(2.2 + rng.normal(0.0, 0.3, n_frames), 1.2, None)
    phase = sim.phase.to_value(u.deg)
    a0 = sim.afrho.to_value(u.cm)
    a0_err = sim.afrho_err.to_value(u.cm)
    factor = 10 ** (-0.4 * phase_coeff_mag_per_deg * phase)
    afrho = a0 * factor
    r_h = sim.r_h.to_value(u.au)
    delta = sim.delta.to_value(u.au)
    rho_km = sim.rho.to_value(u.km)
    # Afρ = (2 Δ r_h)² / ρ 10^{0.4 (m_sun - m)} (A'Hearn et al. 1984, AJ 89, 579, eq. 1),
    # Δ and ρ in cm, r_h in au: solved for m.
    with np.errstate(invalid="ignore"):
        mag = _M_SUN_R - 2.5 * np.log10(np.clip(afrho, 1e-30, None) * rho_km * 1e5
                                        / (2 * delta * _AU_CM * r_h) ** 2)
    meas = QTable()
    meas["frame"] = np.array([f"n{sim.night[i]:02d}_f{sim.frame[i]:04d}" for i in range(n)])
    meas["mjd_utc_mid"] = sim.time.utc.mjd * u.day
    meas["filter"] = np.full(n, "R")
    meas["exptime_s"] = np.full(n, 120.0) * u.s
    meas["airmass"] = 1.0 + 0.8 * rng.random(n_frames)[per_frame]
    meas["zp_mag"] = zp[per_frame] * u.mag
    meas["zp_err_mag"] = np.full(n, 0.015) * u.mag
    meas["n_stars"] = np.full(n, 42)
    meas["x_pix"] = np.full(n, 512.0) * u.pix
    meas["y_pix"] = np.full(n, 512.0) * u.pix
    meas["ra_deg"] = (40.0 + 0.2 * (sim.time.mjd - sim.time.mjd.min())) * u.deg
    meas["dec_deg"] = np.full(n, 12.0) * u.deg
    meas["r_h_au"] = r_h * u.au
    meas["delta_au"] = delta * u.au
    meas["phase_deg"] = phase * u.deg
    meas["elong_deg"] = sim.elong
    meas["rho_km"] = rho_km * u.km
    meas["rho_arcsec"] = rho_km / (delta * _AU_KM) * _RAD_TO_ARCSEC * u.arcsec
    meas["mag"] = mag * u.mag
    meas["mag_err"] = 1.0857 * a0_err / a0 * u.mag
    meas["afrho_cm"] = afrho * u.cm
    meas["afrho_err_cm"] = a0_err * factor * u.cm
    meas["a0frho_cm"] = a0 * u.cm
    meas["a0frho_err_cm"] = a0_err * u.cm
    meas["coma_slope"] = -1.0 + rng.normal(0.0, 0.05, n)
    meas["flags"] = np.full(n, "", dtype="<U32")
    meas.meta["perihelion_time"] = sim.perihelion_time.utc.isot

    first = np.searchsorted(per_frame, np.arange(n_frames))
    t_frame = sim.time[first]
    rh_f = r_h[first]
    de_f = delta[first]
    ph_f = phase[first]
    hours = (t_frame.mjd - t_frame.mjd.min()) * 24.0
    # Invented nucleus: H = 15.5, 0.035 mag/deg phase law, 0.3 mag double-peaked 7.3 h lightcurve.
    nmag = (15.5 + 5 * np.log10(rh_f * de_f) + 0.035 * ph_f
            + 0.15 * np.sin(4 * np.pi * hours / 7.3) + rng.normal(0.0, 0.04, n_frames))
    nuc = QTable()
    nuc["frame"] = meas["frame"][first]
    nuc["mjd_utc_mid"] = t_frame.utc.mjd * u.day
    nuc["nucleus_mag"] = nmag * u.mag
    nuc["nucleus_mag_err"] = np.full(n_frames, 0.04) * u.mag
    nuc["nucleus_flux_e_s"] = 10 ** (-0.4 * (nmag - zp)) * u.electron / u.s
    nuc["coma_k"] = np.full(n_frames, 50.0) * u.electron / u.s
    nuc["coma_gamma"] = 1.0 + rng.normal(0.0, 0.05, n_frames)
    nuc["fwhm_arcsec"] = fwhm * u.arcsec
    nuc["nucleus_fraction"] = np.clip(0.3 + rng.normal(0.0, 0.05, n_frames), 0.0, 1.0)
    nuc["chi2_red"] = 1.0 + np.abs(rng.normal(0.0, 0.1, n_frames))
    nuc["method"] = np.full(n_frames, "2d")
    nuc["flags"] = np.full(n_frames, "", dtype="<U32")
    return meas, nuc, sim
