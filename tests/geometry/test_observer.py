"""Observing sites: checked coordinates, FITS header keywords, geocentric site vectors."""

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import EarthLocation
from astropy.io import fits
from astropy.time import Time

from photpipe.geometry import location_from_header, observer_states, site_location
from photpipe.geometry._constants import AU_KM


@pytest.mark.parametrize(("args", "text"), [
    pytest.param((10, 95, 0), "site 'x': latitude must be within -90 and 90 deg, got 95.0 deg",
                 id="latitude"),
    pytest.param((400, 10, 0), "site 'x': longitude must be within -180 and 360 deg, got 400.0",
                 id="longitude"),
    pytest.param((10, 10, 12000), "site 'x': height must be within -500 and 9000 m, got 12000.0",
                 id="height"),
    pytest.param((10, float("nan"), 0), "site 'x': latitude must be within", id="nan"),
])
def test_impossible_sites_are_named(args, text):
    lon, lat, h = args
    with pytest.raises(ValueError, match=text):
        site_location(lon * u.deg, lat * u.deg, h * u.m, name="x")


def test_site_location_is_geodetic_wgs84():
    # WGS84 geodetic -> geocentric (astropy EarthLocation.from_geodetic, ellipsoid WGS84)
    loc = site_location(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m)
    ref = EarthLocation.from_geodetic(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m,
                                      ellipsoid="WGS84")
    np.testing.assert_allclose(loc.to_value(u.m).tolist(), ref.to_value(u.m).tolist(), atol=1e-6)


@pytest.mark.parametrize(("cards", "lon", "lat"), [
    pytest.param({"SITELONG": "-111:25:12", "SITELAT": "34:10:12", "SITEELEV": 1710},
                 -111.42, 34.17, id="sexagesimal"),
    pytest.param({"LONG-OBS": -111.42, "LAT-OBS": 34.17, "ALT-OBS": 1710.0}, -111.42, 34.17,
                 id="decimal"),
    pytest.param({"OBSGEO-L": 248.58, "OBSGEO-B": -34.17, "OBSGEO-H": 10.0}, -111.42, -34.17,
                 id="wcs-paper-vii"),
])
def test_site_from_header(cards, lon, lat):
    header = fits.Header()
    for key, value in cards.items():
        header[key] = value
    loc = location_from_header(header)
    assert loc.lon.wrap_at(180 * u.deg).to_value(u.deg) == pytest.approx(lon, abs=1e-9)
    assert loc.lat.to_value(u.deg) == pytest.approx(lat, abs=1e-9)


def test_header_without_site_and_with_bad_site():
    assert location_from_header(fits.Header()) is None
    with pytest.raises(ValueError, match="sci_0007: cannot read the site from SITELONG"):
        location_from_header({"SITELONG": "west", "SITELAT": "34"}, source="sci_0007")
    with pytest.raises(ValueError, match="site 'sci_0007': latitude must be within"):
        location_from_header({"SITELONG": 10.0, "SITELAT": 134.0}, source="sci_0007")


def test_site_offset_has_the_earth_radius_and_turns_daily():
    # the geocentric site vector has length ~ the geocentric radius (6372 km at 34 deg, WGS84)
    # and speed omega * R cos(lat), omega = 7.292115e-5 rad/s (IERS Conventions 2010)
    loc = site_location(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m)
    t = Time("2026-12-01T00:00", scale="tdb") + np.linspace(0, 1, 5) * u.day
    op, ov, _, _ = observer_states(t.jd1, t.jd2, location=loc)
    ep, ev, _, _ = observer_states(t.jd1, t.jd2)
    r_km = np.linalg.norm(op - ep, axis=0) * AU_KM
    np.testing.assert_allclose(r_km, np.linalg.norm(loc.to_value(u.km).tolist()), rtol=1e-6)
    speed = np.linalg.norm(ov - ev, axis=0) * AU_KM / 86400
    rxy = np.hypot(*loc.to_value(u.km).tolist()[:2])
    np.testing.assert_allclose(speed, 7.292115e-5 * rxy, rtol=1e-4)
