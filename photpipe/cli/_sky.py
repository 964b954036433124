"""What ``photpipe ephem`` adds to the geometry: altitude, airmass, dark hours, brightness.

Altitudes and airmasses are computed offline (astropy's AltAz with the bundled Earth-orientation
tables, refraction added, Kasten & Young 1989 airmass: `photpipe.photometry.airmass`). The
predicted magnitude rests on the campaign's own results: its A(0)fρ trend against r_h
(``activity.json``) and its nucleus absolute magnitude H (``size.json``).
"""

import numpy as np
from astropy import units as u
from astropy.coordinates import AltAz, get_sun

__all__ = ["sky_columns", "dark_windows", "predicted_magnitude", "DARK_SUN_ALTITUDE"]

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

    Parameters
    ----------
    geometry : `~astropy.table.QTable`
        With ``time``, ``r_h``, ``delta``, ``phase``.
    activity : dict, optional
        ``activity.json``: the A(0)fρ ∝ r_h^k branches (``log10_afrho_1au_cm``, ``k``), the
        aperture ``rho_km`` and the perihelion time.
    size : dict, optional
        ``size.json``: ``H_mag`` and ``m_sun_mag`` of the nucleus.
    m_sun : float, optional
        The Sun's magnitude at 1 au in the band (default ``size["m_sun_mag"]``).
    phase_coefficient : float
        Linear phase coefficient of the nucleus, mag/deg (0.035: common practice for nuclei).

    Returns
    -------
    mag : ndarray or None
        NaN where the trend has no branch; None without a fitted A(0)fρ trend (the nucleus
        alone is not the comet's brightness).
    note : str
        What the prediction rests on (aperture, trend range, extrapolation), or why there is
        none.

    Notes
    -----
    The coma: A(α)fρ = A(0)fρ Φ(α) with the Schleicher-Marcus dust phase function, then
    m = m_sun - 2.5 log10(Afρ ρ / (4 r_h² Δ²)) (A'Hearn et al. 1984, AJ 89, 579; r_h in au,
    Δ and ρ in cm). The nucleus: m = H + 5 log10(r_h Δ) + β α. The two fluxes add.
    """
    from photpipe.photometry.dust_phase import dust_phase

    trend = (activity or {}).get("trend") or {}
    size = size or {}
    m_sun = m_sun if m_sun is not None else size.get("m_sun_mag")
    has_coma = bool(trend.get("branches")) and trend.get("rho_km") and m_sun is not None
    has_nucleus = size.get("H_mag") is not None
    if not has_coma:
        # the nucleus alone would be far fainter than the comet: no total is predicted
        why = ("no predicted magnitude: the campaign has no fitted A(0)fρ trend yet (the "
               "nucleus alone, from H, is not the comet's brightness)")
        return None, why
    r_h = geometry["r_h"].to_value(u.au)
    delta = geometry["delta"].to_value(u.au)
    phase = geometry["phase"].to_value(u.deg)
    flux = np.zeros(len(geometry))
    notes = []
    if has_coma:
        rho_cm = trend["rho_km"] * 1e5
        peri = trend.get("perihelion_time")
        post = np.asarray(geometry["time"].utc.isot > peri) if peri else np.zeros(r_h.size, bool)
        coma = np.full(r_h.size, np.nan)
        for is_post in (False, True):
            b = _branch_for(activity, r_h, is_post)
            sel = post == is_post
            if b is None or not np.any(sel):
                continue
            a0 = 10 ** b["log10_afrho_1au_cm"] * r_h[sel] ** b["k"]
            a = a0 * dust_phase(phase[sel] * u.deg)
            coma[sel] = m_sun - 2.5 * np.log10(a * rho_cm / (4 * r_h[sel] ** 2
                                                             * (delta[sel] * 1.495978707e13) ** 2))
            lo, hi = b.get("r_h_min"), b.get("r_h_max")
            if lo is not None and hi is not None and np.any((r_h[sel] < lo) | (r_h[sel] > hi)):
                notes.append(f"the {'post' if is_post else 'pre'}-perihelion trend is "
                             f"extrapolated beyond r_h {lo:.2f}-{hi:.2f} au")
        flux += np.where(np.isfinite(coma), 10 ** (-0.4 * np.nan_to_num(coma, nan=99)), 0)
        notes.insert(0, f"coma in ρ = {trend['rho_km']:g} km from the campaign's A(0)fρ trend")
    if has_nucleus:
        nuc = size["H_mag"] + 5 * np.log10(r_h * delta) + phase_coefficient * phase
        flux += 10 ** (-0.4 * nuc)
        notes.append(f"nucleus from H = {size['H_mag']:.2f} mag and "
                     f"{phase_coefficient:g} mag/deg")
    with np.errstate(divide="ignore"):
        mag = np.where(flux > 0, -2.5 * np.log10(flux), np.nan)
    return mag, "; ".join(notes)
