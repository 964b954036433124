import warnings

import numpy as np
import pytest
from astropy import units as u

from photpipe.rotation import (
    LightcurveError,
    RotationWarning,
    reduce_lightcurve,
    search_rotation,
    synthetic_lightcurve,
)
from photpipe.rotation import _period_errors as search_module
from photpipe.rotation.fit import expanded_percentile_interval
from photpipe.rotation.result import INTERVAL_METHODS

ONE_SITE = {"kettle_rock": -111.4}


def _search(table, rng, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RotationWarning)
        return search_rotation(reduce_lightcurve(table), min_period=3 * u.h,
                               max_period=20 * u.h, rng=rng, **kw)


# Coverage of the stated 1-σ period error over seeds 0-39, measured with the night-block
# bootstrap: (count within 1σ, 2σ, 3σ, 1/day alias adopted). Gaussian expectation 68.3 / 95.4 /
# 99.7 % (common practice). Two sites: 24 / 36 / 40. One site: 31 / 38 / 40, no alias adopted.
# Over 400 seeds (measured before the odd-harmonic test took zero points per night): two sites
# 74.0 / 96.8 / 99.3 %, one site 75.3 / 95.5 / 98.3 %, where the seeds outside 3σ adopted the
# 1/day alias near periods of a third of a day, an alias error, not an error bar too small.
COVERAGE = {"two-sites": (24, 36, 40, 0), "one-site-1-per-day-aliases": (31, 38, 40, 0)}


@pytest.mark.slow
@pytest.mark.parametrize("sites, nights, hours, case", [
    pytest.param(None, 8, 5.0, "two-sites", id="two-sites"),
    pytest.param(ONE_SITE, 12, 7.0, "one-site-1-per-day-aliases",
                 id="one-site-1-per-day-aliases"),
])
def test_truth_recovered_over_seeds(sites, nights, hours, case):
    # Truth: the project's synthetic campaign generator (double-peaked nucleus, weather,
    # nightly windows), 40 seeds; the figures measured are in COVERAGE above.
    z, alias_hits = [], 0
    for seed in range(40):
        rng = np.random.default_rng(seed)
        period = rng.uniform(4, 14) * u.h
        table, truth = synthetic_lightcurve(period=period, sites=sites, n_nights=nights,
                                            night_hours=hours, rng=rng)
        res = _search(table, rng, n_bootstrap=30)
        assert res.bootstrap_resampled == "site-nights"
        z.append(float((res.period - truth.period) / res.period_err))
        f_true = 1 / truth.period.to_value(u.day)
        f_got = res.fit.frequency
        if abs(abs(f_got - f_true) - 1.0027) < 0.05:
            alias_hits += 1
    z = np.abs(np.array(z))
    within = [int(np.sum(z < k)) for k in (1, 2, 3)]
    n1, n2, n3, n_alias = COVERAGE[case]
    # two seeds of slack either way for rounding on another machine
    assert abs(within[0] - n1) <= 2 and abs(within[1] - n2) <= 2 and abs(within[2] - n3) <= 2
    assert within[1] >= 35  # the truth within 2σ in at least 35 of 40 seeds
    assert within[0] <= 34  # errors not inflated far past 1σ
    assert alias_hits <= n_alias  # the 1/day alias is rarely adopted, and never with two sites


@pytest.mark.slow
def test_nightly_zero_point_errors_neither_double_the_period_nor_narrow_the_interval():
    # Truth: the synthetic campaign (two sites, 8 nights, seeds 0-49) with a 0.02 mag zero-point
    # error per site-night that the stated point errors leave out. Residuals then correlate
    # within a night. Drawing whole nights in the bootstrap (Künsch 1989) widens the error, and
    # the 95 % interval is the expanded percentile interval of those resamples (Hesterberg
    # 2015). The odd-harmonic test fits a zero point per site-night once they differ, so the
    # offsets no longer pass for two different halves: over seeds 0-99 the period was doubled
    # in 8 seeds with one zero point, in 0 now (over seeds 0-199: 14 and 1, see
    # benchmarks/rotation_shape_study.py). Measured when written, seeds 0-49: no period doubled;
    # 35 / 47 / 50 seeds within 1σ / 2σ / 3σ (rms z 1.00); 46 inside the 95 % interval.
    z, doubled, covered = [], 0, 0
    for seed in range(50):
        rng = np.random.default_rng(seed)
        table, truth = synthetic_lightcurve(period=rng.uniform(4, 14) * u.h, n_nights=8,
                                            night_offset=0.02 * u.mag, rng=rng)
        res = _search(table, rng, n_bootstrap=40)
        assert res.period_interval_method == INTERVAL_METHODS["bootstrap"]
        ratio = float(res.period / truth.period)
        if abs(ratio - 2) < 0.01:
            doubled += 1
        elif abs(ratio - 1) < 0.01:
            z.append(float((res.period - truth.period) / res.period_err))
        lo, hi = res.period_interval_95.to_value(u.h)
        covered += int(lo <= truth.period.to_value(u.h) <= hi)
    z = np.abs(np.array(z))
    within = [int(np.sum(z < k)) for k in (1, 2, 3)]
    assert doubled == 0
    assert abs(within[0] - 35) <= 2 and abs(within[1] - 47) <= 2 and within[2] >= 48
    assert 0.8 < np.sqrt(np.mean(z**2)) < 1.2
    # 95 % interval: binomial(50, 0.95) gives 45 or more in 96 % of campaigns (common practice)
    assert abs(covered - 46) <= 2 and covered >= 45


