"""Synthetic astrometry from an integration written apart from photpipe.orbit's.

Heliocentric equations of motion (Sun + planets as direct and indirect terms, the Sun's 1PN
term, the Marsden et al. 1973 acceleration), planets straight from jplephem at every step,
scipy's DOP853; observers from astropy's GCRS site positions plus jplephem's Earth; light time
iterated on the dense output. Only the integrator family is shared with the code under test.
"""

import numpy as np
from astropy import units as u
from astropy.coordinates import EarthLocation
from astropy.table import QTable
from astropy.time import Time
from scipy.integrate import solve_ivp

from photpipe.geometry.orbit import Orbit

AU_KM = 149_597_870.700
C = 299_792.458 * 86400.0 / AU_KM


def _kernel():
    import de421
    from jplephem.ephem import Ephemeris
    return Ephemeris(de421)


K = _kernel()
_SCALE = (float(K.AU) / AU_KM) ** 3
GM_SUN = float(K.GMS) * _SCALE
PLANETS = {"mercury": K.GM1, "venus": K.GM2, "mars": K.GM4, "jupiter": K.GM5, "saturn": K.GM6,
           "uranus": K.GM7, "neptune": K.GM8, "pluto": K.GM9}
GM_EARTH = float(K.GMB) * K.EMRAT / (1 + K.EMRAT) * _SCALE
GM_MOON = float(K.GMB) / (1 + K.EMRAT) * _SCALE


def _pos(name, jd):
    if name in ("earth", "moon"):
        emb = K.position("earthmoon", jd)
        moon = K.position("moon", jd)
        out = (emb - moon * (K.earth_share if name == "earth" else -K.moon_share)) / AU_KM
    else:
        out = K.position(name, jd) / AU_KM
    return out.reshape(3)


def _helio_planets(jd):
    sun = _pos("sun", jd)
    out = [(_pos(n, jd) - sun, float(gm) * _SCALE) for n, gm in PLANETS.items()]
    out += [(_pos("earth", jd) - sun, GM_EARTH), (_pos("moon", jd) - sun, GM_MOON)]
    return out


def water_g(r):
    return 0.111262 * (r / 2.808) ** -2.15 * (1 + (r / 2.808) ** 5.093) ** -4.6142


def _rhs(a123, g_law):
    def f(jd, y):
        r, v = y[:3], y[3:]
        rn = np.linalg.norm(r)
        acc = -GM_SUN * r / rn**3
        for rp, gm in _helio_planets(jd):
            d = rp - r
            acc += gm * (d / np.linalg.norm(d) ** 3 - rp / np.linalg.norm(rp) ** 3)
        acc += GM_SUN / (C**2 * rn**3) * ((4 * GM_SUN / rn - v @ v) * r + 4 * (r @ v) * v)
        if np.any(a123):
            h = np.cross(r, v)
            nh = h / np.linalg.norm(h)
            rh = r / rn
            th = np.cross(nh, rh)
            acc += g_law(rn) * (a123[0] * rh + a123[1] * th + a123[2] * nh)
        return np.concatenate([v, acc])
    return f


def truth_orbit(kind):
    """A hyperbolic (interstellar-like) or an elliptic comet orbit, perihelion in 2026."""
    tp = Time("2026-03-10T00:00:00", scale="tdb")
    if kind == "hyperbolic":
        return Orbit(1.4 * u.au, 3.2, 118.0 * u.deg, 32.0 * u.deg, 141.0 * u.deg, tp)
    return Orbit(1.2 * u.au, 0.72, 21.0 * u.deg, 250.0 * u.deg, 40.0 * u.deg, tp)


def integrate_truth(orbit, jd_epoch, jd_lo, jd_hi, a123=(0, 0, 0), g_law=water_g):
    r, v = orbit.state(Time(jd_epoch, format="jd", scale="tdb"), frame="icrs")
    y0 = np.concatenate([r.to_value(u.au)[:, 0], v.to_value(u.au / u.day)[:, 0]])
    f = _rhs(np.asarray(a123, float), g_law)
    sols = [solve_ivp(f, (jd_epoch, end), y0, method="DOP853", rtol=1e-13, atol=1e-16,
                      dense_output=True) for end in (jd_lo - 1, jd_hi + 1)]

    def helio(jd):
        jd = np.atleast_1d(jd)
        out = np.empty((6, jd.size))
        back = jd < jd_epoch
        if back.any():
            out[:, back] = sols[0].sol(jd[back])
        if (~back).any():
            out[:, ~back] = sols[1].sol(jd[~back])
        return out
    return helio


