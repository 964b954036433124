"""What ``photpipe ephem`` adds to the geometry: altitude, airmass, dark hours, brightness.

Altitudes and airmasses are computed offline (astropy's AltAz with the bundled Earth-orientation
tables, refraction added, Kasten & Young 1989 airmass: `photpipe.photometry.airmass`). The
predicted magnitude rests on the campaign's own results: its A(0)fρ trend against r_h
(``activity.json``) and its nucleus absolute magnitude H (``size.json``).
"""

import numpy as np
from astropy import units as u
from astropy.coordinates import AltAz, get_sun

__all__ = ["sky_columns", "dark_windows", "predicted_magnitude", "predicted_magnitude_band",
           "DARK_SUN_ALTITUDE"]

#: The Sun's altitude below which the sky is dark (end of astronomical twilight; common
#: practice, e.g. the Astronomical Almanac's definition of astronomical twilight).
DARK_SUN_ALTITUDE = -18.0 * u.deg


def sky_columns(times, location, ra, dec):
    """Apparent altitude and airmass of the target and the Sun's altitude at each time.

    Parameters
    ----------
    times : `~astropy.time.Time`
    location : `~astropy.coordinates.EarthLocation`
    ra, dec : `~astropy.units.Quantity` ['angle']
        The target's astrometric position at each time.

    Returns
    -------
    altitude, sun_altitude : `~astropy.units.Quantity` ['angle']
    airmass : ndarray
        NaN where the target is below the horizon.
    """
    from photpipe.geometry._offline import offline_earth_orientation
    from photpipe.photometry.airmass import frame_airmass

    airmass, altitude = frame_airmass(times, location, ra, dec)
    with offline_earth_orientation():
        sun = get_sun(times).transform_to(AltAz(obstime=times, location=location,
                                                pressure=0 * u.hPa))
    return altitude.to(u.deg), np.asarray(airmass, dtype=float), sun.alt.to(u.deg)


def dark_windows(times, altitude, sun_altitude, *, min_altitude):
    """Spans of the time grid when the sky is dark and the target above ``min_altitude``.

    Returns
    -------
    windows : list of (`~astropy.time.Time`, `~astropy.time.Time`)
        First and last grid time of each span (the true edges lie within one step).

    Examples
    --------
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> t = Time("2026-12-01") + [0, 1, 2, 3, 4] * u.h
    >>> w = dark_windows(t, [10, 30, 40, 35, 10] * u.deg, [-30, -30, -30, -10, -30] * u.deg,
    ...                  min_altitude=20 * u.deg)
    >>> [(a.iso[11:16], b.iso[11:16]) for a, b in w]
    [('01:00', '02:00')]
    """
    ok = (u.Quantity(sun_altitude, u.deg) < DARK_SUN_ALTITUDE) & \
        (u.Quantity(altitude, u.deg) >= u.Quantity(min_altitude, u.deg))
    ok = np.asarray(ok, dtype=bool)
    edges = np.flatnonzero(np.diff(np.concatenate([[False], ok, [False]]).astype(int)))
    return [(times[a], times[b - 1]) for a, b in zip(edges[0::2], edges[1::2], strict=True)]


def _branch_for(activity, r_h_au, post):
    branches = (activity or {}).get("trend", {}).get("branches") or []
    wanted = "post" if post else "pre"
    for b in branches:
        if b.get("branch") == wanted and b.get("k") is not None:
            return b
    return None


def predicted_magnitude(geometry, *, activity=None, size=None, m_sun=None,
                        phase_coefficient=0.035):
    """Predicted magnitude of the comet in the campaign's trend aperture, from its own results.

    The same as `predicted_magnitude_band` without the error (see there).

    Returns
    -------
    mag : ndarray or None
    note : str
    """
    mag, _, note = predicted_magnitude_band(geometry, activity=activity, size=size,
                                            m_sun=m_sun, phase_coefficient=phase_coefficient)
    return mag, note


def _coma_log_sigma(branch, log_r_h):
    """1σ of log10 A(0)fρ predicted at log10 r_h: the fit's covariance and the night scatter."""
    var_n = float(branch.get("log10_afrho_1au_err") or 0.0) ** 2
    var_k = float(branch.get("k_err") or 0.0) ** 2
    cov = float(branch.get("cov_lognorm_k") or 0.0)
    scatter = float(branch.get("scatter_dex") or 0.0)
    var = var_n + 2 * log_r_h * cov + log_r_h**2 * var_k
    return np.sqrt(np.maximum(var, 0.0) + scatter**2)


