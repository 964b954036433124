"""observing_geometry against an independent, slow assembly from astropy's own functions."""

import warnings

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import (
    CartesianRepresentation,
    EarthLocation,
    SkyCoord,
    get_body_barycentric,
    get_body_barycentric_posvel,
)
from astropy.time import Time

from photpipe._warnings import SolarElongationWarning
from photpipe.geometry import Orbit, observing_geometry, site_location
from photpipe.geometry._columns import GEOMETRY_COLUMNS
from photpipe.geometry._offline import offline_earth_orientation

C_KM_S = 299792.458  # SI, exact
TP = Time("2026-11-20T09:30:00", scale="tdb")


@pytest.fixture(scope="module")
def comet():
    # invented hyperbolic comet (demo scenario elements)
    return Orbit(1.31 * u.au, 2.85, 137.6 * u.deg, 57.4 * u.deg, 2.6 * u.deg, TP,
                 name="Vesperine")


@pytest.fixture(scope="module")
def site():
    return site_location(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m, name="kettle_rock")


def _sky(vec):
    return SkyCoord(CartesianRepresentation(vec), frame="icrs")


def _oracle(orbit, t, location):
    """Slow reference: astropy's Earth, Sun and site, a plain light-time loop, SkyCoord angles.

    Astrometric place (light-time corrected, no aberration) as defined by Kaplan et al. (1989).
    """
    earth_p, earth_v = get_body_barycentric_posvel("earth", t, ephemeris="builtin")
    obs = earth_p.xyz.to(u.au)
    if location is not None:
        with offline_earth_orientation():
            gp, _ = location.get_gcrs_posvel(t)
        obs = obs + gp.xyz.to(u.au)
    sun_now = get_body_barycentric("sun", t, ephemeris="builtin").xyz.to(u.au)
    tau = 0 * u.s
    for _ in range(8):
        r, v = orbit.state(t - tau, frame="icrs")
        sun_then = get_body_barycentric("sun", t - tau, ephemeris="builtin").xyz.to(u.au)
        comet_bary = sun_then + r[:, 0]
        rho = comet_bary - obs
        tau = (np.linalg.norm(rho.to_value(u.km)) / C_KM_S) * u.s
    target = _sky(rho)
    sun_dir = _sky(sun_now - obs)
    return {
        "ra": target.ra.deg,
        "dec": target.dec.deg,
        "delta": np.linalg.norm(rho.to_value(u.au)),
        "r_h": np.linalg.norm(r[:, 0].to_value(u.au)),
        "elong": target.separation(sun_dir).deg,
        "phase": _sky(sun_then - comet_bary).separation(_sky(obs - comet_bary)).deg,
        "pa_sun": target.position_angle(sun_dir).deg,
        "pa_neg_velocity": target.position_angle(_sky(rho - v[:, 0] * 1e-4 * u.day)).deg,
        "true_anomaly": orbit.true_anomaly(t - tau)[0].to_value(u.deg),
        "light_time": tau.to_value(u.s),
    }


@pytest.mark.parametrize("where", [pytest.param(None, id="geocentre"),
                                   pytest.param("site", id="topocentric")])
def test_matches_independent_astropy_assembly(comet, site, where):
    location = site if where == "site" else None
    times = Time(["2026-10-01T03:00", "2026-12-01T06:00", "2027-03-15T22:10"], scale="utc")
    geo = observing_geometry(comet, times, location=location, caution_elongation=0 * u.deg)
    for k, t in enumerate(times):
        ref = _oracle(comet, t, location)
        row = geo[k]
        mas = 1e-3 / 3600
        assert row["ra"].to_value(u.deg) == pytest.approx(ref["ra"], abs=mas / np.cos(
            np.deg2rad(ref["dec"])))
        assert row["dec"].to_value(u.deg) == pytest.approx(ref["dec"], abs=mas)
        assert row["delta"].to_value(u.au) == pytest.approx(ref["delta"], abs=1e-10)
        assert row["r_h"].to_value(u.au) == pytest.approx(ref["r_h"], abs=1e-10)
        assert row["light_time"].to_value(u.s) == pytest.approx(ref["light_time"], abs=1e-5)
        for name in ("elong", "phase", "true_anomaly"):
            assert row[name].to_value(u.deg) == pytest.approx(ref[name], abs=1e-6), name
        for name in ("pa_sun", "pa_neg_velocity"):
            diff = (row[name].to_value(u.deg) - ref[name] + 180) % 360 - 180
            assert abs(diff) < 1e-3, name