def test_synthetic_night_offset_keeps_the_campaign():
    # the nightly zero-point errors are drawn last: the same seed gives the same nights
    plain, _ = synthetic_lightcurve(rng=np.random.default_rng(8))
    shifted, _ = synthetic_lightcurve(night_offset=0.02 * u.mag, rng=np.random.default_rng(8))
    np.testing.assert_array_equal(plain["mjd_utc_mid"], shifted["mjd_utc_mid"])
    diff = np.asarray(shifted["nucleus_mag"]) - np.asarray(plain["nucleus_mag"])
    night = np.array([f.rsplit("_", 1)[0] for f in plain["frame"]])
    for name in set(night):
        assert np.ptp(diff[night == name]) < 1e-12  # one offset per site-night
    assert np.std(diff) > 0.005
    with pytest.raises(ValueError, match="'night_offset' must be zero or positive"):
        synthetic_lightcurve(night_offset=-0.01 * u.mag)


def test_one_day_alias_named_and_rejected():
    rng = np.random.default_rng(12)
    table, truth = synthetic_lightcurve(period=9.1 * u.h, sites=ONE_SITE, n_nights=12,
                                        night_hours=7, rng=rng)
    res = _search(table, rng, n_bootstrap=20)
    assert abs(res.period - truth.period) < 3 * res.period_err
    names = list(res.aliases["name"])
    assert any("1/day" in n for n in names)
    daily = res.aliases[[("1/day" in n) for n in names]]
    assert np.all(daily["delta_chi2"] > 10)
    assert "1/day" in list(res.window["name"])


def test_symmetric_body_gives_assumed_double_peak():
    rng = np.random.default_rng(3)
    table, truth = synthetic_lightcurve(period=8.0 * u.h, asymmetry=0.0, rng=rng)
    # remove the odd harmonics altogether from the truth: rebuild magnitudes
    res = _search(table, rng, n_bootstrap=0)
    assert res.shape["choice"].startswith("double-peaked")
    assert abs(res.period - truth.period) < 3 * res.period_err


def test_asymmetric_body_double_peak_from_data():
    rng = np.random.default_rng(4)
    table, truth = synthetic_lightcurve(period=7.0 * u.h, asymmetry=0.4, rng=rng)
    res = _search(table, rng, n_bootstrap=0)
    assert res.shape["choice"] == "double-peaked"
    assert "double_peaked_assumed" not in res.flags


def test_amplitude_and_axial_ratio():
    rng = np.random.default_rng(6)
    table, truth = synthetic_lightcurve(period=6.0 * u.h, amplitude=0.5 * u.mag, rng=rng)
    res = _search(table, rng, n_bootstrap=30)
    assert abs(res.amplitude - truth.amplitude) < 3 * res.amplitude_err
    mean_phase = res.mean_phase_deg
    # Zappalà et al. (1990) A(0) = A/(1 + 0.015 α); a/b >= 10^(0.4 A(0))
    a0 = res.amplitude.to_value(u.mag) / (1 + 0.015 * mean_phase)
    assert res.axial_ratio_min == pytest.approx(10 ** (0.4 * a0), rel=1e-9)
    d = res.to_dict()
    for key in ("period_h", "period_err_h", "amplitude_mag", "amplitude_err_mag",
                "axial_ratio_min", "n_points", "method"):
        assert key in d
    # the error says what it is, and with fewer than 40 resamples the 95 % interval is ±1.96σ
    # (normal quantile, common practice)
    assert d["period_err_level"].startswith("1 sigma")
    assert d["period_interval_95_method"] == INTERVAL_METHODS["normal"]
    lo, hi = d["period_interval_95_h"]
    assert (hi - lo) / 2 == pytest.approx(1.959964 * d["period_err_h"], rel=1e-6)
    assert lo < d["period_h"] < hi
    assert d["bootstrap_resampled"] == "site-nights" and d["bootstrap_blocks"] >= 5
    assert "1σ; 95 % interval" in res.summary()


