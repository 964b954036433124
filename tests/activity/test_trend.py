import re
import warnings

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time
from scipy.optimize import minimize_scalar

from photpipe._warnings import PoorResultWarning
from photpipe.activity._fit_scatter import fit_line_scatter, restricted_deviance
from photpipe.activity.synthetic import simulate_activity
from photpipe.activity.trend import FIT_METHODS, fit_activity_trend

T_PERI = Time(61400.0, format="mjd", scale="utc")


def _exact_campaign(k_pre=-3.0, k_post=-2.0, err=0.02):
    t = Time(61400.0 + np.arange(-40.0, 41.0, 5.0) + 0.3, format="mjd")
    rh = np.sqrt(1.3 ** 2 + (0.02 * (t.mjd - 61400.0)) ** 2)
    k = np.where(t.mjd < 61400.0, k_pre, k_post)
    afrho = 400.0 * (rh / 1.3) ** k
    return t, rh * u.au, afrho * u.cm, err * afrho * u.cm


@pytest.mark.parametrize("method", sorted(FIT_METHODS))
def test_noise_free_power_law_recovered_exactly(method):
    t, rh, a, ae = _exact_campaign()
    trend = fit_activity_trend(t, rh, a, ae, perihelion_time=T_PERI, method=method)
    # Exact data on Afρ ∝ r_h^k (A'Hearn et al. 1995 power law): indices returned to 1e-6.
    assert [b.name for b in trend.branches] == ["pre", "post"]
    assert trend.branch("pre").k == pytest.approx(-3.0, abs=1e-6)
    assert trend.branch("post").k == pytest.approx(-2.0, abs=1e-6)
    # Normalisation at 1 au: 400 cm · 1.3^{-k}.
    assert trend.branch("pre").log_norm == pytest.approx(np.log10(400 * 1.3 ** 3.0), abs=1e-6)


def test_weighted_fit_matches_numpy_polyfit():
    rng = np.random.default_rng(11)
    t, rh, a, ae = _exact_campaign()
    a = a * 10 ** rng.normal(0.0, 0.008, a.size)
    trend = fit_activity_trend(t, rh, a, ae, perihelion_time=T_PERI, method="clip")
    pre = t.mjd < 61400.0
    x = np.log10(rh.value[pre])
    y = np.log10(a.value[pre])
    sy = ae.value[pre] / (a.value[pre] * np.log(10))
    # Reference: numpy.polyfit with weights 1/σ (numpy documentation: w = 1/sigma).
    coef, cov = np.polyfit(x, y, 1, w=1 / sy, cov="unscaled")
    b = trend.branch("pre")
    assert b.k == pytest.approx(coef[0], rel=1e-9)
    assert b.log_norm == pytest.approx(coef[1], rel=1e-9)
    chi2_red = b.chi2 / b.dof
    assert b.k_err == pytest.approx(np.sqrt(cov[0, 0] * max(chi2_red, 1.0)), rel=1e-9)


def _slow_restricted_deviance(s, x, y, sy):
    # Textbook REML: ln det V + ln det(Xᵀ V⁻¹ X) + rᵀ V⁻¹ r at the GLS estimate
    # (Patterson & Thompson 1971, Biometrika 58, 545), with explicit matrices.
    v = np.diag(sy ** 2 + s ** 2)
    vi = np.linalg.inv(v)
    xm = np.column_stack([np.ones_like(x), x])
    a = xm.T @ vi @ xm
    beta = np.linalg.solve(a, xm.T @ vi @ y)
    r = y - xm @ beta
    return np.linalg.slogdet(v)[1] + np.linalg.slogdet(a)[1] + r @ vi @ r


def test_restricted_deviance_matches_matrix_oracle():
    rng = np.random.default_rng(3)
    x = np.linspace(0.0, 0.2, 9)
    sy = rng.uniform(0.005, 0.02, 9)
    y = 2.0 - 3.0 * x + rng.normal(0.0, 0.03, 9)
    grid = np.array([0.0, 0.01, 0.03, 0.1])
    fast = restricted_deviance(grid, x, y, sy)[0]
    slow = [_slow_restricted_deviance(s, x, y, sy) for s in grid]
    np.testing.assert_allclose(fast, slow, rtol=1e-10)
    # And the fitted line sits at the oracle's REML maximum.
    best = minimize_scalar(lambda s: _slow_restricted_deviance(s, x, y, sy),
                           bounds=(0.0, 0.3), method="bounded", options={"xatol": 1e-8}).x
    fit = fit_line_scatter(x, y, sy)
    w = 1 / (sy ** 2 + best ** 2)
    ref = np.polyfit(x, y, 1, w=np.sqrt(w))
    assert fit.slope == pytest.approx(ref[0], abs=2e-3 * abs(ref[0]))


