import json

import pytest
from campaign._step_inputs import FULL_SIZE, make_lightcurve, write_size_config

from photpipe.campaign.size_step import run_size_stage
from photpipe.config import load_config
from photpipe.orbit.nongrav import water_g

ORBIT_LIMIT_AU_D2 = 2.0e-9


def _orbit_json(folder):
    nongrav = {"status": "limit", "law": "water", "reference_distance_au": 1.0,
               "limit_au_d2": ORBIT_LIMIT_AU_D2, "confidence": 0.95, "reason": ""}
    (folder / "orbit.json").write_text(json.dumps({"nongrav": nongrav}))


def test_size_stage_takes_the_orbit_limit_and_says_so(tmp_path):
    without_typed = FULL_SIZE.replace("nongrav_accel_limit_m_day2 = 15.0\n", "")
    config = load_config(write_size_config(tmp_path, without_typed))
    results = tmp_path / "results"
    _orbit_json(results)
    out = run_size_stage(config, make_lightcurve(), results)
    assert out["accel_limit_source"] == str(results / "orbit.json")
    assert out["accel_limit_confidence"] == 0.95
    # hand calculation: the limit moves from 1 AU to the lightcurve's median r_h by the water
    # law, a = 2e-9 AU/d² · g(r) (Marsden, Sekanina & Yeomans 1973, Eq. 1-2), and the bound is
    # M >= η Q v / a with η = 1, Q = 150 kg/s, v = 440 m/s (momentum balance, common practice;
    # e.g. Rickman 1989, Adv. Space Res. 9, 59, from memory)
    r = out["accel_limit_r_h_au"]
    a = ORBIT_LIMIT_AU_D2 * water_g(r) / water_g(1.0) * 149_597_870_700.0 / 86_400.0**2
    assert out["accel_limit_m_s2"] == pytest.approx(a, rel=1e-9)
    assert out["mass_bound_kg"] == pytest.approx(150.0 * 440.0 / a, rel=1e-6)


def test_a_typed_limit_wins_over_the_orbit_fit(tmp_path):
    config = load_config(write_size_config(tmp_path, FULL_SIZE))
    results = tmp_path / "results"
    _orbit_json(results)
    out = run_size_stage(config, make_lightcurve(), results)
    assert out["accel_limit_source"] == "[size] configuration"
    assert out["mass_bound_kg"] == pytest.approx(150.0 * 440.0 / (15.0 / 86_400.0**2),
                                                 rel=1e-6)
