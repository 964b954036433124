"""Sun and Earth states: the two ephemerides, standard distances, the sampling shortcut."""

import re

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import get_body_barycentric_posvel
from astropy.time import Time

from photpipe.geometry import EPHEMERIDES, earth_sun_states, sun_and_earth
from photpipe.geometry._constants import AU_KM, C_AU_PER_DAY, DAY_S
from photpipe.geometry._ephem_builtin import earth_sun_builtin
from photpipe.geometry._ephem_de421 import earth_sun_de421


def _year(n, start="2026-01-01"):
    t = Time(start, scale="tdb") + np.linspace(0.0, 365.25, n) * u.day
    return t.jd1, t.jd2


def test_light_time_per_au():
    # tau_A = au / c = 499.004783836 s (IERS Conventions 2010, Table 1.1; au exact by IAU 2012
    # Resolution B2, c exact in the SI)
    assert DAY_S / C_AU_PER_DAY == pytest.approx(499.004783836, rel=1e-12)
    assert AU_KM == 149597870.700  # IAU 2012 Resolution B2


@pytest.mark.parametrize("ephemeris", sorted(EPHEMERIDES))
def test_earth_sun_distance_over_a_year(ephemeris):
    # Earth's perihelion and aphelion distances, 0.98329 and 1.01671 AU, which vary by up to
    # ~1e-4 AU from year to year with the Moon's phase (Astronomical Almanac, "Earth:
    # perihelion and aphelion"; from memory).
    jd1, jd2 = _year(4000)
    ep, _, sp, _ = earth_sun_states(jd1, jd2, ephemeris=ephemeris)
    d = np.linalg.norm(ep - sp, axis=0)
    assert d.min() == pytest.approx(0.98329, abs=1e-4)
    assert d.max() == pytest.approx(1.01671, abs=1e-4)
    # the minimum falls in early January (common practice)
    t_min = Time(jd1[np.argmin(d)] + jd2[np.argmin(d)], format="jd", scale="tdb")
    assert t_min.datetime.month == 1 and t_min.datetime.day <= 6


def test_builtin_agrees_with_de421():
    # ERFA epv00 is fitted to DE405 with ~4.6 km maximum error in the Earth's position over
    # 1900-2100 (SOFA documentation of iauEpv00); DE421 and DE405 differ far less.
    jd1, jd2 = _year(500)
    a = earth_sun_builtin(jd1, jd2)
    b = earth_sun_de421(jd1, jd2)
    km = np.linalg.norm((a[0] - a[2]) - (b[0] - b[2]), axis=0) * AU_KM
    assert km.max() < 10.0
    # barycentric Earth velocity to ~1 mm/s: 1e-6 of 30 km/s
    np.testing.assert_allclose(a[1], b[1], atol=1e-6 * 0.0172)


def test_builtin_is_what_astropy_uses():
    # astropy.coordinates.get_body_barycentric_posvel(..., ephemeris="builtin")
    t = Time("2026-12-01T06:00", scale="tdb") + np.arange(5) * u.day
    ref_p, ref_v = get_body_barycentric_posvel("earth", t, ephemeris="builtin")
    s = sun_and_earth(t)
    np.testing.assert_allclose(s["earth_position"].to_value(u.au),
                               ref_p.xyz.to_value(u.au), rtol=0, atol=1e-15)
    np.testing.assert_allclose(s["earth_velocity"].to_value(u.au / u.day),
                               ref_v.xyz.to_value(u.au / u.day), rtol=0, atol=1e-17)


@pytest.mark.parametrize("ephemeris", sorted(EPHEMERIDES))
def test_sampled_states_equal_direct_evaluation(ephemeris):
    # many epochs go through the Hermite grid; a handful are evaluated directly
    jd1, jd2 = _year(5000)
    func = EPHEMERIDES[ephemeris][0]
    sampled = earth_sun_states(jd1, jd2, ephemeris=ephemeris)
    direct = func(jd1, jd2)
    for s, d in zip(sampled[0::2], direct[0::2], strict=True):      # positions
        assert np.max(np.linalg.norm(s - d, axis=0)) * AU_KM < 0.01   # 10 m
    for s, d in zip(sampled[1::2], direct[1::2], strict=True):      # velocities
        assert np.max(np.linalg.norm(s - d, axis=0)) * AU_KM / DAY_S < 1e-5   # 1 cm/s


@pytest.mark.parametrize(("ephemeris", "when", "text"), [
    pytest.param("builtin", "2150-01-01", "time 2150-01-01T00:00:00.000 TDB is outside the "
                 "astropy built-in (ERFA epv00) ephemeris range 1900-01-01 to 2100-01-01",
                 id="builtin-after"),
    pytest.param("de421", "2250-05-01", "time 2250-05-01T00:00:00.000 TDB is outside the "
                 "JPL DE421 ephemeris range 1899-12-04 to 2200-02-01", id="de421-after"),
    pytest.param("de421", "1890-01-01", "is outside the JPL DE421 ephemeris range",
                 id="de421-before"),
])
def test_times_outside_the_ephemeris_are_refused(ephemeris, when, text):
    t = Time([when], scale="tdb")
    with pytest.raises(ValueError, match=re.escape(text)):
        earth_sun_states(t.jd1, t.jd2, ephemeris=ephemeris)


def test_unknown_ephemeris_and_wrong_times():
    with pytest.raises(ValueError,
                       match=re.escape("'ephemeris' must be one of ['builtin', 'de421']")):
        earth_sun_states(np.array([2461000.5]), np.array([0.0]), ephemeris="de999")
    with pytest.raises(TypeError, match="'times' must be an astropy Time"):
        sun_and_earth("2026-12-01")