def test_interval_from_the_night_bootstrap(monkeypatch):
    # the 95 % interval is the expanded percentile interval of the resampled periods when
    # whole site-nights were drawn at least 40 times; ±1.96σ otherwise
    table, _ = synthetic_lightcurve(period=6.0 * u.h, rng=np.random.default_rng(6))
    drawn = {}

    def fake_bootstrap(t, y, dy, fit, *, n_bootstrap, rng, blocks):
        # a skewed spread of frequencies, so a percentile interval differs from ±1.96σ
        f = fit.frequency * (1 + 1e-3 * np.random.default_rng(1).exponential(1, n_bootstrap))
        drawn.update(f=f, blocks=blocks)
        return f, np.full(n_bootstrap, fit.amplitude)

    monkeypatch.setattr(search_module, "bootstrap_fourier_fit", fake_bootstrap)
    res = _search(table, np.random.default_rng(1), n_bootstrap=60)
    assert res.bootstrap_resampled == "site-nights"
    expected = expanded_percentile_interval(24 / drawn["f"], drawn["blocks"].max() + 1)
    np.testing.assert_allclose(res.period_interval_95.to_value(u.h), expected, rtol=1e-12)
    d = res.to_dict()
    assert d["period_interval_95_method"] == INTERVAL_METHODS["bootstrap"]
    lo, hi = d["period_interval_95_h"]
    assert abs((hi - lo) / 2 - 1.959964 * d["period_err_h"]) > 1e-3 * d["period_err_h"]
    # 39 resamples, or no bootstrap: the normal interval
    for n in (39, 0):
        res = _search(table, np.random.default_rng(1), n_bootstrap=n)
        assert res.period_interval_method == INTERVAL_METHODS["normal"]
        lo, hi = res.period_interval_95.to_value(u.h)
        assert (hi - lo) / 2 == pytest.approx(1.959964 * res.period_err.to_value(u.h), rel=1e-6)


def test_interval_normal_when_single_points_are_drawn():
    # fewer than five site-nights: single points are drawn, and the interval stays ±1.96σ
    table, _ = synthetic_lightcurve(period=6.0 * u.h, sites=ONE_SITE, n_nights=3, night_hours=8,
                                    cloud_fraction=0, rng=np.random.default_rng(2))
    res = _search(table, np.random.default_rng(2), n_bootstrap=60)
    assert res.bootstrap_resampled == "points"
    assert res.to_dict()["period_interval_95_method"] == INTERVAL_METHODS["normal"]


def test_small_aperture_lightcurve_needs_coma_fraction():
    rng = np.random.default_rng(7)
    table, _ = synthetic_lightcurve(period=6.0 * u.h, source="small_aperture", rng=rng)
    lc = reduce_lightcurve(table)
    with pytest.warns(RotationWarning, match="no coma fraction was given"):
        res = search_rotation(lc, min_period=3 * u.h, max_period=20 * u.h, n_bootstrap=0,
                              rng=rng)
    assert "coma_dilution_unknown" in res.flags
    assert not np.isfinite(res.axial_ratio_min)
    res2 = search_rotation(lc, min_period=3 * u.h, max_period=20 * u.h, n_bootstrap=0,
                           rng=rng, coma_fraction=0.5)
    assert res2.amplitude_nucleus > res2.amplitude


def test_too_few_points():
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(1))
    with pytest.raises(LightcurveError, match="no rotation period"):
        search_rotation(reduce_lightcurve(table[:8]))


def test_baseline_shorter_than_every_trial_period():
    table, _ = synthetic_lightcurve(cadence=3 * u.min, rng=np.random.default_rng(1))
    first = table[table["mjd_utc_mid"] < table["mjd_utc_mid"][0] + 0.08]
    assert len(first) >= 12
    with pytest.raises(LightcurveError, match="less than the shortest trial period"):
        search_rotation(reduce_lightcurve(first), min_period=3 * u.h)


def test_one_night_warns_and_clips():
    table, _ = synthetic_lightcurve(n_nights=1, sites=ONE_SITE, night_hours=8, cloud_fraction=0,
                                    period=2.5 * u.h, rng=np.random.default_rng(2))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RotationWarning)
        res = search_rotation(reduce_lightcurve(table), min_period=1 * u.h,
                              max_period=20 * u.h, n_bootstrap=0)
    texts = " ".join(str(w.message) for w in caught)
    assert "come from one night" in texts and "cannot be constrained" in texts
    assert "single_night" in res.flags and "max_period_clipped" in res.flags


def test_wrong_type():
    with pytest.raises(TypeError, match="takes a ReducedLightcurve"):
        search_rotation({"a": 1})