def test_rates_match_finite_differences(comet, site):
    # central differences of the table's own positions over +-30 s (Taylor: error ~ h^2)
    t0 = Time("2026-12-01T06:00", scale="utc")
    h = 30.0
    geo = observing_geometry(comet, t0 + [-h, 0.0, h] * u.s, location=site)
    ra = np.deg2rad(geo["ra"].to_value(u.deg))
    dec = np.deg2rad(geo["dec"].to_value(u.deg))
    to_arcsec_h = np.rad2deg(1) * 3600 * 3600 / (2 * h)
    ra_rate = (ra[2] - ra[0]) * np.cos(dec[1]) * to_arcsec_h
    dec_rate = (dec[2] - dec[0]) * to_arcsec_h
    assert geo["ra_rate"][1].to_value(u.arcsec / u.h) == pytest.approx(ra_rate, abs=1e-3)
    assert geo["dec_rate"][1].to_value(u.arcsec / u.h) == pytest.approx(dec_rate, abs=1e-3)
    delta_dot = np.diff(geo["delta"].to_value(u.km))[[0, 1]].sum() / (2 * h)
    assert geo["delta_dot"][1].to_value(u.km / u.s) == pytest.approx(delta_dot, abs=1e-5)
    # r_h is taken at the emission time t - tau, which advances at the rate 1 - delta_dot / c
    r_h_rate_seen = np.diff(geo["r_h"].to_value(u.km)).sum() / (2 * h)
    factor = 1 - geo["delta_dot"][1].to_value(u.km / u.s) / C_KM_S
    assert geo["r_h_dot"][1].to_value(u.km / u.s) * factor == pytest.approx(r_h_rate_seen,
                                                                            rel=1e-6)


def test_columns_units_and_light_time_per_au(comet):
    times = Time("2026-12-01T06:00", scale="utc") + np.arange(4) * u.day
    geo = observing_geometry(comet, times)
    assert geo.colnames == list(GEOMETRY_COLUMNS)
    for name, unit in GEOMETRY_COLUMNS.items():
        if unit is not None:
            assert geo[name].unit == unit, name
    # light time per AU: 499.004783836 s (IERS Conventions 2010, Table 1.1)
    np.testing.assert_allclose(geo["light_time"].to_value(u.s) / geo["delta"].to_value(u.au),
                               499.004783836, rtol=1e-12)
    assert geo.meta["source"] == "orbit" and geo.meta["observer"] == "geocentre"
    assert geo.meta["target"] == "Vesperine"
    assert np.all(geo["flags"] == "")


def test_parallax_is_bounded_by_the_horizontal_parallax(comet, site):
    # topocentric minus geocentric direction <= 8.794" / delta (solar horizontal parallax,
    # IAU 1976 System of Astronomical Constants; a site 1.7 km high adds < 3e-4 of it)
    times = Time("2026-12-01T00:00", scale="utc") + np.linspace(0, 1, 49) * u.day
    geo = observing_geometry(comet, times)
    topo = observing_geometry(comet, times, location=site)
    sep = SkyCoord(geo["ra"], geo["dec"]).separation(SkyCoord(topo["ra"], topo["dec"]))
    limit = 8.794 * 1.0003 / geo["delta"].to_value(u.au)
    assert np.all(sep.to_value(u.arcsec) <= limit)
    assert sep.to_value(u.arcsec).max() > 0.5 * limit.min()  # the site does turn the Earth


