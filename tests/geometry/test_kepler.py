"""The universal-variable Kepler solver: textbook examples, a reference library, invariants."""

import numpy as np
import pytest
from astropy import units as u
from hypothesis import example, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq
from skyfield.keplerlib import propagate as skyfield_propagate

from photpipe.geometry import eccentric_anomaly, hyperbolic_anomaly, propagate_two_body
from photpipe.geometry._kepler import stumpff_c2c3, universal_propagate

# Earth's GM as used in the textbook examples: Curtis 2014 uses 398600 km^3/s^2, Vallado 2013
# uses 398600.4418 km^3/s^2 (both from memory).
MU_EARTH_CURTIS = 398600.0 * u.km**3 / u.s**2
MU_EARTH_VALLADO = 398600.4418 * u.km**3 / u.s**2
GM_SUN = 2.9591220828559e-4  # AU^3/day^2, Gaussian k^2 (IAU 1976); any consistent value works


def test_curtis_example_3_5_hyperbolic_flyby():
    # Curtis, Orbital Mechanics for Engineering Students (2014), Example 3.5, from memory:
    # perigee radius 6678 km, perigee speed 15 km/s -> e = 2.7696; starting at true anomaly
    # 100 deg, 3 h later the true anomaly is 107.78 deg and the radius 163,180 km.
    mu = MU_EARTH_CURTIS.to_value(u.km**3 / u.s**2)
    rp, vp = 6678.0, 15.0
    h = rp * vp
    e = h**2 / (mu * rp) - 1.0
    assert e == pytest.approx(2.7696, abs=5e-5)
    nu0 = np.deg2rad(100.0)
    r0 = h**2 / mu / (1 + e * np.cos(nu0))
    pos = [r0 * np.cos(nu0), r0 * np.sin(nu0), 0.0] * u.km
    vel = (mu / h) * np.array([-np.sin(nu0), e + np.cos(nu0), 0.0]) * u.km / u.s
    r, _ = propagate_two_body(pos, vel, 3 * u.h, mu=MU_EARTH_CURTIS)
    r = r.to_value(u.km)[:, 0]
    assert np.linalg.norm(r) == pytest.approx(163180.0, rel=1e-5)  # printed to 5 digits
    assert np.rad2deg(np.arctan2(r[1], r[0])) == pytest.approx(107.78, abs=0.005)


def test_vallado_example_2_4_universal_variables():
    # Vallado, Fundamentals of Astrodynamics and Applications (2013), Example 2-4 (Kepler
    # problem by universal variables), from memory: r0 = (1131.340, -2282.343, 6672.423) km,
    # v0 = (-5.64305, 4.30333, 2.42879) km/s, 40 min later r = (-4219.7527, 4363.0292,
    # -3958.7666) km and v = (3.689866, -1.916735, -6.112511) km/s.
    r, v = propagate_two_body([1131.340, -2282.343, 6672.423] * u.km,
                              [-5.64305, 4.30333, 2.42879] * u.km / u.s, 40 * u.min,
                              mu=MU_EARTH_VALLADO)
    np.testing.assert_allclose(r.to_value(u.km)[:, 0], [-4219.7527, 4363.0292, -3958.7666],
                               atol=1e-3)
    np.testing.assert_allclose(v.to_value(u.km / u.s)[:, 0], [3.689866, -1.916735, -6.112511],
                               atol=2e-6)


def test_vallado_hyperbolic_kepler_equation():
    # Vallado (2013), hyperbolic Kepler equation example, from memory: e = 2.4, M = 235.4 deg
    # -> H = 1.6014 rad.
    h = hyperbolic_anomaly(235.4 * u.deg, 2.4).to_value(u.rad)
    assert h == pytest.approx(1.6014, abs=5e-5)
    # and it satisfies M = e sinh H - H (Vallado 2013, Eq. 2-81) to rounding
    assert 2.4 * np.sinh(h) - h == pytest.approx(np.deg2rad(235.4), rel=1e-14)


