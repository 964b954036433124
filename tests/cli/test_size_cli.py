import argparse
import json

import numpy as np
import pytest
from astropy import units as u
from campaign._step_inputs import (
    FULL_SIZE,
    H_TRUE,
    PERIOD_H,
    make_lightcurve,
    write_size_config,
)

from photpipe.cli import size as size_cli
from photpipe.size import diameter_from_H


def run_cli(argv):
    parser = argparse.ArgumentParser()
    size_cli.add_arguments(parser)
    return size_cli.execute(parser.parse_args(argv))


def test_writes_size_json_and_prints_summary(tmp_path, capsys):
    cfg = write_size_config(tmp_path, FULL_SIZE)
    make_lightcurve().write(tmp_path / "results" / "lightcurve.ecsv")
    assert run_cli([str(cfg)]) == 0
    out = capsys.readouterr().out
    assert "the sizes rest on the assumed albedo and density" in out and "Assumptions:" in out
    data = json.loads((tmp_path / "results" / "size.json").read_text())
    for key in ["H_mag", "H_err_mag", "band", "albedo", "radius_km", "radius_lo_km",
                "radius_hi_km", "mass_kg_lo", "mass_kg_hi", "mass_bound_kg", "radius_bound_km",
                "active_fraction"]:  # DEVELOPERS.md size.json contract
        assert key in data
    # no rotation result: the mean flux, its error covering the unknown rotation
    assert data["band"] == "R" and data["H_method"] == "rotation-unknown"
    # truth: H = 14.0 minus the flux-mean offset of a 0.3 mag double-peaked lightcurve
    # (0.005 mag, see tests/size/test_magnitude.py); the radius follows Pravec & Harris 2007
    assert data["H_mag"] == pytest.approx(H_TRUE - 0.005, abs=0.02)
    assert data["radius_at_albedo_km"] == pytest.approx(
        0.5 * diameter_from_H(data["H_mag"], 0.04, band="R").to_value(u.km), rel=1e-12)
    assert data["mass_bound_kg"] == pytest.approx(3.2846e13, rel=1e-4)  # issue 7 example


def test_rotation_period_switches_to_harmonic_mean(tmp_path):
    cfg = write_size_config(tmp_path, FULL_SIZE)
    make_lightcurve().write(tmp_path / "results" / "lightcurve.ecsv")
    (tmp_path / "results" / "rotation.json").write_text(json.dumps(
        {"period_h": PERIOD_H, "amplitude_mag": 0.30}))
    assert run_cli([str(cfg)]) == 0
    data = json.loads((tmp_path / "results" / "size.json").read_text())
    assert data["H_method"] == "harmonic"
    assert data["H_mag"] == pytest.approx(H_TRUE - 0.005, abs=3 * data["H_err_mag"] + 0.002)
    assert any("amplitude 0.3 mag" in a for a in data["assumptions"])


@pytest.mark.parametrize("line, message", [
    pytest.param("albedo = 0.0", "[size] albedo: must be above 0 and at most 1, got 0.0",
                 id="albedo-zero"),
    pytest.param("albedo = -0.04", "[size] albedo: must be above 0 and at most 1",
                 id="albedo-negative"),
    pytest.param("albedo = 1.5", "[size] albedo: must be above 0 and at most 1",
                 id="albedo-above-one"),
    pytest.param("density_range_g_cm3 = [0.0, 1.0]",
                 "[size] density_range_g_cm3: every value must be positive", id="density-zero"),
    pytest.param("density_range_g_cm3 = [1.0, 0.3]", "low <= high", id="density-reversed"),
    pytest.param("mass_loss_kg_s = 150.0\noutflow_speed_m_s = 440.0\n"
                 "nongrav_accel_limit_m_day2 = 0.0", "[size] nongrav_accel_limit_m_day2: "
                 "must be positive", id="accel-zero"),
    pytest.param("mass_loss_kg_s = 150.0\noutflow_speed_m_s = 440.0\n"
                 "nongrav_accel_limit_m_day2 = -15.0", "[size] nongrav_accel_limit_m_day2: "
                 "must be positive", id="accel-negative"),
    pytest.param("albedo = \"dark\"", "[size] albedo: must be a number", id="albedo-text"),
])
def test_bad_config_values(tmp_path, capsys, line, message):
    cfg = write_size_config(tmp_path, line)
    make_lightcurve().write(tmp_path / "results" / "lightcurve.ecsv")
    assert run_cli([str(cfg)]) == 2  # a configuration problem, as for every command
    assert message in capsys.readouterr().err


def test_no_lightcurve_behind_h(tmp_path, capsys):
    cfg = write_size_config(tmp_path, FULL_SIZE)
    assert run_cli([str(cfg)]) == 4  # no data yet, as for every command
    assert "an H needs a lightcurve behind it" in capsys.readouterr().err
    assert not (tmp_path / "results" / "size.json").exists()


def test_lightcurve_without_usable_rows(tmp_path, capsys):
    cfg = write_size_config(tmp_path, FULL_SIZE)
    lc = make_lightcurve(n=5)
    lc["nucleus_mag"] = np.full(5, np.nan) * u.mag
    path = tmp_path / "elsewhere.ecsv"
    lc.write(path)
    assert run_cli([str(cfg), "--lightcurve", str(path)]) == 1
    err = capsys.readouterr().err
    assert "no usable nucleus magnitudes (5 row(s)" in err and "elsewhere.ecsv" in err


def test_broken_lightcurve_file(tmp_path, capsys):
    cfg = write_size_config(tmp_path, FULL_SIZE)
    path = tmp_path / "results" / "lightcurve.ecsv"
    path.write_text("# %ECSV 1.0\n# ---\nnot a table\x00")
    assert run_cli([str(cfg)]) == 1
    assert "cannot read the lightcurve" in capsys.readouterr().err
