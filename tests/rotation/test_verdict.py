"""What the data allow: refined orders, integer relatives, ambiguous and empty results.

Truth: the project's synthetic campaign generator (photpipe/rotation/synthetic.py), whose
period, shape and sampling are known exactly; the figures were measured when written.
"""

import warnings

import numpy as np
import pytest
from astropy import units as u

from photpipe.rotation import (
    STATUSES,
    LightcurveError,
    RotationWarning,
    fourier_periodogram,
    frequency_grid,
    reduce_lightcurve,
    search_rotation,
    synthetic_lightcurve,
)
from photpipe.rotation.fourier_model import fourier_series

ONE_SITE = {"kettle_rock": -111.4}


def _search(table, **kw):
    kw = {"min_period": 3 * u.h, "max_period": 20 * u.h, "n_bootstrap": 0, **kw}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RotationWarning)
        return search_rotation(reduce_lightcurve(table), rng=np.random.default_rng(0), **kw)


def _pure_symmetric(seed, n_nights=8):
    """A campaign whose signal is one cos 2θ (two identical halves per rotation, 0.4 mag)."""
    rng = np.random.default_rng(seed)
    period = rng.uniform(4, 14) * u.h
    table, truth = synthetic_lightcurve(period=period, symmetric=True, n_nights=n_nights, rng=rng)
    t = reduce_lightcurve(table).epoch_mjd
    f = 1 / period.to_value(u.day)
    table["nucleus_mag"] = (table["nucleus_mag"] - truth.signal(t)
                            + fourier_series(t, f, np.array([0, 0, 0, 0.2, 0.0]),
                                             t0=truth.t0_mjd))
    return table, truth


def test_grid_order_choice_picks_three_halves_without_refinement():
    # Seed 11: on the grid alone, a three-harmonic curve at 2f/3 beats the curve at f (its third
    # harmonic is the signal's 2f, sampled closer to a grid point); refined, it does not.
    table, truth = _pure_symmetric(11)
    lc = reduce_lightcurve(table)
    grid = frequency_grid(lc.epoch_mjd, min_period=3 * u.h, max_period=20 * u.h)
    f_true = 1 / truth.period.to_value(u.day)
    coarse = fourier_periodogram(lc.epoch_mjd, lc.mag, lc.mag_err, grid, refine=False)
    fine = fourier_periodogram(lc.epoch_mjd, lc.mag, lc.mag_err, grid)
    assert coarse.info["order"] == 3
    assert abs(coarse.best_frequency / f_true - 2 / 3) < 0.01
    ratio = fine.info["refined_frequency"] / f_true
    assert min(abs(ratio - 1), abs(ratio - 2)) < 1e-3


@pytest.mark.slow
def test_symmetric_lightcurve_never_at_one_and_a_half_periods():
    # Seeds 0-199, 8 nights, 3-20 h searched: before the orders were refined 17 of 200 seeds
    # came out at 1.5 P (benchmarks/rotation_shape_study.py, campaign "symmetric"); now 0. Here
    # seeds 0-59: none at 1.5 P, every period the truth and firm.
    ratios = []
    for seed in range(60):
        table, truth = _pure_symmetric(seed)
        res = _search(table)
        ratios.append(float(res.period / truth.period))
        assert res.status == "period"
    ratios = np.array(ratios)
    assert np.sum(np.abs(ratios - 1.5) < 0.03) == 0
    assert np.all(np.abs(ratios - 1) < 0.01)


def test_three_identical_parts_move_to_three_times_the_frequency():
    # start the shape decision at 2f/3 with three harmonics: the curve is three identical parts
    from photpipe.rotation.fit import night_blocks
    from photpipe.rotation.shape_choice import decide_shape

    table, truth = _pure_symmetric(11)
    lc = reduce_lightcurve(table)
    t, y, dy = lc.epoch_mjd, lc.mag, lc.mag_err
    f_true = 1 / truth.period.to_value(u.day)
    f, m, shape = decide_shape(t, y, dy, 2 * f_true / 3, 3, 1.2, 8.0, significance=1e-3,
                               prefer_double=True, half_width=0.5 / np.ptp(t),
                               blocks=night_blocks(t, lc.site))
    assert any(s["test"] == "three identical parts at the start" for s in shape["tests"])
    assert abs(f / f_true - 1) < 1e-3 and shape["choice"] == "double-peaked (assumed)"


def test_one_night_is_ambiguous_and_says_so():
    # the demo's case: one night of 4.4 h on a 5.4 h double-peaked nucleus; the search can only
    # find the 2.7 h half-period, and must not print it as a result
    rng = np.random.default_rng(3)
    table, truth = synthetic_lightcurve(period=5.4 * u.h, n_nights=1, sites=ONE_SITE,
                                        night_hours=4.4, cloud_fraction=0.0, rng=rng)
    table = table[table["mjd_utc_mid"] - table["mjd_utc_mid"][0] < 4.4 / 24]
    res = _search(table, min_period=2 * u.h, max_period=60 * u.h)
    d = res.to_dict()
    assert d["status"] == "ambiguous" and "AMBIGUOUS" in d["headline"]
    assert "no single period is claimed" in d["headline"]
    periods = [p["period_h"] for p in d["allowed_periods"]]
    assert any(abs(p / truth.period.to_value(u.h) - 1) < 0.05 for p in periods)
    assert res.summary().splitlines()[0] == d["headline"]
    assert "best-fitting period (not a result)" in res.summary()
    assert set(STATUSES) == {"period", "ambiguous", "none"}


