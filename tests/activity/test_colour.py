"""The comet's colour from two filters: pairing, the weighted mean, and pulls over seeds."""

import numpy as np
import pytest
from astropy import units as u

from photpipe.activity import MIN_COLOUR_PAIRS, comet_colour


def _night(rng, *, colour, n=20, cadence_min=6.0, amplitude=0.15, period_h=6.0):
    """Alternating V and R frames of a rotating comet: V is R + colour (invented scenario)."""
    t = 60000.0 + np.arange(n) * cadence_min / 1440.0 + rng.uniform(0, 0.5, n) / 1440.0
    filters = np.array(["V", "R"] * (n // 2))
    true = 15.0 + amplitude * np.sin(2 * np.pi * t * 24.0 / period_h) + np.where(
        filters == "V", colour, 0.0)
    err = rng.uniform(0.01, 0.05, n)
    return t * u.day, (true + rng.normal(0, err)) * u.mag, err * u.mag, filters


def test_weighted_mean_of_exact_pairs():
    # Two frames per pair, equal errors: the colour is the plain mean of the differences
    # (weighted mean, Bevington & Robinson 2003 eq. 4.17).
    t = np.array([0.0, 0.002, 0.1, 0.102, 0.2, 0.202]) * u.day
    m = np.array([15.6, 15.0, 15.4, 15.0, 15.5, 15.0]) * u.mag
    c = comet_colour(t, m, np.full(6, 0.01) * u.mag, ["V", "R"] * 3, first="V", second="R")
    assert c.status == "measured"
    assert c.colour == pytest.approx(0.5, abs=1e-12)
    # the differences scatter (0.1 mag) far beyond 0.014: the error grows by sqrt(chi2_red)
    assert c.colour_err == pytest.approx(0.1 / np.sqrt(3), rel=1e-9)


def test_pairs_are_nearest_and_used_once():
    t = np.array([0.0, 0.001, 0.003, 0.5]) * u.day
    m = np.array([15.5, 15.0, 15.0, 15.0]) * u.mag
    c = comet_colour(t, m, np.full(4, 0.02) * u.mag, ["V", "R", "R", "R"], first="V",
                     second="R")
    assert c.n_pairs == 1
    assert c.status == "none"
    assert f"at least {MIN_COLOUR_PAIRS}" in c.reason


def test_frames_too_far_apart_give_no_colour():
    t = np.arange(6) * 0.1 * u.day
    c = comet_colour(t, np.full(6, 15.0) * u.mag, np.full(6, 0.02) * u.mag,
                     ["V", "V", "V", "R", "R", "R"], first="V", second="R",
                     max_separation=20 * u.min)
    assert (c.status, c.n_pairs) == ("none", 0)
    assert np.isnan(c.colour)
    assert c.to_dict()["colour_mag"] is None


def test_bad_lengths_and_limit_are_named():
    with pytest.raises(ValueError, match="one length"):
        comet_colour([0, 1] * u.day, [1.0] * u.mag, [0.1] * u.mag, ["V"], first="V",
                     second="R")
    with pytest.raises(ValueError, match="max_separation must be positive"):
        comet_colour([0] * u.day, [1.0] * u.mag, [0.1] * u.mag, ["V"], first="V",
                     second="R", max_separation=0 * u.min)


@pytest.mark.parametrize("amplitude,period_h,max_bias", [
    pytest.param(0.0, 6.0, 0.2, id="steady"),
    pytest.param(0.15, 6.0, 0.2, id="rotating"),
    # 0.6 mag peak to peak in 2.5 h: the curvature between bracketing frames 12 min apart
    # (~0.01 mag, not removed by linear interpolation) biases the colour by about 0.35 σ
    pytest.param(0.3, 2.5, 0.45, id="fast-large-amplitude"),
])
def test_colour_pulls(amplitude, period_h, max_bias):
    # (estimate - truth)/error over 300 seeds has a robust σ near 1 (common practice for
    # testing error bars); a rotating comet changes between the two frames of a pair, which
    # the sqrt(chi2_red) scaling must absorb.
    truth = 0.45
    pulls = []
    for seed in range(300):
        rng = np.random.default_rng(seed)
        c = comet_colour(*_night(rng, colour=truth, amplitude=amplitude, period_h=period_h),
                         first="V", second="R")
        assert c.status == "measured"
        pulls.append((c.colour - truth) / c.colour_err)
    pulls = np.array(pulls)
    robust_sigma = 1.4826 * np.median(np.abs(pulls - np.median(pulls)))
    assert 0.8 < robust_sigma < 1.25
    assert abs(np.median(pulls)) < max_bias
