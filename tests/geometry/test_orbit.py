"""Orbit from elements: validation, the other constructors, a planet against DE421."""

import de421
import numpy as np
import pytest
from astropy import units as u
from astropy.time import Time
from jplephem.ephem import Ephemeris
from scipy.optimize import brentq
from skyfield.api import load
from skyfield.elementslib import OsculatingElements
from skyfield.units import Distance, Velocity

from photpipe.geometry import Orbit
from photpipe.geometry._constants import AU_KM, GM_SUN_AU3_D2

TP = Time("2026-11-20T09:30:00", scale="tdb")
AU3_D2 = u.au**3 / u.day**2


def _orbit(**kw):
    args = {"q": 1.31 * u.au, "e": 2.85, "inclination": 128.4 * u.deg, "node": 47.2 * u.deg,
            "peri": 113.6 * u.deg, "perihelion_time": TP}
    args.update(kw)
    return Orbit(**args)


@pytest.mark.parametrize(("kw", "exc", "text"), [
    pytest.param({"e": -0.2}, ValueError, "'e' (eccentricity) must be finite and >= 0, got -0.2",
                 id="negative-e"),
    pytest.param({"e": float("nan")}, ValueError, "'e' (eccentricity) must be finite",
                 id="nan-e"),
    pytest.param({"q": 0 * u.au}, ValueError, "'q' (perihelion distance) must be > 0, got 0.0 AU",
                 id="zero-q"),
    pytest.param({"q": -1 * u.au}, ValueError, "'q' (perihelion distance) must be > 0",
                 id="negative-q"),
    pytest.param({"q": 1.31}, TypeError, "'q' must be an astropy Quantity", id="q-no-unit"),
    pytest.param({"q": 1.31 * u.s}, ValueError, "'q' must have units convertible to AU",
                 id="q-wrong-unit"),
    pytest.param({"inclination": 190 * u.deg}, ValueError,
                 "'inclination' must be within 0-180 deg, got 190.0 deg", id="inclination"),
    pytest.param({"perihelion_time": "2026-11-20"}, TypeError,
                 "'perihelion_time' must be an astropy Time", id="time-string"),
    pytest.param({"e": "two"}, TypeError, "'e' (eccentricity) must be a number", id="e-text"),
])
def test_bad_elements_name_the_field(kw, exc, text):
    with pytest.raises(exc, match=text.replace("(", r"\(").replace(")", r"\)")):
        _orbit(**kw)


def test_angles_are_normalised_and_kept_in_tdb():
    orb = _orbit(node=-10 * u.deg, peri=370 * u.deg,
                 perihelion_time=Time("2026-11-20T09:28:50.816", scale="utc"))
    assert orb.node.to_value(u.deg) == pytest.approx(350.0)
    assert orb.peri.to_value(u.deg) == pytest.approx(10.0)
    assert orb.perihelion_time.scale == "tdb"
    assert orb.a.to_value(u.au) == pytest.approx(1.31 / (1 - 2.85))
    assert np.isinf(orb.period)


def test_perihelion_state_matches_skyfield_conversion():
    # skyfield.keplerlib.ele_to_vec (Rhodes, skyfield 1.x) converts elements to a state
    from skyfield.keplerlib import ele_to_vec

    orb = _orbit()
    mu = orb.mu.to_value(AU3_D2)
    pos, vel = ele_to_vec(1.31 * (1 + 2.85), 2.85, np.deg2rad(128.4), np.deg2rad(47.2),
                          np.deg2rad(113.6), 0.0, mu)
    r, v = orb.state(TP)
    np.testing.assert_allclose(r.to_value(u.au)[:, 0], pos, rtol=0, atol=1e-15)
    np.testing.assert_allclose(v.to_value(u.au / u.day)[:, 0], vel, rtol=0, atol=1e-17)