def test_index_recovered_within_stated_error_over_seeds():
    pulls = []
    for seed in range(20):
        sim = simulate_activity(seed=seed)
        trend = fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
                                   perihelion_time=sim.perihelion_time)
        for b in trend.branches:
            pulls.append((b.k - sim.truth[f"k_{b.name}"]) / b.k_err)
    pulls = np.abs(np.array(pulls))
    # 40 branch fits: none beyond 4σ, and the fraction within 1σ near the normal 68 %
    # (binomial 2.5σ band for 40 draws, common practice).
    assert pulls.max() < 4.0
    assert 0.48 <= np.mean(pulls < 1.0) <= 0.88
    assert np.mean(pulls < 2.0) >= 0.85


def test_scatter_recovered():
    sims = [simulate_activity(seed=s, night_offsets=np.arange(-60.0, 61.0, 1.5) + 0.2)
            for s in range(3)]
    for sim in sims:
        trend = fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
                                   perihelion_time=sim.perihelion_time)
        for b in trend.branches:
            # True night-to-night scatter 0.03 dex (generator setting); 40 nights per branch.
            assert b.scatter_dex == pytest.approx(0.03, abs=0.012)


def test_aperture_selection():
    sim = simulate_activity(seed=2, apertures_km=(5e3, 1e4, 2e4))
    trend = fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err, rho=sim.rho,
                               perihelion_time=sim.perihelion_time)
    # Equal counts per aperture: the 10 000 km aperture is chosen (common practice for Afρ).
    assert trend.rho == 1e4 * u.km
    trend5 = fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err, rho=sim.rho,
                                aperture=5000 * u.km, perihelion_time=sim.perihelion_time)
    assert trend5.rho == 5e3 * u.km
    assert sum(b.n_frames for b in trend5.branches) == len(sim.time) // 3
    with pytest.raises(ValueError, match="is not among the measured apertures"):
        fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err, rho=sim.rho,
                           aperture=7000 * u.km, perihelion_time=sim.perihelion_time)


def test_prediction_and_tables(tmp_path):
    t, rh, a, ae = _exact_campaign()
    trend = fit_activity_trend(t, rh, a, ae, perihelion_time=T_PERI)
    pred = trend.predict(rh, t)
    np.testing.assert_allclose(pred.to_value(u.cm), a.to_value(u.cm), rtol=1e-6)
    table = trend.to_table()
    assert isinstance(table, QTable)
    assert table["branch"].tolist() == ["pre", "post"]
    assert table["r_h_min"].unit == u.au
    table.write(tmp_path / "trend.ecsv")
    d = trend.to_dict()
    assert d["branches"][1]["branch"] == "post"
    assert trend.nights["afrho"].unit == u.cm
    assert len(trend.nights) == len(t)


def test_one_sided_campaign_has_one_branch():
    t, rh, a, ae = _exact_campaign()
    pre = t.mjd < 61400.0
    trend = fit_activity_trend(t[pre], rh[pre], a[pre], ae[pre], perihelion_time=T_PERI)
    assert [b.name for b in trend.branches] == ["pre"]
    assert np.isnan(trend.predict(1.5 * u.au, Time(61410.0, format="mjd")).value).all()


def test_too_few_nights_warns_and_drops_branch():
    t, rh, a, ae = _exact_campaign()
    keep = (t.mjd < 61400.0) | (t.mjd < 61406.0)
    with pytest.warns(PoorResultWarning, match="post-perihelion branch has 2 night"):
        trend = fit_activity_trend(t[keep], rh[keep], a[keep], ae[keep], perihelion_time=T_PERI)
    assert trend.branch("post") is None


def test_nonpositive_afrho_left_out_with_warning():
    t, rh, a, ae = _exact_campaign()
    a = a.copy()
    a[3] = -5 * u.cm
    with pytest.warns(PoorResultWarning, match="1 of 17 measurements left out"):
        trend = fit_activity_trend(t, rh, a, ae, perihelion_time=T_PERI)
    assert trend.branch("pre").n_nights == 7


@pytest.mark.parametrize(
    ("kwargs", "error", "match"),
    [
        pytest.param({"time": np.arange(3.0)}, TypeError, "'time' must be an astropy Time",
                     id="time-not-Time"),
        pytest.param({"afrho": np.ones(17)}, TypeError, "'afrho' must be an astropy Quantity",
                     id="afrho-no-unit"),
        pytest.param({"r_h": np.ones(17) * u.s}, ValueError,
                     "'r_h' must have units convertible to AU", id="r_h-wrong-unit"),
        pytest.param({"afrho_err": np.ones(5) * u.cm}, ValueError, "'afrho_err' has shape (5,)",
                     id="length-mismatch"),
        pytest.param({"method": "magic"}, ValueError, "unknown trend fit method 'magic'",
                     id="unknown-method"),
        pytest.param({"perihelion_time": 61400.0}, TypeError,
                     "'perihelion_time' must be an astropy Time", id="perihelion-not-Time"),
    ],
)
def test_bad_input(kwargs, error, match):
    t, rh, a, ae = _exact_campaign()
    args = {"time": t, "r_h": rh, "afrho": a, "afrho_err": ae, "perihelion_time": T_PERI}
    args.update(kwargs)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(error, match=re.escape(match)):
            fit_activity_trend(args.pop("time"), args.pop("r_h"), args.pop("afrho"),
                               args.pop("afrho_err"), **args)
