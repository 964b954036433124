"""Campaigns of the bare-nucleus case: no wrong firm period, H and radius errors that hold.

Truth: the rendered frames of `photpipe.scenario.cases` and the synthetic campaign generator
(photpipe/rotation/synthetic.py), whose period, H and albedo are known exactly; figures
measured when written.
"""

import pytest

from photpipe.scenario.campaign_recovery import case_campaign, summarise_campaigns
from photpipe.scenario.recovery import recover_case


@pytest.mark.slow
def test_bare_nucleus_campaigns_period_h_and_radius():
    # 20 rendered frames (seeds 1000-1019), 30 three-night campaigns (seeds 5000-5029).
    # Measured: 0 wrong firm periods (before the verdict weighed one harmonic more and the
    # second harmonic's aliases, 2-3 of 160 campaigns over the cases); H pull robust σ 1.00
    # (2.0 before the shared calibration error entered H_err); the 68 % radius interval
    # (albedo 0.02-0.06, D = 1329 km / sqrt(p) 10^(-H/5), Harris & Lagerros 2002) held the
    # true radius in 0.63 of them. The robust σ of 30 normal pulls scatters by about 0.3
    # (the median absolute deviation is 37 % efficient, common practice), so the bounds
    # here are 2 of those either side; tests/size/test_h_uncertainty.py holds 0.8-1.25 on
    # 150 campaigns.
    rows = recover_case("no_coma", range(1000, 1020), afrho=True)
    results = [case_campaign("no_coma", rows, 5000 + k) for k in range(30)]
    s = summarise_campaigns(results)
    assert s["period"]["wrong"] == s["period"]["half"] == s["period"]["double"] == 0
    assert s["period"]["right"] >= 5
    assert 0.5 <= s["H_pull_sigma"] <= 1.6
    # a 68 % interval over 30 campaigns: 0.68 ± 0.085 (binomial), 3σ either side
    assert 0.42 <= s["radius_coverage"] <= 0.94
