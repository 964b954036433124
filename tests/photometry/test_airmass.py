"""Airmass: published formulas, refraction, and the frame's airmass from site and time."""

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import AltAz, EarthLocation, SkyCoord
from astropy.time import Time

from photpipe.geometry._offline import offline_earth_orientation
from photpipe.photometry.airmass import (
    frame_airmass,
    geometric_altitude,
    header_airmass,
    refraction,
    relative_airmass,
    standard_pressure,
)

from ._synthetic import measure_recording

#: Kasten & Young (1989, Applied Optics 28, 4735), Table 1, relative optical air mass of the ISO
#: standard atmosphere against apparent elevation (from memory), and the accuracy the paper
#: states for its Eq. 3 against that table (better than 0.5 %, from memory).
_KY89_TABLE = [(0.0, 38.0868), (90.0, 1.0)]
_KY89_ACCURACY = 0.005


@pytest.mark.parametrize(("altitude", "table"), _KY89_TABLE)
def test_kasten_young_formula_against_its_table(altitude, table):
    assert relative_airmass(altitude * u.deg) == pytest.approx(table, rel=_KY89_ACCURACY)


@pytest.mark.parametrize("formula", ["kasten-young", "pickering"])
def test_formulas_tend_to_sec_z_high_in_the_sky(formula):
    # plane-parallel limit, sec z = 1 / sin h (common practice); the curvature term of a
    # spherical atmosphere is below 0.1 % above 50° altitude
    h = np.array([50.0, 60.0, 75.0, 89.0])
    x = relative_airmass(h * u.deg, formula=formula)
    np.testing.assert_allclose(x, 1.0 / np.sin(np.radians(h)), rtol=1e-3)


def test_the_two_published_formulas_agree():
    # Kasten & Young (1989) and Pickering (2002) fit different atmosphere tables; they agree
    # within 0.3 % above 5° and within 2.5 % down to the horizon (where they give 37.9 and 38.7)
    h = np.linspace(0.0, 90.0, 181)
    ky = relative_airmass(h * u.deg, formula="kasten-young")
    pk = relative_airmass(h * u.deg, formula="pickering")
    high = h >= 5.0
    np.testing.assert_allclose(ky[high], pk[high], rtol=3e-3)
    np.testing.assert_allclose(ky, pk, rtol=0.025)
    assert np.all(np.diff(ky) < 0)


def test_below_the_horizon_is_nan_and_unknown_formula_raises():
    assert np.isnan(relative_airmass(-1 * u.deg))
    with pytest.raises(ValueError, match="unknown airmass formula 'secant'"):
        relative_airmass(30 * u.deg, formula="secant")


def test_refraction_at_the_horizon():
    # about 34' at the apparent horizon and 29' for a body whose geometric altitude is 0°
    # (Meeus 1998, Astronomical Algorithms, ch. 16; from memory): apparent 0° is geometric -0.57°
    assert refraction(-0.575 * u.deg).to_value(u.arcmin) == pytest.approx(34.5, abs=0.5)
    assert refraction(0 * u.deg).to_value(u.arcmin) == pytest.approx(29.0, abs=0.5)
    # Sæmundsson (1986) scales with P/T: half the pressure, half the refraction
    half = refraction(10 * u.deg, pressure=505 * u.hPa)
    assert half.to_value(u.arcmin) == pytest.approx(
        0.5 * refraction(10 * u.deg).to_value(u.arcmin), rel=1e-12)


def test_standard_pressure():
    # U.S. Standard Atmosphere 1976: 1013.25 hPa at sea level, 898.76 hPa at 1000 m (its table)
    assert standard_pressure(0 * u.m).to_value(u.hPa) == pytest.approx(1013.25)
    assert standard_pressure(1000 * u.m).to_value(u.hPa) == pytest.approx(898.76, abs=0.05)


#: An invented site and night.
_SITE = EarthLocation.from_geodetic(-17.5 * u.deg, 28.3 * u.deg, 2100 * u.m)
_TIME = Time("2026-11-30T04:00:00", scale="utc")


def _altaz(ra, dec):
    with offline_earth_orientation():
        return SkyCoord(ra, dec).transform_to(AltAz(obstime=_TIME, location=_SITE))


