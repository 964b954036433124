import json

import numpy as np
import pytest
from astropy import units as u

from photpipe.campaign.rotation_step import run_rotation_stage
from photpipe.cli import rotation as cli
from photpipe.rotation import synthetic_lightcurve


def _config(tmp_path, extra=""):
    (tmp_path / "nights").mkdir(exist_ok=True)
    text = f"""
[campaign]
results = "results"
[[night]]
path = "nights"
[rotation]
min_period_h = 3.0
max_period_h = 20.0
n_bootstrap = 10
{extra}
"""
    path = tmp_path / "campaign.toml"
    path.write_text(text)
    return path


def test_command_writes_outputs(tmp_path, capsys):
    table, truth = synthetic_lightcurve(period=6.7 * u.h, rng=np.random.default_rng(4))
    (tmp_path / "results").mkdir()
    table.write(tmp_path / "results" / "lightcurve.ecsv", format="ascii.ecsv")
    args = type("A", (), {"config": str(_config(tmp_path)), "table": None})()
    assert cli.execute(args) == 0
    out = capsys.readouterr().out
    assert "rotation period" in out
    data = json.loads((tmp_path / "results" / "rotation.json").read_text())
    for key in ("period_h", "period_err_h", "amplitude_mag", "amplitude_err_mag",
                "axial_ratio_min", "n_points", "method"):
        assert key in data
    # truth of the synthetic campaign (project generator), within 3 σ
    assert abs(data["period_h"] - 6.7) < 3 * data["period_err_h"]
    for name in ("rotation_candidates.ecsv", "rotation_periodograms.png", "rotation_phased.png",
                 "rotation_residuals.png"):
        assert (tmp_path / "results" / name).stat().st_size > 0
    from astropy.table import QTable

    candidates = QTable.read(tmp_path / "results" / "rotation_candidates.ecsv")
    # one naming rule for every result file: a quantity's name ends in its unit
    assert {"period_h", "frequency_per_day"} <= set(candidates.colnames)
    assert "period" not in candidates.colnames
    assert candidates["period_h"].unit == u.h


def test_unknown_key_is_reported(tmp_path, capsys):
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    path = tmp_path / "lc.ecsv"
    table.write(path, format="ascii.ecsv")
    args = type("A", (), {"config": str(_config(tmp_path, "periodd = 3")), "table": str(path)})()
    assert cli.execute(args) == 2  # a configuration problem, as for every command
    assert "[rotation] periodd: unknown key; did you mean 'min_period_h'?" in \
        capsys.readouterr().err


def test_too_few_points_is_no_period(tmp_path, capsys):
    # too few detections are no error: status "none" with the reason, on screen and in the file
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    path = tmp_path / "lc.ecsv"
    table[:5].write(path, format="ascii.ecsv")
    args = type("A", (), {"config": str(_config(tmp_path)), "table": str(path)})()
    assert cli.execute(args) == 0
    out = capsys.readouterr().out
    assert "no rotation period: only 5 usable points" in out
    data = json.loads((tmp_path / "results" / "rotation.json").read_text())
    assert data["status"] == "none"
    assert data["period_h"] is None
    assert "only 5 usable points" in data["reason"]


def test_only_upper_limits_is_no_period_and_clears_old_figures(tmp_path):
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    table["flags"] = "upper_limit"
    (tmp_path / "rotation_phased.png").write_bytes(b"an earlier search's figure")
    data = run_rotation_stage({"rotation": {}}, table, tmp_path)
    assert data["status"] == "none"
    assert data["n_upper_limits_set_aside"] == len(table)
    assert data["n_points"] == 0
    assert f"({len(table)} upper limits set aside)" in data["reason"]
    assert not (tmp_path / "rotation_phased.png").exists()


def test_no_usable_row_is_no_period(tmp_path):
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    table["nucleus_mag_err"] = np.nan
    data = run_rotation_stage({"rotation": {}}, table, tmp_path)
    assert data["status"] == "none"
    assert f"none of the {len(table)} lightcurve rows can be used" in data["reason"]


def test_missing_column_is_still_an_error(tmp_path):
    from photpipe.rotation import LightcurveError

    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    table.remove_column("phase_deg")
    with pytest.raises(LightcurveError, match="no 'phase_deg' column"):
        run_rotation_stage({"rotation": {}}, table, tmp_path)


def test_missing_table_message(tmp_path, capsys):
    args = type("A", (), {"config": str(_config(tmp_path)), "table": None})()
    assert cli.execute(args) == 4  # no data yet, as for every command
    assert "no lightcurve there" in capsys.readouterr().err


@pytest.mark.parametrize("bad", [pytest.param("nan", id="nan"), pytest.param("neg", id="neg")])
def test_bad_errors_set_aside_by_stage(tmp_path, bad):
    # a row with a bad error is set aside with its reason; the campaign goes on
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    table["nucleus_mag_err"][3] = np.nan if bad == "nan" else -0.02
    data = run_rotation_stage({"rotation": {}}, table, tmp_path)
    assert sum(data["set_aside"].values()) == 1
    assert any("magnitude error" in w for w in data["warnings"])
