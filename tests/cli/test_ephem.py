"""``photpipe ephem`` and the configuration-to-geometry settings."""

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable, Table
from astropy.time import Time

from photpipe.cli.ephem import parse_step, time_grid
from photpipe.cli.main import main
from photpipe.config import (
    ConfigError,
    geometry_for_times,
    load_config,
    location_for_night,
    orbit_from_config,
    read_geometry,
)
from photpipe.geometry import Orbit, observing_geometry

ORBIT = """[target.orbit]
q_au = 1.31
e = 2.85
i_deg = 137.6
node_deg = 57.4
peri_deg = 2.6
perihelion_time = "2026-11-20T09:30:00"
"""


def _config(tmp_path, *, orbit=ORBIT, site="latitude_deg = 34.17", geometry="",
            target='name = "Vesperine"'):
    text = f"""[campaign]
name = "test"
results = "results"

[[night]]
path = "night1"
site = "kettle_rock"

[sites.kettle_rock]
longitude_deg = -111.42
{site}
height_m = 1710.0

[target]
{target}

{orbit}
[geometry]
{geometry}
"""
    path = tmp_path / "campaign.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_ephem_prints_and_writes_ecsv(tmp_path, capsys):
    cfg = _config(tmp_path)
    out = tmp_path / "eph.ecsv"
    code = main(["ephem", str(cfg), "--start", "2026-12-01T00:00", "--stop",
                 "2026-12-01T06:00", "--step", "1h", "--output", str(out)])
    text = capsys.readouterr().out
    assert code == 0
    assert "Vesperine: geometry from orbit, observer kettle_rock, ephemeris builtin; 7 rows" in text
    assert "SUN CAUTION" not in text
    table = QTable.read(out, format="ascii.ecsv")
    assert len(table) == 7 and table["delta_au"].unit == u.au
    # the file holds what observing_geometry gives for the same site and times
    cfg_dict = load_config(cfg)
    ref = observing_geometry(orbit_from_config(cfg_dict), Time(table["time"]),
                             location=location_for_night(cfg_dict, 0))
    np.testing.assert_allclose(table["ra_deg"].to_value(u.deg), ref["ra"].to_value(u.deg),
                               rtol=0, atol=1e-6)  # the file keeps 6 decimals of a degree
    # one printed line per row, RA and Dec sexagesimal
    rows = [line for line in text.splitlines() if line.startswith("2026-12-01 0")]
    assert len(rows) == 7 and rows[0].split()[1] == "00:00"


def test_ephem_shows_the_caution_when_close_to_the_sun(tmp_path, capsys):
    # the limit is configurable; 179 deg makes every row "close" for this check
    cfg = _config(tmp_path, geometry="caution_elongation_deg = 179.0")
    code = main(["ephem", str(cfg), "--start", "2026-12-01T00:00", "--stop",
                 "2026-12-01T02:00", "--step", "1h", "--site", "geocentre",
                 "--output", str(tmp_path / "e.ecsv")])
    text = capsys.readouterr().out
    assert code == 0
    assert text.count("SUN CAUTION: the target comes within") == 2   # above and below
    assert "experienced observers" in text
    assert all(line.endswith("SUN") for line in text.splitlines() if line.startswith("2026"))
    table = QTable.read(tmp_path / "e.ecsv", format="ascii.ecsv")
    assert "SUN CAUTION" in table.meta["caution"]
    assert set(table["flags"]) == {"near_sun"}
    assert table.meta["observer"] == "geocentre"


@pytest.mark.parametrize(("kw", "argv", "text"), [
    pytest.param({"orbit": ORBIT.replace("e = 2.85", "e = -0.2")}, [],
                 "[target.orbit] e: must be at least 0, got -0.2", id="negative-e"),
    pytest.param({"orbit": ORBIT.replace("q_au = 1.31", "q_au = 0.0")}, [],
                 "[target.orbit] q_au: must be positive, got 0.0 AU", id="zero-q"),
    pytest.param({"orbit": ORBIT.replace("q_au = 1.31\n", "")}, [],
                 "[target.orbit] q_au: missing", id="missing-q"),
    pytest.param({"orbit": ORBIT.replace("i_deg = 137.6", 'i_deg = "steep"')}, [],
                 "[target.orbit] i_deg: must be a number, got 'steep' (a text)", id="text-value"),
    pytest.param({"orbit": ORBIT.replace('"2026-11-20T09:30:00"', '"soon"')}, [],
                 "[target.orbit] perihelion_time: not a readable time", id="bad-time"),
    pytest.param({"orbit": ""}, [], "[target.orbit]: missing: give the elements", id="no-orbit"),
    pytest.param({"site": "latitude_deg = 134.17"}, [],
                 "[sites.kettle_rock] latitude_deg: must be at least -90 and at most 90, "
                 "got 134.17 deg", id="impossible-site"),
    pytest.param({"geometry": 'ephemeris = "de999"'}, [],
                 "[geometry] ephemeris: must be one of 'builtin', 'de421', got 'de999'",
                 id="unknown-ephemeris"),
    pytest.param({}, ["--site", "nowhere"], "[sites.nowhere]: missing", id="unknown-site"),
    pytest.param({}, ["--step", "fortnight"], "--step 'fortnight': give a number", id="step"),
    pytest.param({}, ["--stop", "2026-11-30T00:00"], "is before --start", id="stop-first"),
])
def test_bad_settings_are_reported(tmp_path, capsys, kw, argv, text):
    cfg = _config(tmp_path, **kw)
    opts = {"--start": "2026-12-01T00:00", "--stop": "2026-12-01T02:00",
            "--output": str(tmp_path / "e.ecsv")}
    opts.update(dict(zip(argv[0::2], argv[1::2], strict=True)))
    final = ["ephem", str(cfg)] + [x for kv in opts.items() for x in kv]
    # A bad configuration exits 2, as for every command; a bad time option exits 1.
    assert main(final) == (1 if argv[:1] in (["--step"], ["--stop"]) else 2)
    err = capsys.readouterr().err
    assert err.startswith("photpipe ephem: ")
    assert text in err
    assert not (tmp_path / "e.ecsv").exists()


