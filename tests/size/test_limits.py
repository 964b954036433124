"""Too few frames detect the nucleus: an upper limit on the radius, never a radius."""

import json

import numpy as np
import pytest

from photpipe.size import (
    absolute_magnitude_limit,
    assess_nucleus_limit,
    count_detections,
    phase_coefficient_assumed,
    radius_from_H,
)


def test_pure_coma_campaign_gives_a_radius_upper_limit():
    # 9 of 48 frames claim a nucleus (as a pure-coma campaign can): only a limit is formed
    limit = np.array([True] * 39 + [False] * 9)
    count = count_detections(limit)
    assert not count.enough and count.n_detected == 9 and count.n_limits == 39
    mags = np.full(48, 17.0)  # every frame: nucleus fainter than m(1,1,0) = 17
    errs = np.where(limit, np.nan, 0.1)
    h_lim = absolute_magnitude_limit(mags, errs, limit)
    # a detection enters at its 2σ upper bound, so the limit is a little brighter than 17
    assert 16.9 < h_lim < 17.0
    res = assess_nucleus_limit(h_lim, band="V", reason=count.reason, n_points=48,
                               albedo_range=(0.02, 0.06))
    d = res.to_dict()
    json.dumps(d, allow_nan=False)
    assert d["status"] == "upper_limit" and d["radius_km"] is None
    assert "only 9 of 48 frames detect the nucleus" in d["reason"]
    # the limit is the radius at the lowest albedo (Pravec & Harris 2007 size constant)
    expected = radius_from_H(h_lim, 0.02, band="V").to_value("km")
    assert d["radius_upper_limit_km"] == pytest.approx(expected, rel=1e-9)
    assert "UPPER LIMIT" in res.summary()


def test_limit_takes_the_steepest_phase_coefficient():
    pc = phase_coefficient_assumed(0.035, 20.0)
    plain = assess_nucleus_limit(17.0, band="V", reason="x", n_points=10)
    steep = assess_nucleus_limit(17.0, band="V", reason="x", n_points=10, phase=pc)
    # β = 0.06 instead of 0.035 at 20° makes m(1,1,0) 0.5 mag brighter: radius x 10^(0.1)
    assert steep.radius_upper_limit_km / plain.radius_upper_limit_km == pytest.approx(
        10 ** 0.1, rel=1e-9)


@pytest.mark.parametrize("n_limits, n_det, enough", [
    pytest.param(0, 4, False, id="four-detections"),
    pytest.param(10, 9, False, id="under-half"),
    pytest.param(10, 10, True, id="half"),
])
def test_detection_count_thresholds(n_limits, n_det, enough):
    assert count_detections([True] * n_limits + [False] * n_det).enough is enough