def predicted_magnitude_band(geometry, *, activity=None, size=None, m_sun=None,
                             phase_coefficient=0.035):
    """Predicted magnitude in the campaign's trend aperture and its 1σ error band.

    Parameters
    ----------
    geometry : `~astropy.table.QTable`
        With ``time``, ``r_h``, ``delta``, ``phase``.
    activity : dict, optional
        ``activity.json``: the A(0)fρ ∝ r_h^k branches (``log10_afrho_1au_cm``, ``k``, their
        errors ``log10_afrho_1au_err``, ``k_err``, covariance ``cov_lognorm_k`` and the
        night-to-night ``scatter_dex``), the aperture ``rho_km`` and the perihelion time.
    size : dict, optional
        ``size.json``: ``H_mag`` (error ``H_err_total_mag`` or ``H_err_mag``) and
        ``m_sun_mag`` of the nucleus.
    m_sun : float, optional
        The Sun's magnitude at 1 au in the band (default ``size["m_sun_mag"]``).
    phase_coefficient : float
        Linear phase coefficient of the nucleus, mag/deg (0.035: common practice for nuclei).

    Returns
    -------
    mag, mag_err : ndarray or None
        Magnitude and its 1σ error; NaN where the trend has no branch; None without a fitted
        A(0)fρ trend (the nucleus alone is not the comet's brightness).
    note : str
        What the prediction and its error rest on (aperture, trend range, extrapolation), or
        why there is none.

    Notes
    -----
    The coma: A(α)fρ = A(0)fρ Φ(α) with the Schleicher-Marcus dust phase function, then
    m = m_sun - 2.5 log10(Afρ ρ / (4 r_h² Δ²)) (A'Hearn et al. 1984, AJ 89, 579; r_h in au,
    Δ and ρ in cm). The nucleus: m = H + 5 log10(r_h Δ) + β α. The two fluxes add.

    The coma's error is 2.5 σ(log10 Afρ), with σ² = σ_N² + 2 x cov + x² σ_k² + s²
    (x = log10 r_h, first-order propagation through the power law, e.g. Bevington & Robinson
    2003, Eq. 3.13) plus the trend's night-to-night scatter s: a prediction for one night, not
    for the trend line. The nucleus adds its H error; the two are weighted by their shares of
    the flux.
    """
    trend = (activity or {}).get("trend") or {}
    size = size or {}
    m_sun = m_sun if m_sun is not None else size.get("m_sun_mag")
    has_coma = bool(trend.get("branches")) and trend.get("rho_km") and m_sun is not None
    if not has_coma:
        # the nucleus alone would be far fainter than the comet: no total is predicted
        why = ("no predicted magnitude: the campaign has no fitted A(0)fρ trend yet (the "
               "nucleus alone, from H, is not the comet's brightness)")
        return None, None, why
    r_h = geometry["r_h"].to_value(u.au)
    delta = geometry["delta"].to_value(u.au)
    phase = geometry["phase"].to_value(u.deg)
    coma, coma_err, notes = _coma_magnitude(geometry, trend, activity, m_sun, r_h, delta, phase)
    f_coma = np.where(np.isfinite(coma), 10 ** (-0.4 * np.nan_to_num(coma, nan=99)), 0)
    f_nuc = np.zeros(r_h.size)
    nuc_err = 0.0
    if size.get("H_mag") is not None:
        nuc = size["H_mag"] + 5 * np.log10(r_h * delta) + phase_coefficient * phase
        f_nuc = 10 ** (-0.4 * nuc)
        nuc_err = float(size.get("H_err_total_mag") or size.get("H_err_mag") or 0.0)
        notes.append(f"nucleus from H = {size['H_mag']:.2f} ± {nuc_err:.2f} mag and "
                     f"{phase_coefficient:g} mag/deg")
    flux = f_coma + f_nuc
    with np.errstate(divide="ignore", invalid="ignore"):
        mag = np.where(flux > 0, -2.5 * np.log10(flux), np.nan)
        err = np.hypot(f_coma * np.nan_to_num(coma_err), f_nuc * nuc_err) / flux
    err = np.where(np.isfinite(coma), err, np.nan)
    notes.append("error (1σ) from the trend's parameter covariance, its night-to-night scatter "
                 "and the H error")
    return mag, err, "; ".join(notes)


def _coma_magnitude(geometry, trend, activity, m_sun, r_h, delta, phase):
    """The coma's magnitude and its 1σ error in the trend's aperture, branch by branch."""
    from photpipe.photometry.dust_phase import dust_phase

    rho_cm = trend["rho_km"] * 1e5
    peri = trend.get("perihelion_time")
    post = np.asarray(geometry["time"].utc.isot > peri) if peri else np.zeros(r_h.size, bool)
    coma = np.full(r_h.size, np.nan)
    coma_err = np.full(r_h.size, np.nan)
    notes = [f"coma in ρ = {trend['rho_km']:g} km from the campaign's A(0)fρ trend"]
    for is_post in (False, True):
        b = _branch_for(activity, r_h, is_post)
        sel = post == is_post
        if b is None or not np.any(sel):
            continue
        a0 = 10 ** b["log10_afrho_1au_cm"] * r_h[sel] ** b["k"]
        a = a0 * dust_phase(phase[sel] * u.deg)
        coma[sel] = m_sun - 2.5 * np.log10(a * rho_cm / (4 * r_h[sel] ** 2
                                                         * (delta[sel] * 1.495978707e13) ** 2))
        coma_err[sel] = 2.5 * _coma_log_sigma(b, np.log10(r_h[sel]))
        lo = b.get("r_h_min_au", b.get("r_h_min"))
        hi = b.get("r_h_max_au", b.get("r_h_max"))
        if lo is not None and hi is not None and np.any((r_h[sel] < lo) | (r_h[sel] > hi)):
            notes.append(f"the {'post' if is_post else 'pre'}-perihelion trend is "
                         f"extrapolated beyond r_h {lo:.2f}-{hi:.2f} au")
    return coma, coma_err, notes
