"""A campaign whose nucleus is too rarely detected: no period, and the size step still runs."""

import json

import numpy as np

from photpipe.campaign.steps import run_campaign_steps
from photpipe.config import load_config

from ._step_inputs import FULL_SIZE, make_lightcurve, write_size_config


def _run(tmp_path, flags):
    config = load_config(write_size_config(tmp_path, FULL_SIZE))
    table = make_lightcurve(n=len(flags), flags=flags)
    table.replace_column("source", ["nucleus_fit"] * len(table))
    out = tmp_path / "results"
    out.mkdir(exist_ok=True)
    lines = []
    steps = run_campaign_steps(config, table, None, None, out, echo=lines.append)
    return steps, out, lines


def test_mostly_limits_give_no_period_and_a_radius_limit(tmp_path):
    # 4 detections among 40 frames: too few for a period (the search needs 12) and for a
    # radius ([size] min_detections = 5): rotation "none", size an upper limit
    flags = ["upper_limit"] * 36 + [""] * 4
    steps, out, _ = _run(tmp_path, np.random.default_rng(0).permutation(flags).tolist())
    rot = json.loads((out / "rotation.json").read_text())
    assert rot["status"] == "none"
    assert "only 4 usable points (36 upper limits set aside)" in rot["reason"]
    size = steps.results["size"]
    assert size["radius_km"] is None
    assert size["radius_upper_limit_km"] > 0
    assert json.loads((out / "size.json").read_text())["radius_upper_limit_km"] > 0


def test_few_detections_give_no_period_and_h_without_rotation_model(tmp_path):
    # 8 detections, no limits: no period (too few points), H from the mean flux with an error
    # covering the unknown rotation
    steps, out, _ = _run(tmp_path, [""] * 8)
    assert steps.results["rotation"]["status"] == "none"
    size = steps.results["size"]
    assert size["radius_km"] is not None
    assert any("H without a rotation model (rotation period none)" in n
               for n in size["assumptions"])
    assert "rotation_unknown" in size["flags"]