@pytest.mark.parametrize("e", [
    pytest.param(0.0, id="circle"),
    pytest.param(0.3, id="ellipse"),
    pytest.param(0.97, id="eccentric"),
    pytest.param(0.999999, id="almost-parabola"),
])
def test_eccentric_anomaly_satisfies_kepler_equation(e):
    # Kepler's equation M = E - e sin E (Kepler 1609; Danby 1988, Eq. 6.2.8)
    m = np.linspace(-20.0, 20.0, 4001)
    ea = eccentric_anomaly(m * u.rad, e).to_value(u.rad)
    np.testing.assert_allclose(ea - e * np.sin(ea), m, atol=5e-15 * 20)


def test_anomaly_solvers_reject_wrong_conics():
    with pytest.raises(ValueError, match="'e' must satisfy 0 <= e < 1"):
        eccentric_anomaly(1 * u.rad, 1.2)
    with pytest.raises(ValueError, match="'e' must be > 1 for a hyperbola"):
        hyperbolic_anomaly(1 * u.rad, 0.5)
    with pytest.raises(TypeError, match="'mean_anomaly' must be an astropy Quantity"):
        eccentric_anomaly(1.0, 0.5)


def test_stumpff_series_join_the_closed_forms():
    # c2(z) = (1 - cos sqrt z)/z, c3(z) = (sqrt z - sin sqrt z)/z^1.5 (Curtis 2014, Eqs.
    # 3.52-3.53), hyperbolic forms for z < 0; the solver switches to series at |z| = 0.5.
    z = np.array([-0.5000001, -0.4999999, 0.4999999, 0.5000001, 1e-12, -1e-12, 0.0])
    c2, c3 = stumpff_c2c3(z)
    with np.errstate(invalid="ignore", divide="ignore"):
        s = np.sqrt(np.abs(z))
        ref2 = np.where(z > 0, (1 - np.cos(s)) / z, (np.cosh(s) - 1) / -z)
        ref3 = np.where(z > 0, (s - np.sin(s)) / s**3, (np.sinh(s) - s) / s**3)
    np.testing.assert_allclose(c2[:4], ref2[:4], rtol=1e-14)
    np.testing.assert_allclose(c3[:4], ref3[:4], rtol=1e-12)
    # limits at z = 0: 1/2! and 1/3! (series definitions)
    np.testing.assert_allclose(c2[4:], 0.5, rtol=1e-12)
    np.testing.assert_allclose(c3[4:], 1.0 / 6.0, rtol=1e-12)


def _classical_position(q, e, dt, mu):
    """Slow, obviously correct oracle: conic position from the classical anomalies.

    Ellipse: M = E - e sin E; hyperbola: M = e sinh H - H; parabola: Barker's equation
    t - T = sqrt(p^3/mu)/2 (D + D^3/3), D = tan(nu/2) (Battin 1999, Sect. 4.2-4.4; Curtis 2014,
    Eqs. 3.8, 3.34, 3.40). Each epoch is solved on its own with Brent's method.
    """
    out = []
    for t in np.atleast_1d(dt):
        if e < 1:
            a = q / (1 - e)
            m = np.sqrt(mu / a**3) * t
            ea = brentq(lambda x, m=m: x - e * np.sin(x) - m, m - 1.5, m + 1.5, xtol=1e-15)
            out.append([a * (np.cos(ea) - e), a * np.sqrt(1 - e * e) * np.sin(ea)])
        elif e > 1:
            a = q / (e - 1)
            m = np.sqrt(mu / a**3) * t
            hb = brentq(lambda x, m=m: e * np.sinh(x) - x - m, -50, 50, xtol=1e-15)
            out.append([a * (e - np.cosh(hb)), a * np.sqrt(e * e - 1) * np.sinh(hb)])
        else:
            p = 2 * q
            w = 3 * np.sqrt(mu / p**3) * t
            # Barker: D^3 + 3D - 2w... solved in closed form (Cardano)
            y = np.cbrt(w + np.sqrt(w * w + 1))
            d = y - 1 / y
            nu = 2 * np.arctan(d)
            r = p / (1 + np.cos(nu))
            out.append([r * np.cos(nu), r * np.sin(nu)])
    return np.array(out).T


