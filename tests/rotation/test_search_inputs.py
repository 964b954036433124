"""Bad input to the period search: each refusal says what the data can and cannot constrain."""

import warnings
from dataclasses import replace

import numpy as np
import pytest
from astropy import units as u

from photpipe.rotation import (
    LightcurveError,
    RotationWarning,
    frequency_grid,
    reduce_lightcurve,
    search_rotation,
    synthetic_lightcurve,
)

ONE_SITE = {"kettle_rock": -111.4}


@pytest.fixture(scope="module")
def campaign():
    """A few nights of the project's synthetic lightcurve (demo scenario, not a reference)."""
    table, _ = synthetic_lightcurve(period=6.0 * u.h, n_nights=4, rng=np.random.default_rng(11))
    return reduce_lightcurve(table)


@pytest.mark.parametrize("value", [pytest.param(np.nan, id="nan-error"),
                                   pytest.param(-0.02, id="negative-error"),
                                   pytest.param(0.0, id="zero-error"),
                                   pytest.param(np.inf, id="infinite-error")])
def test_bad_errors_are_set_aside_by_the_search(campaign, value):
    # a ReducedLightcurve made by hand skips reduce_lightcurve's checks; the search sets the
    # bad points aside, names them, and goes on with the rest
    err = campaign.mag_err.copy()
    err[[2, 5]] = value
    bad = replace(campaign, mag_err=err)
    with pytest.warns(RotationWarning) as caught:
        res = search_rotation(bad, n_bootstrap=0)
    text = " ".join(str(w.message) for w in caught)
    assert "2 of" in text and "set aside, the search goes on" in text
    assert str(campaign.frame[2]) in text and str(campaign.frame[5]) in text
    assert res.n_points == campaign.n_points - 2 and "bad_points_set_aside" in res.flags


def test_nan_magnitude_is_set_aside_by_the_search(campaign):
    mag = campaign.mag.copy()
    mag[0] = np.nan
    with pytest.warns(RotationWarning) as caught:
        res = search_rotation(replace(campaign, mag=mag), n_bootstrap=0)
    assert any("magnitude error, magnitude or epoch" in str(w.message) for w in caught)
    assert res.n_points == campaign.n_points - 1


def test_upper_limits_are_set_aside_and_counted():
    # a bare-nucleus campaign where 7 frames gave only upper limits (NaN errors): the search
    # uses the detections, counts the limits, and never stops on them
    table, truth = synthetic_lightcurve(period=6.0 * u.h, n_nights=4,
                                        rng=np.random.default_rng(11))
    table["nucleus_mag_err"][[3, 9, 14, 20, 33, 40, 51]] = np.nan
    table["flags"][[3, 9, 14, 20, 33, 40, 51]] = "upper_limit"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RotationWarning)
        res = search_rotation(reduce_lightcurve(table), min_period=3 * u.h,
                              max_period=20 * u.h, n_bootstrap=0)
    assert res.n_upper_limits_set_aside == 7 and res.n_points == len(table) - 7
    d = res.to_dict()
    assert d["n_upper_limits_set_aside"] == 7 and "7 upper limits" in res.summary()
    assert abs(float(res.period / truth.period) - 1) < 0.01


def test_too_few_points_says_what_is_left(campaign):
    few = campaign.select(np.arange(campaign.n_points) < 11)
    with pytest.raises(LightcurveError, match="only 11 usable points") as info:
        search_rotation(few)
    assert "a mean magnitude and its scatter, but no rotation period" in str(info.value)


def test_too_few_coma_free_points_when_they_are_required():
    table, _ = synthetic_lightcurve(period=6.0 * u.h, source="small_aperture",
                                    rng=np.random.default_rng(12))
    lc = reduce_lightcurve(table)
    with pytest.raises(LightcurveError, match="only 0 usable points"):
        search_rotation(lc, use_points="coma-free")


def test_baseline_shorter_than_trial_period_says_what_is_shown(campaign):
    short = campaign.select(campaign.epoch_mjd < campaign.epoch_mjd.min() + 0.11)
    assert short.n_points >= 12
    with pytest.raises(LightcurveError, match="less than the shortest trial period") as info:
        search_rotation(short, min_period=3 * u.h)
    assert "a lower bound on the amplitude" in str(info.value)


def test_one_night_says_what_cannot_be_constrained():
    table, _ = synthetic_lightcurve(n_nights=1, sites=ONE_SITE, night_hours=7, cloud_fraction=0,
                                    period=2.2 * u.h, rng=np.random.default_rng(13))
    with pytest.warns(RotationWarning, match="cannot be tested") as caught:
        warnings.simplefilter("always", RotationWarning)
        res = search_rotation(reduce_lightcurve(table), min_period=1 * u.h, max_period=5 * u.h,
                              n_bootstrap=0)
    texts = " ".join(str(w.message) for w in caught)
    assert "come from one night" in texts
    assert "the cycle count between nights cannot be tested" in texts
    assert "single_night" in res.flags


@pytest.mark.parametrize("kw, text", [
    pytest.param({"methods": ("lomb-scargle", "wavelets")}, "unknown method(s) ['wavelets']",
                 id="method"),
    pytest.param({"use_points": "best"}, "'use_points' must be 'auto', 'coma-free' or 'all'",
                 id="use-points"),
    pytest.param({"min_period": -1 * u.h}, "min_period", id="negative-period"),
])
def test_bad_options(campaign, kw, text):
    with pytest.raises(ValueError, match=text.replace("(", r"\(").replace(")", r"\)")
                       .replace("[", r"\[").replace("]", r"\]")):
        search_rotation(campaign, n_bootstrap=0, **kw)


def test_grid_refusals():
    t = np.array([0.0, 10.0])
    with pytest.raises(ValueError, match="must be shorter than 'max_period'"):
        frequency_grid(t, min_period=10 * u.h, max_period=5 * u.h)
    with pytest.raises(ValueError, match="the epochs span no time"):
        frequency_grid(np.array([3.0, 3.0]), min_period=1 * u.h, max_period=5 * u.h)
    with pytest.raises(ValueError, match="narrow the period range"):
        frequency_grid(np.array([0.0, 3650.0]), min_period=0.1 * u.h, max_period=5 * u.h)
