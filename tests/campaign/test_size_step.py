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
