import argparse
import json
import re
from pathlib import Path

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable

from photpipe.campaign.config import ConfigError, load_config
from photpipe.campaign.size_step import run_size_stage
from photpipe.cli import size as size_cli
from photpipe.size import diameter_from_H

DEMO = Path(__file__).resolve().parents[2] / "configs" / "demo.toml"
H_TRUE, PERIOD_H = 14.0, 5.4  # synthetic nucleus (same form as the demo scenario's)


def make_lightcurve(n=80, seed=3, flags=None):
    rng = np.random.default_rng(seed)
    mjd = 61010.0 + np.sort(rng.uniform(0, 3, n))
    rh = 1.3 + 0.01 * (mjd - 61010)
    de = 0.8 + 0.02 * (mjd - 61010)
    ph = 35 + 0.5 * (mjd - 61010)
    light_time = de * 499.004784  # s per AU (IAU 2012 B2 au / c)
    rot = 2 * np.pi * (mjd - light_time / 86400 - 61010) * 24 / PERIOD_H
    m = H_TRUE + 5 * np.log10(rh * de) + 0.035 * ph + 0.15 * np.cos(2 * rot)
    m = m + rng.normal(0, 0.02, n)
    return QTable({
        "frame": [f"sci_{i:04d}" for i in range(n)], "mjd_utc_mid": mjd,
        "nucleus_mag": m * u.mag, "nucleus_mag_err": np.full(n, 0.02) * u.mag,
        "r_h_au": rh * u.au, "delta_au": de * u.au, "phase_deg": ph * u.deg,
        "light_time_s": light_time * u.s, "site": ["kettle_rock"] * n, "filter": ["R"] * n,
        "source": ["fit"] * n, "flags": flags if flags is not None else [""] * n})


def write_config(tmp_path, size_lines):
    text = f"""
[campaign]
name = "test"
results = "{tmp_path / 'results'}"
[[night]]
path = "nowhere"
[photometry]
band = "R"
[rotation]
phase_coefficient_mag_per_deg = 0.035
[size]
{size_lines}
"""
    path = tmp_path / "c.toml"
    path.write_text(text)
    (tmp_path / "results").mkdir(exist_ok=True)
    return path


FULL_SIZE = """albedo = 0.04
albedo_range = [0.02, 0.06]
density_range_g_cm3 = [0.3, 1.0]
mass_loss_kg_s = 150.0
outflow_speed_m_s = 440.0
nongrav_accel_limit_m_day2 = 15.0
momentum_efficiency = 1.0
composition = {H2O = 0.7, CO2 = 0.3}
n_samples = 20000
"""


def run_cli(argv):
    parser = argparse.ArgumentParser()
    size_cli.add_arguments(parser)
    return size_cli.execute(parser.parse_args(argv))


def test_writes_size_json_and_prints_summary(tmp_path, capsys):
    cfg = write_config(tmp_path, FULL_SIZE)
    make_lightcurve().write(tmp_path / "results" / "lightcurve.ecsv")
    assert run_cli([str(cfg)]) == 0
    out = capsys.readouterr().out
    assert "the sizes rest on the assumed albedo and density" in out and "Assumptions:" in out
    data = json.loads((tmp_path / "results" / "size.json").read_text())
    for key in ["H_mag", "H_err_mag", "band", "albedo", "radius_km", "radius_lo_km",
                "radius_hi_km", "mass_kg_lo", "mass_kg_hi", "mass_bound_kg", "radius_bound_km",
                "active_fraction"]:  # DEVELOPERS.md size.json contract
        assert key in data
    assert data["band"] == "R" and data["H_method"] == "flux-mean"
    # truth: H = 14.0 minus the flux-mean offset of a 0.3 mag double-peaked lightcurve
    # (0.005 mag, see tests/size/test_magnitude.py); the radius follows Pravec & Harris 2007
    assert data["H_mag"] == pytest.approx(H_TRUE - 0.005, abs=0.02)
    assert data["radius_at_albedo_km"] == pytest.approx(
        0.5 * diameter_from_H(data["H_mag"], 0.04, band="R").to_value(u.km), rel=1e-12)
    assert data["mass_bound_kg"] == pytest.approx(3.2846e13, rel=1e-4)  # issue 7 example


def test_rotation_period_switches_to_harmonic_mean(tmp_path):
    cfg = write_config(tmp_path, FULL_SIZE)
    make_lightcurve().write(tmp_path / "results" / "lightcurve.ecsv")
    (tmp_path / "results" / "rotation.json").write_text(json.dumps(
        {"period_h": PERIOD_H, "amplitude_mag": 0.30}))
    assert run_cli([str(cfg)]) == 0
    data = json.loads((tmp_path / "results" / "size.json").read_text())
    assert data["H_method"] == "harmonic"
    assert data["H_mag"] == pytest.approx(H_TRUE - 0.005, abs=3 * data["H_err_mag"] + 0.002)
    assert any("amplitude 0.3 mag" in a for a in data["assumptions"])


