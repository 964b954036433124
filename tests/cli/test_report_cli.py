import json

import pytest
from campaign._step_inputs import write_report_campaign

from photpipe.cli import report as cli_report
from photpipe.cli.main import main
from photpipe.config import ConfigError, load_config, read_activity


def test_report_command_writes_page_and_activity(tmp_path, capsys):
    cfg, results, _, _, sim = write_report_campaign(tmp_path)
    (results / "rotation.json").write_text(json.dumps(
        {"period_h": 7.3, "period_err_h": 0.02, "amplitude_mag": 0.3, "method": "fourier"}))
    assert main(["report", str(cfg)]) == 0
    out = capsys.readouterr().out.strip()
    assert out == str(results / "report.html")
    page = (results / "report.html").read_text(encoding="utf-8")
    assert "Sun caution" in page  # synthetic elongations start at 40°, limit 45°
    assert "rotation period" in page and "7.300 ± 0.020 h" in page
    assert page.count("data:image/png;base64,") == 8  # two new: total magnitude, Afρ(ρ)
    assert "http://" not in page and "https://" not in page
    activity = json.loads((results / "activity.json").read_text())
    assert len(activity["outbursts"]) == 1
    assert [b["branch"] for b in activity["trend"]["branches"]] == ["pre", "post"]


def test_report_output_option(tmp_path, capsys):
    cfg, results, *_ = write_report_campaign(tmp_path, elong_limit=10.0)
    target = tmp_path / "elsewhere.html"
    assert main(["report", str(cfg), "--output", str(target)]) == 0
    assert target.is_file()
    assert "Sun caution" not in target.read_text(encoding="utf-8")
    assert (results / "activity.json").is_file()


def test_per_night_tables_are_gathered(tmp_path, capsys):
    cfg, results, meas, nuc, _ = write_report_campaign(tmp_path, write_tables=False)
    half = len(meas) // 2 - (len(meas) // 2) % 3
    for i, part in enumerate((slice(0, half), slice(half, None))):
        night = results / f"night{i}"
        night.mkdir()
        meas[part].write(night / "measurements.ecsv")
    assert main(["report", str(cfg)]) == 0
    page = (results / "report.html").read_text(encoding="utf-8")
    assert f"<dt>measurement rows</dt><dd>{len(meas)}</dd>" in page


def test_no_measurements(tmp_path, capsys):
    cfg, *_ = write_report_campaign(tmp_path, write_tables=False)
    assert main(["report", str(cfg)]) == cli_report.NO_DATA
    assert "no measurements under" in capsys.readouterr().err


@pytest.mark.parametrize(
    ("activity", "match"),
    [
        pytest.param("outburst_sigma = -1\n", "[activity] outburst_sigma: must be positive",
                     id="negative-sigma"),
        pytest.param('fit_method = "magic"\n', "[activity] fit_method: must be one of",
                     id="bad-method"),
        pytest.param("max_false_alarm = 2.0\n",
                     "[activity] max_false_alarm: must be above 0 and at most 1",
                     id="bad-false-alarm"),
        pytest.param('exclude_flags = "edge"\n',
                     "[activity] exclude_flags: must be a list of texts",
                     id="flags-not-list"),
    ],
)
def test_bad_activity_settings(tmp_path, capsys, activity, match):
    cfg, *_ = write_report_campaign(tmp_path, activity=activity)
    assert main(["report", str(cfg)]) == cli_report.CONFIG_PROBLEM
    assert match in capsys.readouterr().err
    with pytest.raises(ConfigError, match=match.replace("[", r"\[").replace("]", r"\]")):
        read_activity(load_config(cfg))