def test_mean_anomaly_elements_and_night_site(tmp_path):
    orbit = """[target.orbit]
a_au = 3.1
e = 0.62
i_deg = 11.0
node_deg = 200.0
peri_deg = 15.0
mean_anomaly_deg = 350.0
epoch = 2026-12-01T00:00:00
"""  # a TOML date-time literal is accepted as well as a string
    cfg = load_config(_config(tmp_path, orbit=orbit))
    orb = orbit_from_config(cfg)
    assert isinstance(orb, Orbit) and orb.q.to_value(u.au) == pytest.approx(3.1 * 0.38)
    assert orb.name == "Vesperine"
    loc = location_for_night(cfg, cfg["night"][0])
    assert loc.lat.to_value(u.deg) == pytest.approx(34.17)
    assert read_geometry(cfg).caution_elongation == 20 * u.deg
    mixed = load_config(_config(tmp_path, orbit=orbit + "q_au = 1.0\n"))
    with pytest.raises(ConfigError, match="mixes the two ways of giving an orbit"):
        orbit_from_config(mixed)


def test_geometry_from_a_configured_ephemeris_table(tmp_path, capsys):
    # an ephemeris table made from the same orbit stands in for the orbit
    cfg = load_config(_config(tmp_path))
    times = Time("2026-12-01T00:00", scale="utc") + np.arange(13) * u.hour
    geo = geometry_for_times(cfg, 0, times)
    table = Table(geo["time", "ra", "dec", "r_h", "delta", "phase"])
    table.write(tmp_path / "mine.ecsv", format="ascii.ecsv")
    path = _config(tmp_path, target='name = "Vesperine"\nephemeris_table = "mine.ecsv"')
    cfg2 = load_config(path)
    frames = times[2:5] + 20 * u.min
    got = geometry_for_times(cfg2, cfg2["night"][0], frames)
    want = geometry_for_times(cfg, 0, frames)
    np.testing.assert_allclose(got["ra"].to_value(u.deg), want["ra"].to_value(u.deg), atol=1e-8)
    assert got.meta["source"].endswith("mine.ecsv")
    code = main(["ephem", str(path), "--start", "2026-12-01T01:00", "--stop",
                 "2026-12-01T03:00", "--output", str(tmp_path / "e.ecsv")])
    assert code == 0
    assert "mine.ecsv" in capsys.readouterr().out


def test_step_and_grid():
    assert parse_step("90s") == 90 * u.s
    assert parse_step("0.5d") == 0.5 * u.day
    grid = time_grid("2026-12-01T00:00", "2026-12-02T00:00", parse_step("6h"))
    assert len(grid) == 5 and grid[-1].isot == "2026-12-02T00:00:00.000"
    with pytest.raises(ValueError, match="more than 200000; use a longer step"):
        time_grid("2026-01-01", "2027-01-01", parse_step("1min"))
    with pytest.raises(ValueError, match="--step '-1h'"):
        parse_step("-1h")


