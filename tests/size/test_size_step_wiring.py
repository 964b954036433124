"""The size step of a campaign uses the verdicts: upper limits, rotation status, phase range."""

import numpy as np
import pytest
from astropy import units as u

from photpipe.campaign.size_step import run_size_stage
from photpipe.rotation import synthetic_lightcurve

CONFIG = {"size": {"albedo": 0.04, "albedo_range": [0.02, 0.06], "n_samples": 2000},
          "photometry": {"band": "R"}}


def _campaign(n_nights=6, seed=4):
    table, truth = synthetic_lightcurve(period=7.3 * u.h, n_nights=n_nights,
                                        rng=np.random.default_rng(seed))
    table["night"] = np.floor(np.asarray(table["mjd_utc_mid"])).astype(int).astype(str)
    return table, truth


def test_mostly_limits_give_a_radius_upper_limit(tmp_path):
    table, _ = _campaign()
    n = len(table)
    limit = np.arange(n) % 5 != 0  # four frames in five give only a limit
    table["flags"] = np.where(limit, "upper_limit", "")
    table["nucleus_mag_err"] = np.where(limit, np.nan, table["nucleus_mag_err"])
    out = run_size_stage(CONFIG, table, tmp_path)
    assert out["status"] == "upper_limit" and out["radius_km"] is None
    assert out["radius_upper_limit_km"] > 0 and "frames detect the nucleus" in out["reason"]


@pytest.mark.parametrize("status, method", [
    pytest.param("period", "harmonic", id="firm"),
    pytest.param("ambiguous", "rotation-unknown", id="ambiguous"),
])
def test_h_uses_the_rotation_model_only_for_a_firm_period(tmp_path, status, method):
    table, truth = _campaign()
    rotation = {"status": status, "period_h": float(truth.period.to_value(u.h)),
                "amplitude_mag": 0.4}
    out = run_size_stage(CONFIG, table, tmp_path, rotation=rotation)
    assert out["H_method"] == method
    assert out["phase_coefficient"]["phase_coefficient_range"] == [0.02, 0.06]
    assert out["H_err_total_mag"] >= out["H_err_mag"]