def test_frame_airmass_near_the_meridian_is_sec_z_of_astropy():
    # a target on the local meridian (RA = local sidereal time) 20° from the zenith; astropy's
    # AltAz.secz is the reference for the plane-parallel limit
    with offline_earth_orientation():
        lst = _TIME.sidereal_time("apparent", longitude=_SITE.lon)
    ra, dec = lst.to(u.deg), (28.3 - 20.0) * u.deg
    x, alt = frame_airmass(_TIME, _SITE, ra, dec)
    assert x == pytest.approx(float(_altaz(ra, dec).secz), rel=1e-3)
    # ICRS and the equator of date differ by precession, about 0.15° since J2000
    assert alt.to_value(u.deg) == pytest.approx(70.0, abs=0.2)


def test_geometric_altitude_matches_astropy_altaz():
    # astropy's AltAz frame (full IAU 2006/2000A chain, no refraction) is the reference; the
    # closed formulas (Meeus 1998, Eq. 12.4, 21.2-21.4, 13.6) leave out nutation, aberration and
    # UT1 - UTC (together below 0.01 deg): random sites, times over 2000-2030 and places
    rng = np.random.default_rng(15)
    n = 200
    sites = EarthLocation.from_geodetic(rng.uniform(-180, 180, n) * u.deg,
                                        rng.uniform(-70, 70, n) * u.deg,
                                        rng.uniform(0, 3000, n) * u.m)
    times = Time(rng.uniform(51544.5, 62502.0, n), format="mjd", scale="utc")
    ra = rng.uniform(0, 360, n) * u.deg
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n))) * u.deg
    ours = np.array([geometric_altitude(times[i], sites[i], ra[i], dec[i]).to_value(u.deg)
                     for i in range(n)])
    with offline_earth_orientation():
        ref = SkyCoord(ra, dec).transform_to(AltAz(obstime=times, location=sites)).alt.deg
    assert np.max(np.abs(ours - ref)) < 0.01    # found 27 arcsec at most


def test_frame_airmass_low_and_below_the_horizon():
    with offline_earth_orientation():
        lst = _TIME.sidereal_time("apparent", longitude=_SITE.lon).to_value(u.deg)
    # 80° from the zenith on the meridian toward the south: finite and a little below sec z
    x, alt = frame_airmass(_TIME, _SITE, lst * u.deg, (28.3 - 80.0) * u.deg)
    secz = float(_altaz(lst * u.deg, (28.3 - 80.0) * u.deg).secz)
    assert 5.0 < x < secz
    # the antipode of the zenith is below the horizon
    x, _ = frame_airmass(_TIME, _SITE, (lst + 180.0) % 360.0 * u.deg, -28.3 * u.deg)
    assert np.isnan(x)


def test_header_airmass():
    assert header_airmass({"AIRMASS": 1.25}) == 1.25
    assert header_airmass({"AIRMASS": 0.998}) == 0.998
    assert np.isnan(header_airmass({"AIRMASS": "unknown"}))
    assert np.isnan(header_airmass({"AIRMASS": 0.5}))
    assert np.isnan(header_airmass({}))


def test_measurement_rows_compute_the_airmass_from_the_site(standard_frame):
    s = standard_frame
    assert "AIRMASS" not in s.frame.info.header
    r, _ = measure_recording(s.frame, s.stars, s.geometry, site=_SITE)
    x, _ = frame_airmass(_TIME, _SITE, r.comet["ra_deg"][0], r.comet["dec_deg"][0])
    np.testing.assert_allclose(r.comet["airmass"], x, rtol=1e-9)
    assert all("airmass_computed" in f.split(",") for f in r.comet["flags"])
    assert "airmass_computed" not in r.flags
    plain, _ = measure_recording(s.frame, s.stars, s.geometry)
    assert np.all(np.isnan(plain.comet["airmass"]))
    assert not any("airmass_computed" in f for f in plain.comet["flags"])


def test_header_airmass_wins_over_the_site(standard_frame):
    import dataclasses

    s = standard_frame
    header = s.frame.info.header.copy()
    header["AIRMASS"] = 1.432
    frame = dataclasses.replace(s.frame, info=dataclasses.replace(s.frame.info, header=header))
    r, _ = measure_recording(frame, s.stars, s.geometry, site=_SITE)
    np.testing.assert_array_equal(r.comet["airmass"], 1.432)
    assert not any("airmass_computed" in f for f in r.comet["flags"])