@pytest.mark.slow
@pytest.mark.parametrize("case, kw, firm_wrong_max, ambiguous_min", [
    # measured over seeds 0-59, periods 4-14 h, 3-20 h searched: one night 40 of 40 searched
    # ambiguous (20 refused: too short); two nights at one site 56 of 60 ambiguous, the 4
    # firm ones right; one point per 2.5 h over six nights 43 ambiguous, 17 none, none firm
    pytest.param("one-night", {"n_nights": 1, "night_hours": 5.0}, 0, 38, id="one-night"),
    pytest.param("two-nights", {"n_nights": 2}, 0, 54, id="two-nights-one-site"),
    pytest.param("sparse", {"n_nights": 6, "cadence": 150 * u.min}, 0, 40, id="sparse"),
])
def test_hard_sampling_is_never_a_wrong_firm_period(case, kw, firm_wrong_max, ambiguous_min):
    firm_wrong = ambiguous = 0
    for seed in range(60):
        rng = np.random.default_rng(seed)
        period = rng.uniform(4, 14) * u.h
        table, truth = synthetic_lightcurve(period=period, sites=ONE_SITE, cloud_fraction=0.0,
                                            rng=rng, **kw)
        try:
            res = _search(table)
        except LightcurveError as exc:  # too short a night: refused with its reason
            assert "less than the shortest trial period" in str(exc) or "usable" in str(exc)
            continue
        ambiguous += res.status == "ambiguous"
        firm_wrong += res.status == "period" and abs(float(res.period / truth.period) - 1) > 0.01
    assert firm_wrong <= firm_wrong_max
    assert ambiguous >= ambiguous_min


def test_period_at_the_edge_of_the_range_is_ambiguous():
    rng = np.random.default_rng(4)
    table, _ = synthetic_lightcurve(period=19.9 * u.h, n_nights=8, rng=rng)
    res = _search(table, max_period=20 * u.h)
    assert res.status == "ambiguous"
    assert any("edge of the searched range" in r for r in res.verdict_reasons)


def test_noise_alone_gives_no_period():
    rng = np.random.default_rng(9)
    table, _ = synthetic_lightcurve(amplitude=1e-6 * u.mag, n_nights=6, rng=rng)
    res = _search(table)
    assert res.status == "none" and res.headline.startswith("no rotation period")
    assert "period_none" in res.flags


def test_firm_period_headline_and_contract():
    rng = np.random.default_rng(2)
    table, truth = synthetic_lightcurve(period=7.3 * u.h, n_nights=8, rng=rng)
    d = _search(table).to_dict()
    assert d["status"] == "period" and d["headline"].startswith("rotation period 7.3")
    assert d["allowed_periods"][0]["relation"] == "adopted"
    assert d["n_upper_limits_set_aside"] == 0 and d["set_aside"] == {}


def _near_symmetric_three_nights(seed):
    """Three nights at one site, a nearly symmetric double-peaked curve (asymmetry 0.1)."""
    rng = np.random.default_rng(seed)
    table, truth = synthetic_lightcurve(period=rng.uniform(4, 14) * u.h, rng=rng, n_nights=3,
                                        sites=ONE_SITE, cloud_fraction=0.0, cadence=8 * u.min,
                                        noise=0.03 * u.mag, amplitude=0.3 * u.mag,
                                        asymmetry=0.1)
    return table, truth


def test_alias_of_the_second_harmonic_needing_a_third_harmonic_is_allowed():
    # Seed 127: the single-peaked curve sits on a 1/day alias of the body's second harmonic,
    # and its doubled period, 4.215 h, was printed firm for a true 4.625 h: the truth is
    # f - (1/day)/2, which no rival at f ± k/day reached, and with 2 harmonics it lost by
    # Δχ² 18 (with 3 harmonics, 3.6). Now it is weighed, with one harmonic more, and allowed.
    table, truth = _near_symmetric_three_nights(127)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RotationWarning)
        res = search_rotation(reduce_lightcurve(table), n_bootstrap=0,
                              rng=np.random.default_rng(127))
    d = res.to_dict()
    assert d["status"] == "ambiguous"
    true_h = truth.period.to_value(u.h)
    match = [p for p in d["allowed_periods"] if abs(p["period_h"] / true_h - 1) < 0.01]
    assert match and "with 3 harmonics" in match[0]["relation"]
    assert match[0]["delta_chi2"] < 10


@pytest.mark.slow
def test_three_nights_at_one_site_never_a_wrong_firm_period():
    # Seeds 0-59 of the nearly symmetric three-night campaign, 2-60 h searched (measured when
    # written: before the change 1 wrong firm period in 300 seeds and 95 right; now none wrong
    # and 51 right in 300; here none wrong and at least 8 right of 60, 15 measured)
    firm_right = 0
    for seed in range(60):
        table, truth = _near_symmetric_three_nights(seed)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RotationWarning)
            res = search_rotation(reduce_lightcurve(table), n_bootstrap=0,
                                  rng=np.random.default_rng(seed))
        if res.status == "period":
            assert abs(float(res.period / truth.period) - 1) < 0.02, seed
            firm_right += 1
    assert firm_right >= 8