def make_sites(rng, n):
    lon = rng.uniform(-180, 180, n)
    lat = np.degrees(np.arcsin(rng.uniform(-0.8, 0.9, n)))
    h = rng.uniform(0, 3000, n)
    return {f"S{k:03d}": EarthLocation.from_geodetic(lon[k] * u.deg, lat[k] * u.deg, h[k] * u.m)
            for k in range(n)}


def observe(helio, times, locations):
    """Astrometric RA/Dec (deg) of the heliocentric trajectory ``helio`` from the sites."""
    t = times.tdb
    jd = t.jd1 + t.jd2
    xyz = np.stack([[loc.x.to_value(u.km), loc.y.to_value(u.km), loc.z.to_value(u.km)]
                    for loc in locations], axis=1)
    locs = EarthLocation.from_geocentric(*xyz, unit=u.km)
    site, _ = locs.get_gcrs_posvel(t)
    obs_bary = np.stack([_pos("earth", j) for j in jd], axis=1) + site.xyz.to_value(u.km) / AU_KM
    te = jd.copy()
    for _ in range(6):
        sun = np.stack([_pos("sun", j) for j in te], axis=1)
        rho = helio(te)[:3] + sun - obs_bary
        te = jd - np.linalg.norm(rho, axis=0) / C
    ra = np.degrees(np.arctan2(rho[1], rho[0])) % 360
    dec = np.degrees(np.arcsin(rho[2] / np.linalg.norm(rho, axis=0)))
    return ra, dec


def synthetic_campaign(seed, *, kind="hyperbolic", a123=(0.0, 0.0, 0.0), n_sites=12,
                       n_obs=240, days=150.0, start="2026-01-20T00:00:00", noise_seed=None,
                       noise_scale=1.0, g_law=water_g):
    """Observations (table as read from ADES), sites and the truth of one synthetic campaign."""
    rng = np.random.default_rng(seed)
    sites = make_sites(rng, n_sites)
    names = list(sites)
    t0 = Time(start, scale="utc")
    nights = np.sort(rng.uniform(0, days, n_obs // 4))
    offsets = np.sort(np.concatenate([nights + k * 0.01 for k in range(4)]))[:n_obs]
    times = t0 + offsets * u.day
    stn = np.array([names[i] for i in rng.integers(0, n_sites, n_obs)])
    sig_site = dict(zip(names, rng.uniform(0.2, 1.0, n_sites)))
    sig = np.array([sig_site[s] for s in stn])
    orbit = truth_orbit(kind)
    jd_mid = float(np.floor((t0 + days / 2 * u.day).tdb.jd - 0.5) + 0.5)
    jd_all = times.tdb.jd
    helio = integrate_truth(orbit, jd_mid, jd_all.min(), jd_all.max(), a123, g_law)
    ra, dec = observe(helio, times, [sites[s] for s in stn])
    noise = rng if noise_seed is None else np.random.default_rng(noise_seed)
    dra = noise_scale * noise.normal(0, sig) / 3600.0 / np.cos(np.radians(dec))
    ddec = noise_scale * noise.normal(0, sig) / 3600.0
    table = QTable({"obs_id": np.array([f"o{k}" for k in range(n_obs)]),
                    "object": np.full(n_obs, "C1"), "stn": stn, "time": times,
                    "ra_deg": (ra + dra) % 360, "dec_deg": dec + ddec,
                    "rms_ra_arcsec": sig, "rms_dec_arcsec": sig, "rms_corr": np.zeros(n_obs),
                    "ast_cat": np.full(n_obs, "Gaia3"), "mode": np.full(n_obs, "CCD"),
                    "sys": np.full(n_obs, ""), "pos1": np.full(n_obs, np.nan),
                    "pos2": np.full(n_obs, np.nan), "pos3": np.full(n_obs, np.nan),
                    "source": np.array([f"synthetic:{k}" for k in range(n_obs)])})
    sun = np.concatenate([c / AU_KM for c in K.position_and_velocity("sun", jd_mid)])[:, 0]
    truth = {"jd_epoch": jd_mid, "helio": helio(jd_mid)[:, 0], "bary": helio(jd_mid)[:, 0] + sun,
             "a123": np.asarray(a123, float), "orbit": orbit}
    return table, sites, truth
