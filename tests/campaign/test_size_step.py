import re
from pathlib import Path

import pytest

from photpipe.campaign.size_step import run_size_stage
from photpipe.config import ConfigError, load_config

from ._nights import DEMO
from ._step_inputs import FULL_SIZE, make_lightcurve, write_size_config


def test_demo_config_size_section(tmp_path):
    config = load_config(DEMO)
    out = run_size_stage(config, make_lightcurve(), tmp_path)
    assert Path(out["path"]).is_file()
    assert out["albedo"] == 0.04 and out["composition"] == {"H2O": 0.7, "CO2": 0.3}
    assert out["bound_consistent"] is True


def test_upper_limits_are_left_out(tmp_path):
    flags = ["upper_limit"] * 30 + [""] * 50
    out = run_size_stage(load_config(write_size_config(tmp_path, FULL_SIZE)),
                         make_lightcurve(flags=flags), tmp_path / "results")
    assert out["n_points"] == 50


def test_stage_refuses_missing_table_and_columns(tmp_path):
    config = load_config(write_size_config(tmp_path, FULL_SIZE))
    with pytest.raises(ValueError, match="an H needs a lightcurve behind it"):
        run_size_stage(config, None, tmp_path)
    lc = make_lightcurve()
    lc.remove_column("nucleus_mag_err")
    with pytest.raises(ValueError, match=re.escape("lacks column(s) ['nucleus_mag_err']")):
        run_size_stage(config, lc, tmp_path)


def test_two_acceleration_units_refused(tmp_path):
    config = load_config(write_size_config(
        tmp_path, FULL_SIZE + "nongrav_accel_limit_m_s2 = 1e-9\n"))
    with pytest.raises(ConfigError, match="give one acceleration limit"):
        run_size_stage(config, make_lightcurve(), tmp_path)


def test_h_from_one_filter_of_a_two_filter_lightcurve(tmp_path):
    # A quarter of the frames in V, 0.45 mag fainter (invented colour): H must come from the R
    # rows alone, as from the R-only lightcurve, not 0.11 mag fainter from the mixture.
    config = load_config(write_size_config(tmp_path, FULL_SIZE))
    only_r = run_size_stage(config, make_lightcurve(), tmp_path / "r")
    lc = make_lightcurve()
    v = [i % 4 == 0 for i in range(len(lc))]
    lc["filter"] = ["V" if is_v else "R" for is_v in v]
    lc["nucleus_mag"][v] += 0.45 * lc["nucleus_mag"].unit
    out = run_size_stage(config, lc, tmp_path / "rv")
    assert out["n_points"] == 60
    # 60 of the 80 R rows: the two H differ by noise, sd ≈ sqrt(80/60 - 1) = 0.58 σ_H
    assert abs(out["H_mag"] - only_r["H_mag"]) < 2 * only_r["H_err_mag"] < 0.05
    assert any("H from the R rows only (60 of 80)" in n for n in out["assumptions"])
    config_v = load_config(write_size_config(tmp_path, FULL_SIZE + 'band = "B"\n'))
    with pytest.raises(ValueError, match=r"filters \(R, V\) hold none in band 'B'"):
        run_size_stage(config_v, lc, tmp_path / "b")


def test_a_radius_limit_from_one_filter_says_which_filter(tmp_path):
    # Too few R detections for a radius: the upper limit is formed from the R rows only, and
    # says so as the radius would (the V rows, 0.45 mag fainter, stay out of it).
    config = load_config(write_size_config(tmp_path, FULL_SIZE))
    lc = make_lightcurve()
    v = [i % 4 == 0 for i in range(len(lc))]
    lc["filter"] = ["V" if is_v else "R" for is_v in v]
    lc["nucleus_mag"][v] += 0.45 * lc["nucleus_mag"].unit
    lc["flags"] = ["" if i < 8 and not v[i] else "upper_limit" for i in range(len(lc))]
    out = run_size_stage(config, lc, tmp_path / "limit")
    assert out["radius_km"] is None and out["radius_upper_limit_km"] > 0
    assert any("H from the R rows only (60 of 80)" in n for n in out["assumptions"])
