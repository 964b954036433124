"""An observer's own ephemeris table, interpolated to frame times, gives the orbit's columns."""

import numpy as np
import pytest
from astropy import units as u
from astropy.table import Table
from astropy.time import Time

from photpipe._warnings import PoorResultWarning
from photpipe.geometry import (
    Orbit,
    geometry_from_ephemeris_table,
    observing_geometry,
    site_location,
)

TP = Time("2026-11-20T09:30:00", scale="tdb")
START = Time("2026-12-01T00:00", scale="utc")
MAS = 1e-3 / 3600


@pytest.fixture(scope="module")
def comet():
    return Orbit(1.31 * u.au, 2.85, 137.6 * u.deg, 57.4 * u.deg, 2.6 * u.deg, TP)


@pytest.fixture(scope="module")
def site():
    return site_location(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m)


def _hourly_table(comet, location, hours=72):
    geo = observing_geometry(comet, START + np.arange(hours + 1) * u.hour, location=location)
    return Table(geo["time", "ra", "dec", "r_h", "delta", "phase"])


@pytest.mark.parametrize("where", [pytest.param(None, id="geocentre"),
                                   pytest.param("site", id="topocentric")])
def test_interpolated_table_reproduces_the_orbit(comet, site, where):
    # truth: the orbit's own geometry at the frame times (an outside table would be made the
    # same way, from an orbit); an hourly table must reproduce it far below 0.01 arcsec
    location = site if where == "site" else None
    table = _hourly_table(comet, location)
    rng = np.random.default_rng(11)
    frames = START + np.sort(rng.uniform(0, 3, 40)) * u.day
    got = geometry_from_ephemeris_table(table, frames, location=location)
    want = observing_geometry(comet, frames, location=location)
    assert got.colnames == want.colnames
    tol = {"ra": MAS, "dec": MAS, "delta": 5e-9, "r_h": 5e-9, "phase": 1e-6, "elong": 1e-6,
           "pa_sun": 1e-5, "pa_neg_velocity": 1e-5, "true_anomaly": 1e-5, "ra_rate": 1e-4,
           "dec_rate": 1e-4, "r_h_dot": 1e-5, "delta_dot": 1e-5, "light_time": 1e-3}
    for name, atol in tol.items():
        np.testing.assert_allclose(got[name].value, want[name].to_value(got[name].unit),
                                   rtol=0, atol=atol, err_msg=name)
    assert got.meta["source"] == "ephemeris table"
    assert np.all(got["flags"] == "")


def test_csv_style_table_without_units_and_ra_across_zero(comet):
    # plain columns (deg, AU assumed) and ISO strings; RA wrapping through 0 h is unwrapped
    table = _hourly_table(comet, None, hours=6)
    shift = 360.0 - float(np.mean(np.asarray(table["ra"])[3:5]))    # makes RA pass 0 deg
    plain = Table({"time": [t.isot for t in table["time"]],
                   "ra": (np.asarray(table["ra"]) + shift) % 360.0,
                   "dec": np.asarray(table["dec"]), "r_h": np.asarray(table["r_h"]),
                   "delta": np.asarray(table["delta"]), "phase": np.asarray(table["phase"])})
    assert np.any(np.abs(np.diff(plain["ra"])) > 300)
    frames = START + [0.5, 2.25, 5.75] * u.hour
    # the shifted RA no longer fits the table's r_h and phase, which the check reports
    with pytest.warns(PoorResultWarning, match="another observer or target"):
        got = geometry_from_ephemeris_table(plain, frames, caution_elongation=0 * u.deg)
    want = (observing_geometry(comet, frames)["ra"].to_value(u.deg) + shift) % 360.0
    diff = (got["ra"].to_value(u.deg) - want + 180) % 360 - 180
    assert np.all(np.abs(diff) < 1e-6)


def test_inconsistent_table_is_flagged(comet):
    table = _hourly_table(comet, None, hours=6)
    table["r_h"] = np.asarray(table["r_h"]) + 0.01       # a different r_h from its positions
    with pytest.warns(PoorResultWarning, match="was it computed for another observer"):
        got = geometry_from_ephemeris_table(table, START + [1, 2] * u.hour)
    assert list(got["flags"]) == ["table_mismatch", "table_mismatch"]


@pytest.mark.parametrize(("change", "text"), [
    pytest.param("drop_phase", "missing column(s) phase", id="missing-column"),
    pytest.param("nan", "column 'dec' has a missing or non-finite value in row 3",
                 id="nan-value"),
    pytest.param("unsorted", "times must increase strictly; row 2 does not", id="unsorted"),
    pytest.param("bad_unit", "column 'delta' has unit s, which is not a AU", id="bad-unit"),
    pytest.param("one_row", "needs at least 2 rows to interpolate, has 1", id="one-row"),
])
def test_bad_tables_are_named(comet, change, text):
    table = _hourly_table(comet, None, hours=6)
    if change == "drop_phase":
        table.remove_column("phase")
    elif change == "nan":
        dec = np.asarray(table["dec"]).copy()
        dec[2] = np.nan
        table["dec"] = dec * u.deg
    elif change == "unsorted":
        table = table[[1, 0, 2, 3, 4, 5, 6]]
    elif change == "bad_unit":
        table["delta"] = np.asarray(table["delta"]) * u.s
    elif change == "one_row":
        table = table[:1]
    with pytest.raises(ValueError, match=text.replace("(", r"\(").replace(")", r"\)")):
        geometry_from_ephemeris_table(table, START + [1] * u.hour, source="my.ecsv")


def test_frame_outside_the_table_is_refused(comet):
    table = _hourly_table(comet, None, hours=6)
    with pytest.raises(ValueError, match="my.ecsv: frame time 2026-12-01T07:00:00.000 UTC is "
                                         "outside the table's span"):
        geometry_from_ephemeris_table(table, START + [1, 7] * u.hour, source="my.ecsv")
