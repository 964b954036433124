import numpy as np
import pytest
from astropy import units as u

from photpipe.geometry import propagate_two_body
from photpipe.geometry._constants import GM_SUN_AU3_D2
from photpipe.orbit._bodies import body_states
from photpipe.orbit.propagate import ForceModel, integrate

JD0 = 2461041.5   # 2026-01-01 TDB


class _StillSun:
    """A Sun fixed at the origin: the integrator then solves the plain two-body problem."""

    names = ("sun",)
    gm = np.array([GM_SUN_AU3_D2])

    def positions(self, jd):
        return np.zeros((1, 3))

    def sun_velocity(self, jd):
        return np.zeros(3)


def test_mars_from_its_de421_state_follows_de421_for_a_year():
    # A massless body started on the Mars-system barycentre of DE421 (Folkner, Williams & Boggs
    # 2009) and pulled by the Sun, the other planets, the Moon and Pluto with the Sun's 1PN
    # term stays on DE421's Mars to 1e-7 AU (15 km) over 365.25 d; DE421 adds 343 asteroids,
    # which account for the rest. Measured: 9.4e-9 AU.
    p, v = body_states("mars", JD0)
    bodies = ("sun", "mercury", "venus", "earth", "moon", "jupiter", "saturn", "uranus",
              "neptune", "pluto")
    traj = integrate(np.concatenate([p[:, 0], v[:, 0]]), JD0, (JD0, JD0 + 365.25),
                     model=ForceModel(bodies=bodies), partials=False)
    jd = JD0 + np.linspace(0.0, 365.25, 60)
    y, _ = traj.states(jd)
    ref, _ = body_states("mars", jd)
    assert np.max(np.linalg.norm(y[:3] - ref, axis=0)) < 1e-7


@pytest.mark.parametrize("state", [
    pytest.param([1.3, 0.2, -0.1, -0.002, 0.018, 0.004], id="ellipse"),
    pytest.param([1.4, 0.0, 0.3, 0.0, 0.035, 0.012], id="hyperbola"),
])
def test_two_body_integration_matches_the_kepler_solver(state):
    # The project's universal-variable solver (Battin 1999, Sect. 4.5) against the integrator
    # with a fixed Sun, over 200 days either way, at rtol 1e-13: 1e-12 AU (the default 1e-12
    # leaves 2.6e-12 AU).
    state = np.array(state)
    traj = integrate(state, JD0, (JD0 - 200, JD0 + 200),
                     model=ForceModel(bodies=("sun",), relativity=False), partials=False,
                     track=_StillSun(), rtol=1e-13)
    dt = np.linspace(-200.0, 200.0, 41)
    y, _ = traj.states(JD0 + dt)
    r, _ = propagate_two_body(state[:3] * u.au, state[3:] * u.au / u.day, dt * u.day,
                              mu=GM_SUN_AU3_D2 * u.au**3 / u.day**2)
    assert np.max(np.abs(y[:3] - r.to_value(u.au))) < 1e-12


def test_variational_partials_match_finite_differences():
    # The transition matrix against central differences of whole integrations (common practice)
    state = np.array([1.3, 0.2, -0.1, -0.002, 0.018, 0.004])
    model = ForceModel(nongrav=(1, 2))
    a123 = (1e-8, 3e-9, 0.0)
    traj = integrate(state, JD0, (JD0, JD0 + 60), model=model, a123=a123)
    _, phi = traj.states(JD0 + 60)
    for j, h in ((0, 1e-6), (4, 1e-8)):
        up, down = state.copy(), state.copy()
        up[j] += h
        down[j] -= h
        yu, _ = integrate(up, JD0, (JD0, JD0 + 60), model=model, a123=a123,
                          partials=False).states(JD0 + 60)
        yd, _ = integrate(down, JD0, (JD0, JD0 + 60), model=model, a123=a123,
                          partials=False).states(JD0 + 60)
        np.testing.assert_allclose(phi[0, :, j], (yu - yd)[:, 0] / (2 * h), rtol=1e-5,
                                   atol=1e-9)
    h = 1e-9
    yu, _ = integrate(state, JD0, (JD0, JD0 + 60), model=model, a123=(1e-8 + h, 3e-9, 0),
                      partials=False).states(JD0 + 60)
    yd, _ = integrate(state, JD0, (JD0, JD0 + 60), model=model, a123=(1e-8 - h, 3e-9, 0),
                      partials=False).states(JD0 + 60)
    np.testing.assert_allclose(phi[0, :, 6], (yu - yd)[:, 0] / (2 * h), rtol=1e-5)