def test_altitude_airmass_and_dark_hours_at_the_site(tmp_path, capsys):
    from astropy.coordinates import AltAz, SkyCoord, get_sun

    from photpipe.geometry._offline import offline_earth_orientation

    cfg = _config(tmp_path)
    out = tmp_path / "eph.ecsv"
    assert main(["ephem", str(cfg), "--start", "2026-12-01T00:00", "--stop",
                 "2026-12-01T12:00", "--step", "30min", "--min-altitude", "30",
                 "--output", str(out)]) == 0
    text = capsys.readouterr().out
    table = QTable.read(out, format="ascii.ecsv")
    # the geometric altitude from astropy's AltAz (reference library), refraction added by
    # photpipe: the two agree to well under a degree above 10° altitude
    site = location_for_night(load_config(cfg), 0)
    with offline_earth_orientation():
        frame = AltAz(obstime=Time(table["time"]), location=site, pressure=0 * u.hPa)
        alt = SkyCoord(table["ra_deg"], table["dec_deg"]).transform_to(frame).alt
        sun = get_sun(Time(table["time"])).transform_to(frame).alt
    high = alt > 10 * u.deg
    diff = (table["alt_deg"] - alt).to_value(u.deg)[high]
    # refraction lifts, < 6' above 10° (Bennett 1982); photpipe's geometric altitude is within
    # 0.01° of AltAz (closed formulas, tests/photometry/test_airmass.py), more than the lift
    # near the zenith
    assert np.all((diff > -0.01) & (diff < 0.1))
    np.testing.assert_allclose(table["sun_alt_deg"].to_value(u.deg), sun.to_value(u.deg),
                               atol=1e-4)
    # airmass near sec z high in the sky (Kasten & Young 1989 tends to sec z)
    zen = high & (alt > 60 * u.deg)
    np.testing.assert_allclose(table["airmass"][zen], 1 / np.sin(alt[zen]), rtol=3e-3)
    dark = (sun < -18 * u.deg) & (table["alt_deg"] >= 30 * u.deg)
    assert "observable in a dark sky (Sun below -18°, target above 30°)" in text
    assert f"{np.count_nonzero(dark) * 0.5 - 0.5:.1f} h in all" in text  # one span here


def test_predicted_magnitude_from_the_campaign_trend():
    from photpipe.cli._sky import predicted_magnitude

    geo = QTable({"time": Time(["2026-12-01T00:00"]), "r_h": [1.0] * u.au,
                  "delta": [1.0] * u.au, "phase": [0.0] * u.deg})
    activity = {"trend": {"rho_km": 10000.0, "perihelion_time": "2026-11-20T09:30:00.000",
                          "branches": [{"branch": "post", "k": -2.0,
                                        "log10_afrho_1au_cm": 2.0, "r_h_min": 0.9,
                                        "r_h_max": 1.5}]}}
    mag, note = predicted_magnitude(geo, activity=activity, size={"m_sun_mag": -27.15})
    # A'Hearn et al. (1984, AJ 89, 579): Afρ = 4 r_h² Δ² / ρ 10^(0.4 (m_sun - m)), r_h in au,
    # Δ and ρ in cm; Afρ = 100 cm at r_h = Δ = 1 au, ρ = 1e9 cm, m_sun(R) = -27.15 (Willmer
    # 2018): m = -27.15 - 2.5 log10(100 · 1e9 / (4 · 1.495978707e13²)) = 12.7298
    assert abs(mag[0] - 12.7298) < 1e-4
    assert "ρ = 10000 km" in note
    none, why = predicted_magnitude(geo, activity=None, size={"H_mag": 14.0})
    assert none is None and "no fitted A(0)fρ trend" in why


def test_predicted_magnitude_error_band_against_draws():
    # the band's 1σ from first-order propagation agrees with the spread of magnitudes drawn
    # from the trend's parameter covariance plus its scatter (a slow, obviously correct oracle)
    from photpipe.cli._sky import predicted_magnitude_band
    from photpipe.photometry.dust_phase import dust_phase

    geo = QTable({"time": Time(["2026-12-01T00:00", "2026-12-09T00:00"]),
                  "r_h": [1.2, 1.6] * u.au, "delta": [0.9, 1.1] * u.au,
                  "phase": [20.0, 30.0] * u.deg})
    branch = {"branch": "post", "k": -2.5, "k_err": 0.3, "log10_afrho_1au_cm": 2.3,
              "log10_afrho_1au_err": 0.05, "cov_lognorm_k": -0.004, "scatter_dex": 0.06,
              "r_h_min_au": 1.1, "r_h_max_au": 1.4}
    activity = {"trend": {"rho_km": 10000.0, "perihelion_time": "2026-11-20T09:30:00.000",
                          "branches": [branch]}}
    mag, err, note = predicted_magnitude_band(geo, activity=activity,
                                              size={"m_sun_mag": -27.15})
    rng = np.random.default_rng(3)
    cov = [[0.05**2, -0.004], [-0.004, 0.3**2]]
    draws = rng.multivariate_normal([2.3, -2.5], cov, size=20000)
    log_a = (draws[:, :1] + draws[:, 1:] * np.log10([1.2, 1.6])
             + rng.normal(0, 0.06, (20000, 1)))
    afrho = 10**log_a * dust_phase([20.0, 30.0] * u.deg)
    # A'Hearn et al. (1984, AJ 89, 579): m = m_sun - 2.5 log10(Afρ ρ / (4 r_h² Δ²))
    m = -27.15 - 2.5 * np.log10(afrho * 1e9 / (4 * np.array([1.2, 1.6]) ** 2
                                               * (np.array([0.9, 1.1]) * 1.495978707e13) ** 2))
    np.testing.assert_allclose(err, m.std(axis=0), rtol=0.03)
    np.testing.assert_allclose(mag, np.median(m, axis=0), atol=0.01)
    assert "extrapolated beyond r_h 1.10-1.40 au" in note
    assert "night-to-night scatter" in note
