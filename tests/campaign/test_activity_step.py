"""The activity step: the Afρ column it follows and the within-night search in activity.json."""

import json

import numpy as np
from astropy import units as u

from photpipe.activity.synthetic import simulate_campaign_tables
from photpipe.campaign.activity_step import run_activity_stage

CONFIG = {"activity": {"perihelion_time": "2027-01-01T00:00:00"}}


def _measurements(with_coma):
    meas, _, _ = simulate_campaign_tables(seed=2, frames_per_night=10, frame_spacing_h=0.25)
    if with_coma:
        # coma alone: 80 % of the total (invented); one row without a nucleus fit
        meas["a0frho_coma_cm"] = 0.8 * meas["a0frho_cm"]
        meas["a0frho_coma_err_cm"] = 0.8 * meas["a0frho_err_cm"]
        meas["a0frho_coma_cm"][0] = np.nan * u.cm
    return meas


def test_coma_only_by_default_with_the_row_without_a_fit_left_out(tmp_path):
    out = run_activity_stage(CONFIG, _measurements(True), tmp_path)
    payload = json.loads((tmp_path / "activity.json").read_text())
    assert payload["afrho_column"] == "a0frho_coma_cm"
    assert payload["rows_total_light"] == 0
    assert payload["rows_no_nucleus_fit"] == 1
    assert any("the total light is not mixed with the coma alone" in n for n in out.notes)
    assert payload["outbursts_within_night"] == []
    assert payload["within_night_search"]["n_nights_searched"] == 19
    assert "inside a night" in out.summary


def test_a_bare_nucleus_gives_no_trend_and_no_outburst(tmp_path):
    # Coma-only values scattered about zero (a bare nucleus): their logarithms would make
    # magnitude-sized "outbursts" out of noise; the step says the coma is not detected instead.
    meas = _measurements(True)
    rng = np.random.default_rng(5)
    meas["a0frho_coma_err_cm"] = np.full(len(meas), 0.1) * u.cm
    meas["a0frho_coma_cm"] = rng.normal(0.0, 0.1, len(meas)) * u.cm
    out = run_activity_stage(CONFIG, meas, tmp_path)
    assert out.analysis is None
    assert "the coma is not detected" in out.notes[-1]
    payload = json.loads((tmp_path / "activity.json").read_text())
    assert payload["status"] == "not_fitted"
    assert payload["reason"].startswith("the coma is not detected")


def test_total_light_when_no_coma_column(tmp_path):
    meas = _measurements(False)
    out = run_activity_stage(CONFIG, meas, tmp_path)
    payload = json.loads((tmp_path / "activity.json").read_text())
    assert payload["rows_total_light"] == len(meas)
    assert out.night_outbursts is not None


def test_two_filters_trend_follows_one_and_colour_is_measured(tmp_path):
    # Every third frame in V: V is 0.45 mag fainter than R and its Afρ 10 % lower (invented
    # colours). The trend must follow R alone (as a campaign in R only would give) and the
    # colour V-R come out of bracketing R frames, 15 min apart.
    meas = _measurements(True)
    only_r = run_activity_stage(CONFIG, meas, tmp_path / "r")
    frame_no = np.array([int(f.split("_f")[1]) for f in meas["frame"]])
    v = frame_no % 3 == 2
    meas["filter"][v] = "V"
    meas["mag"][v] += 0.45 * u.mag
    for name in ("afrho_cm", "a0frho_cm", "a0frho_coma_cm"):
        meas[name][v] *= 0.9
    out = run_activity_stage(CONFIG, meas, tmp_path / "rv")
    payload = json.loads((tmp_path / "rv" / "activity.json").read_text())
    assert out.filter == payload["filter"] == "R"
    assert any("left out of it" in n and "V (" in n for n in out.notes)
    # the R-only trend of the mixed campaign matches the R campaign's within its errors
    a, b = only_r.analysis.trend, out.analysis.trend
    for side in ("pre", "post"):
        fa, fb = a.branch(side), b.branch(side)
        if fa is None or fb is None:
            continue
        assert abs(fa.k - fb.k) < 3 * max(fa.k_err, fb.k_err)
    (colour,) = payload["colours"]
    assert colour["label"] == "R-V" and colour["status"] == "measured"
    assert abs(colour["colour_mag"] + 0.45) < 3 * colour["colour_err_mag"] + 0.01