@pytest.mark.parametrize("e", [
    pytest.param(0.0, id="circle"),
    pytest.param(0.4, id="ellipse"),
    pytest.param(0.99, id="eccentric"),
    pytest.param(1.0, id="parabola"),
    pytest.param(1.05, id="hyperbola-weak"),
    pytest.param(2.85, id="hyperbola"),
    pytest.param(12.0, id="hyperbola-strong"),
])
def test_vectorised_solver_matches_classical_oracle(e):
    q = 1.31
    dt = np.linspace(-500.0, 500.0, 41)
    r0 = np.array([q, 0.0, 0.0])
    v0 = np.array([0.0, np.sqrt(GM_SUN * (1 + e) / q), 0.0])
    r, _ = universal_propagate(r0, v0, dt, GM_SUN)
    ref = _classical_position(q, e, dt, GM_SUN)
    np.testing.assert_allclose(r[:2], ref, atol=2e-12 * np.max(np.abs(ref)))
    assert np.all(r[2] == 0)


@pytest.mark.parametrize(("e", "label"), [
    pytest.param(0.2056, "Mercury-like", id="elliptic"),
    pytest.param(0.9671, "long-period", id="elliptic-eccentric"),
    pytest.param(0.99999, "near-parabolic bound", id="near-parabolic-bound"),
    pytest.param(1.0, "parabola", id="parabolic"),
    pytest.param(1.00001, "near-parabolic unbound", id="near-parabolic-unbound"),
    pytest.param(2.85, "interstellar", id="hyperbolic"),
    pytest.param(6.0, "very hyperbolic", id="hyperbolic-strong"),
])
def test_agrees_with_skyfield_over_a_year(e, label):
    # Reference: skyfield.keplerlib.propagate (Rhodes, skyfield 1.x), a port of the SPICE
    # toolkit's prop2b. Issue 3 asks for < 1e-8 AU and < 0.1 arcsec over a year.
    q = 0.9 if e < 1 else 1.31
    r0 = np.array([0.3, -0.8, 0.5]) * q / np.linalg.norm([0.3, -0.8, 0.5])
    vdir = np.cross([0.1, 0.2, 0.97], r0)
    vdir /= np.linalg.norm(vdir)
    v0 = vdir * np.sqrt(GM_SUN * (1 + e) / q)
    past, future = np.linspace(-182.6, 0.0, 366), np.linspace(0.0, 182.6, 366)
    dt = np.concatenate([past, future])
    ours, _ = universal_propagate(r0, v0, dt, GM_SUN)
    # past and future in separate calls: skyfield 1.55's propagate mixes up one array holding
    # both signs (seen while writing this test; one-sign arrays match single-epoch calls)
    ref = np.concatenate([skyfield_propagate(r0, v0, 0.0, t, GM_SUN)[0].reshape(3, -1)
                          for t in (past, future)], axis=1)
    dist = np.linalg.norm(ours - ref, axis=0)
    assert np.max(dist) < 1e-8, label
    # angle between the two directions as atan2(|a x b|, a.b), free of arccos round-off
    cross = np.linalg.norm(np.cross(ours.T, ref.T), axis=1)
    angle = np.rad2deg(np.arctan2(cross, np.sum(ours * ref, axis=0))) * 3600
    assert np.max(angle) < 0.1, label


def test_vectorised_equals_one_at_a_time():
    rng = np.random.default_rng(3)
    dt = rng.uniform(-2000, 2000, 25)
    r0 = np.array([1.31, 0.2, -0.1])
    v0 = np.array([0.001, 0.03, 0.004])
    r_all, v_all = universal_propagate(r0, v0, dt, GM_SUN)
    for k, t in enumerate(dt):
        r1, v1 = universal_propagate(r0, v0, np.array([t]), GM_SUN)
        np.testing.assert_allclose(r1[:, 0], r_all[:, k], rtol=1e-13, atol=1e-15)
        np.testing.assert_allclose(v1[:, 0], v_all[:, k], rtol=1e-13, atol=1e-17)