def test_mean_anomaly_form_matches_keplers_equation():
    # a, e, M at an epoch -> position from E with M = E - e sin E (Kepler's equation), solved
    # here independently with Brent's method; perifocal coordinates a(cos E - e), b sin E
    # (Curtis 2014, Eqs. 3.8, 3.10) rotated by the same angles.
    a, e, m_deg = 2.7, 0.35, 71.0
    epoch = Time("2026-06-01T00:00:00", scale="tdb")
    orb = Orbit.from_mean_anomaly(a * u.au, e, 10.5 * u.deg, 80.3 * u.deg, 73.1 * u.deg,
                                  m_deg * u.deg, epoch)
    ea = brentq(lambda x: x - e * np.sin(x) - np.deg2rad(m_deg), 0, 2 * np.pi, xtol=1e-15)
    xp, yp = a * (np.cos(ea) - e), a * np.sqrt(1 - e * e) * np.sin(ea)
    r, _ = orb.state(epoch)
    r = r.to_value(u.au)[:, 0]
    p_hat, q_hat = orb._p_hat, orb._q_hat
    np.testing.assert_allclose(r, xp * p_hat + yp * q_hat, atol=1e-13)
    assert orb.q.to_value(u.au) == pytest.approx(a * (1 - e), rel=1e-15)


@pytest.mark.parametrize(("kw", "text"), [
    pytest.param({"e": 1.2}, "'e' must satisfy 0 <= e < 1 when the orbit is given by a and M",
                 id="hyperbolic-e"),
    pytest.param({"a": -2 * u.au}, "'a' (semi-major axis) must be > 0", id="negative-a"),
])
def test_mean_anomaly_form_refuses_non_ellipses(kw, text):
    args = {"a": 2 * u.au, "e": 0.3, "inclination": 1 * u.deg, "node": 0 * u.deg,
            "peri": 0 * u.deg, "mean_anomaly": 10 * u.deg, "epoch": TP}
    args.update(kw)
    with pytest.raises(ValueError, match=text.replace("(", r"\(").replace(")", r"\)")):
        Orbit.from_mean_anomaly(**args)


@pytest.mark.parametrize("e", [
    pytest.param(0.3, id="ellipse"),
    pytest.param(0.999, id="near-parabolic-bound"),
    pytest.param(1.0, id="parabola"),
    pytest.param(1.002, id="near-parabolic-unbound"),
    pytest.param(2.85, id="hyperbola"),
])
def test_from_state_recovers_elements_like_skyfield(e):
    orb = _orbit(e=e)
    t = TP + 37.25 * u.day
    r, v = orb.state(t)
    back = Orbit.from_state(r[:, 0], v[:, 0], t, mu=orb.mu)
    assert back.q.to_value(u.au) == pytest.approx(1.31, rel=1e-12)
    assert back.e == pytest.approx(e, abs=1e-12)
    for name in ("inclination", "node", "peri"):
        assert getattr(back, name).to_value(u.deg) == pytest.approx(
            getattr(orb, name).to_value(u.deg), abs=1e-9), name
    assert abs((back.perihelion_time - TP).to_value(u.s)) < 1e-3
    # skyfield.elementslib.OsculatingElements as the outside reference for the conversion
    ts = load.timescale(builtin=True)
    sf = OsculatingElements(Distance(au=r[:, 0].to_value(u.au)),
                            Velocity(au_per_d=v[:, 0].to_value(u.au / u.day)),
                            ts.tdb_jd(t.tdb.jd), orb.mu.to_value(AU3_D2) * AU_KM**3 / 86400**2)
    assert sf.periapsis_distance.au == pytest.approx(back.q.to_value(u.au), rel=1e-10)
    assert sf.eccentricity == pytest.approx(back.e, abs=1e-10)
    assert sf.inclination.degrees == pytest.approx(back.inclination.to_value(u.deg), abs=1e-8)
    assert sf.longitude_of_ascending_node.degrees % 360 == pytest.approx(
        back.node.to_value(u.deg), abs=1e-8)
    assert sf.argument_of_periapsis.degrees % 360 == pytest.approx(
        back.peri.to_value(u.deg), abs=1e-8)