def test_demo_config_size_section(tmp_path):
    config = load_config(DEMO)
    out = run_size_stage(config, make_lightcurve(), tmp_path)
    assert Path(out["path"]).is_file()
    assert out["albedo"] == 0.04 and out["composition"] == {"H2O": 0.7, "CO2": 0.3}
    assert out["bound_consistent"] is True


def test_upper_limits_are_left_out(tmp_path):
    flags = ["upper_limit"] * 30 + [""] * 50
    out = run_size_stage(load_config(write_config(tmp_path, FULL_SIZE)),
                                  make_lightcurve(flags=flags), tmp_path / "results")
    assert out["n_points"] == 50


@pytest.mark.parametrize("line, message", [
    pytest.param("albedo = 0.0", "[size] albedo must be positive, got 0.0", id="albedo-zero"),
    pytest.param("albedo = -0.04", "[size] albedo must be positive", id="albedo-negative"),
    pytest.param("density_range_g_cm3 = [0.0, 1.0]", "[size] density_range_g_cm3 must be "
                 "positive", id="density-zero"),
    pytest.param("density_range_g_cm3 = [1.0, 0.3]", "lo <= hi", id="density-reversed"),
    pytest.param("mass_loss_kg_s = 150.0\noutflow_speed_m_s = 440.0\n"
                 "nongrav_accel_limit_m_day2 = 0.0", "[size] nongrav_accel_limit_m_day2 must "
                 "be positive", id="accel-zero"),
    pytest.param("mass_loss_kg_s = 150.0\noutflow_speed_m_s = 440.0\n"
                 "nongrav_accel_limit_m_day2 = -15.0", "[size] nongrav_accel_limit_m_day2 "
                 "must be positive", id="accel-negative"),
    pytest.param("albedo = \"dark\"", "[size] albedo must be a number", id="albedo-text"),
])
def test_bad_config_values(tmp_path, capsys, line, message):
    cfg = write_config(tmp_path, line)
    make_lightcurve().write(tmp_path / "results" / "lightcurve.ecsv")
    assert run_cli([str(cfg)]) == 2  # a configuration problem, as for every command
    assert message in capsys.readouterr().err


def test_no_lightcurve_behind_h(tmp_path, capsys):
    cfg = write_config(tmp_path, FULL_SIZE)
    assert run_cli([str(cfg)]) == 1
    assert "an H needs a lightcurve behind it" in capsys.readouterr().err
    assert not (tmp_path / "results" / "size.json").exists()


def test_lightcurve_without_usable_rows(tmp_path, capsys):
    cfg = write_config(tmp_path, FULL_SIZE)
    lc = make_lightcurve(n=5)
    lc["nucleus_mag"] = np.full(5, np.nan) * u.mag
    path = tmp_path / "elsewhere.ecsv"
    lc.write(path)
    assert run_cli([str(cfg), "--lightcurve", str(path)]) == 1
    err = capsys.readouterr().err
    assert "no usable nucleus magnitudes (5 row(s)" in err and "elsewhere.ecsv" in err


def test_broken_lightcurve_file(tmp_path, capsys):
    cfg = write_config(tmp_path, FULL_SIZE)
    path = tmp_path / "results" / "lightcurve.ecsv"
    path.write_text("# %ECSV 1.0\n# ---\nnot a table\x00")
    assert run_cli([str(cfg)]) == 1
    assert "cannot read the lightcurve" in capsys.readouterr().err


def test_stage_refuses_missing_table_and_columns(tmp_path):
    config = load_config(write_config(tmp_path, FULL_SIZE))
    with pytest.raises(ValueError, match="an H needs a lightcurve behind it"):
        run_size_stage(config, None, tmp_path)
    lc = make_lightcurve()
    lc.remove_column("nucleus_mag_err")
    with pytest.raises(ValueError, match=re.escape("lacks column(s) ['nucleus_mag_err']")):
        run_size_stage(config, lc, tmp_path)


def test_two_acceleration_units_refused(tmp_path):
    config = load_config(write_config(
        tmp_path, FULL_SIZE + "nongrav_accel_limit_m_s2 = 1e-9\n"))
    with pytest.raises(ConfigError, match="give one acceleration limit"):
        run_size_stage(config, make_lightcurve(), tmp_path)