def test_many_epochs_equal_few_epochs(comet, site):
    # 10^4 epochs go through the sampled Sun/Earth/site grids; the same epochs one by one do not
    times = Time("2026-12-01T00:00", scale="utc") + np.linspace(0, 2, 10_000) * u.day
    many = observing_geometry(comet, times, location=site)
    idx = np.array([0, 1234, 5000, 7777, 9999])
    few = observing_geometry(comet, times[idx], location=site)
    for name in ("ra", "dec"):
        np.testing.assert_allclose(many[name][idx].to_value(u.deg), few[name].to_value(u.deg),
                                   rtol=0, atol=1e-3 / 3600)   # 1 mas
    np.testing.assert_allclose(many["delta"][idx].to_value(u.au), few["delta"].to_value(u.au),
                               rtol=0, atol=1e-10)
    np.testing.assert_allclose(many["ra_rate"][idx].to_value(u.arcsec / u.h),
                               few["ra_rate"].to_value(u.arcsec / u.h), atol=1e-3)


def test_de421_and_builtin_agree(comet):
    # the two Earth ephemerides differ by < 10 km (see test_solar_system), i.e. < 10 km / delta
    times = Time("2026-12-01T00:00", scale="utc") + np.arange(0, 60, 5) * u.day
    a = observing_geometry(comet, times)
    b = observing_geometry(comet, times, ephemeris="de421")
    sep = SkyCoord(a["ra"], a["dec"]).separation(SkyCoord(b["ra"], b["dec"])).to_value(u.rad)
    assert np.all(sep < 10.0 / (a["delta"].to_value(u.km)))
    assert b.meta["ephemeris"] == "de421"


def test_near_sun_rows_are_flagged_and_warned():
    # another invented hyperbolic orbit, one that passes within 15 deg of the Sun in 2026-27
    comet = Orbit(1.31 * u.au, 2.85, 128.4 * u.deg, 47.2 * u.deg, 113.6 * u.deg, TP)
    times = Time("2026-01-01T00:00", scale="utc") + np.arange(0, 730, 2) * u.day
    quiet = observing_geometry(comet, times, caution_elongation=0 * u.deg)
    close = quiet["elong"].to_value(u.deg) < 20
    assert close.any() and not close.all()  # the scan does include a near-Sun stretch
    with pytest.warns(SolarElongationWarning, match="SUN CAUTION: the target comes within"):
        geo = observing_geometry(comet, times)
    assert np.array_equal(geo["flags"] == "near_sun", close)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        observing_geometry(comet, times[~close][:3])   # no warning when all is far from the Sun


@pytest.mark.parametrize(("args", "kw", "exc", "text"), [
    pytest.param(("orbit", "2026-12-01"), {}, TypeError, "'times' must be an astropy Time",
                 id="times-string"),
    pytest.param(("not-an-orbit", None), {}, TypeError,
                 "'orbit' must be a photpipe.geometry.Orbit", id="orbit-kind"),
    pytest.param(("orbit", None), {"location": (1, 2, 3)}, TypeError,
                 "'location' must be an astropy EarthLocation or None", id="location-kind"),
    pytest.param(("orbit", None), {"ephemeris": "de999"}, ValueError,
                 "'ephemeris' must be one of", id="ephemeris-name"),
    pytest.param(("orbit", Time(["2160-01-01"], scale="utc")), {}, ValueError,
                 "TDB is outside the astropy built-in (ERFA epv00) ephemeris range",
                 id="outside-ephemeris"),
])
def test_bad_input(comet, args, kw, exc, text):
    orbit = comet if args[0] == "orbit" else args[0]
    times = Time(["2026-12-01"], scale="utc") if args[1] is None else args[1]
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*dubious year.*")  # UTC in 2160
        with pytest.raises(exc, match=text.replace("(", r"\(").replace(")", r"\)")):
            observing_geometry(orbit, times, **kw)


def test_scalar_time_gives_one_row(comet):
    geo = observing_geometry(comet, Time("2026-12-01T06:00", scale="utc"),
                             location=EarthLocation.from_geodetic(0 * u.deg, 0 * u.deg))
    assert len(geo) == 1