def test_rectilinear_state_is_refused():
    with pytest.raises(ValueError, match="zero angular momentum"):
        universal_propagate(np.array([1.0, 0, 0]), np.array([0.01, 0, 0]), np.array([1.0]),
                            GM_SUN)


def test_units_and_shapes_are_checked():
    with pytest.raises(ValueError, match="must be 3-vectors"):
        propagate_two_body([1, 2] * u.km, [0, 1, 0] * u.km / u.s, 1 * u.s,
                           mu=MU_EARTH_CURTIS)
    with pytest.raises(ValueError, match="'dt' must have units convertible to s"):
        propagate_two_body([7000, 0, 0] * u.km, [0, 8, 0] * u.km / u.s, 1 * u.m,
                           mu=MU_EARTH_CURTIS)
    with pytest.raises(ValueError, match="'mu' must be finite and positive"):
        propagate_two_body([7000, 0, 0] * u.km, [0, 8, 0] * u.km / u.s, 1 * u.s,
                           mu=-1 * u.km**3 / u.s**2)


# Conservation laws of the two-body problem (Battin 1999, Sect. 3.2: energy v^2/2 - mu/r and
# angular momentum r x v are constants of the motion).
_states = st.tuples(
    st.floats(0.2, 40.0),           # r0 (AU)
    st.floats(0.0, 1.0),            # speed as a fraction of ...
    st.floats(0.05, 2.5),           # ... times escape speed
    st.floats(-np.pi, np.pi),       # flight-path angle
    st.floats(-4000.0, 4000.0),     # dt (days)
)


@settings(max_examples=150, deadline=None)
@given(_states)
def test_energy_and_angular_momentum_are_conserved(params):
    r0n, _, vfrac, gamma, dt = params
    vesc = np.sqrt(2 * GM_SUN / r0n)
    speed = vfrac * vesc
    r0 = np.array([r0n, 0.0, 0.0])
    v0 = speed * np.array([np.sin(gamma), np.cos(gamma) * 0.8, np.cos(gamma) * 0.6])
    if abs(np.cos(gamma)) < 1e-3:
        return  # nearly radial: not a conic the orbit model accepts
    r, v = universal_propagate(r0, v0, np.array([dt]), GM_SUN)
    r, v = r[:, 0], v[:, 0]
    energy0 = 0.5 * v0 @ v0 - GM_SUN / r0n
    energy = 0.5 * v @ v - GM_SUN / np.linalg.norm(r)
    assert abs(energy - energy0) <= 1e-10 * GM_SUN / min(r0n, np.linalg.norm(r))
    h0 = np.cross(r0, v0)
    np.testing.assert_allclose(np.cross(r, v), h0, atol=1e-10 * np.linalg.norm(h0))


@settings(max_examples=80, deadline=None)
@given(_states)
# found by hypothesis: the way back ends where F's terms are ~30x F, so the root is only
# resolvable to rounding of the terms (the solver's stopping rule now allows for that)
@example((1.0, 0.0, 1.75, 1.0, 505.0))
def test_forward_then_back_returns_to_start(params):
    r0n, _, vfrac, gamma, dt = params
    if abs(np.cos(gamma)) < 1e-3:
        return
    speed = vfrac * np.sqrt(2 * GM_SUN / r0n)
    r0 = np.array([r0n, 0.0, 0.0])
    v0 = speed * np.array([np.sin(gamma), np.cos(gamma), 0.0])
    r, v = universal_propagate(r0, v0, np.array([dt]), GM_SUN)
    rb, vb = universal_propagate(r[:, 0], v[:, 0], np.array([-dt]), GM_SUN)
    scale = max(r0n, np.linalg.norm(r))
    np.testing.assert_allclose(rb[:, 0], r0, atol=1e-9 * scale)