def test_true_anomaly_stays_inside_the_asymptotes():
    # a hyperbola's true anomaly is bounded by acos(-1/e) (Curtis 2014, Eq. 2.97)
    orb = _orbit()
    times = TP + np.array([-3650.0, -10.0, 0.0, 10.0, 3650.0]) * u.day
    nu = orb.true_anomaly(times).to_value(u.deg)
    limit = np.rad2deg(np.arccos(-1 / 2.85))
    assert nu[2] == pytest.approx(0.0, abs=1e-12)
    assert np.all(np.abs(nu) < limit)
    assert nu[0] < 0 < nu[4]
    assert limit - abs(nu[4]) < 2.0  # ten years on it is close to the asymptote


def test_to_dict_and_table():
    orb = _orbit(name="Vesperine")
    d = orb.to_dict()
    assert d["q_au"] == 1.31 and d["e"] == 2.85 and d["name"] == "Vesperine"
    assert d["perihelion_time_tdb"] == "2026-11-20T09:30:00.000"
    tab = orb.to_table()
    assert tab["q"].unit == u.au and len(tab) == 1


@pytest.fixture(scope="module")
def de421_kernel():
    return Ephemeris(de421)


def _heliocentric(kernel, name, jd):
    p, v = kernel.position_and_velocity(name, np.atleast_1d(jd))
    sp, sv = kernel.position_and_velocity("sun", np.atleast_1d(jd))
    return (p - sp) / AU_KM, (v - sv) / AU_KM


def test_mars_osculating_orbit_follows_de421_for_days(de421_kernel):
    # DE421 (Folkner et al. 2009) Mars barycentre. Two-body motion leaves out the planets'
    # pull; Jupiter's differential acceleration at Mars is at most ~3e-8 AU/day^2
    # (GM_J = GM_sun/1047.35 over (3.7 AU)^2 direct plus the indirect term), so the departure
    # after t days is below 3e-8 t^2 / 2 AU: 1.5e-8 AU at 1 day, 3.8e-7 AU at 5 days.
    jd0 = Time("2026-03-01T00:00:00", scale="tdb").jd
    r0, v0 = _heliocentric(de421_kernel, "mars", jd0)
    orb = Orbit.from_state(r0[:, 0] * u.au, v0[:, 0] * u.au / u.day,
                           Time(jd0, format="jd", scale="tdb"), frame="icrs")
    offsets = np.array([-5.0, -1.0, 1.0, 5.0])
    pred, _ = orb.state(Time(jd0 + offsets, format="jd", scale="tdb"), frame="icrs")
    truth, _ = _heliocentric(de421_kernel, "mars", jd0 + offsets)
    err = np.linalg.norm(pred.to_value(u.au) - truth, axis=0)
    bound = 3e-8 * offsets**2 / 2 + 1e-10
    assert np.all(err < bound), err
    # ... and it is a real two-body departure, not noise: it grows with time
    assert err[3] > 5 * err[2]


def test_earth_moon_barycentre_elements(de421_kernel):
    # J2000 mean elements of the Earth-Moon barycentre: a = 1.00000261 AU, e = 0.01671123
    # (Standish 1992, Explanatory Supplement Table 5.8.1, from memory). Osculating values
    # differ from the mean ones by planetary perturbations of order 1e-4.
    jd0 = 2451545.0
    r0, v0 = _heliocentric(de421_kernel, "earthmoon", jd0)
    mu = GM_SUN_AU3_D2 * (1 + 1 / 328900.56)  # Sun + Earth-Moon (IAU 2009 mass ratio)
    orb = Orbit.from_state(r0[:, 0] * u.au, v0[:, 0] * u.au / u.day,
                           Time(jd0, format="jd", scale="tdb"), frame="icrs",
                           mu=mu * AU3_D2)
    assert orb.a.to_value(u.au) == pytest.approx(1.00000261, abs=2e-4)
    assert orb.e == pytest.approx(0.01671123, abs=5e-4)
    assert orb.inclination.to_value(u.deg) == pytest.approx(0.0, abs=0.01)
    assert orb.period.to_value(u.day) == pytest.approx(365.256, abs=0.1)
