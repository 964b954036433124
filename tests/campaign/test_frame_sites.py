"""Frames whose header names their site are seen from there; the others from the night's."""

from types import SimpleNamespace

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import EarthLocation
from astropy.time import Time

from photpipe.campaign.night import _night_geometry
from photpipe.config import geometry_at_location, load_config

from ._nights import DEMO


@pytest.mark.slow
def test_each_frame_geometry_from_its_own_site():
    config = load_config(DEMO)
    night_site = EarthLocation.from_geodetic(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m)
    other = EarthLocation.from_geodetic(14.25 * u.deg, -23.61 * u.deg, 540 * u.m)
    t = Time("2026-12-01T04:00:00") + np.arange(3) * 10 * u.min
    infos = [SimpleNamespace(time_mid=t[0], site=None), SimpleNamespace(time_mid=t[1], site=other),
             SimpleNamespace(time_mid=t[2], site=None)]
    rows, problem, _ = _night_geometry(config, night_site, infos)
    assert problem is None
    # the reference: the geometry stage asked directly for each site (topocentric RA/Dec)
    direct_night = geometry_at_location(config, night_site, t[[0, 2]])
    direct_other = geometry_at_location(config, other, t[[1]])
    for row, ref in ((rows[0], direct_night[0]), (rows[2], direct_night[1]),
                     (rows[1], direct_other[0])):
        assert abs(float((row["ra"][0] - ref["ra"]).to_value(u.arcsec))) < 1e-6
        assert abs(float((row["dec"][0] - ref["dec"]).to_value(u.arcsec))) < 1e-6
    # two sites 13 000 km apart see a comet at 0.5 AU shifted by arcseconds (parallax)
    night_at_t1 = geometry_at_location(config, night_site, t[[1]])[0]
    shift = np.hypot(float((rows[1]["ra"][0] - night_at_t1["ra"]).to_value(u.arcsec)),
                     float((rows[1]["dec"][0] - night_at_t1["dec"]).to_value(u.arcsec)))
    assert shift > 1.0
