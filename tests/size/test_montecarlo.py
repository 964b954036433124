import numpy as np
import pytest
from astropy import units as u
from scipy import stats

from photpipe.size import diameter_from_H, size_estimate

# Quantiles commute with monotonic maps (exact): D(H, p) is decreasing in H and in p, so the
# q-quantile of D is D at the (1 - q)-quantile of the sampled input when only one input varies.
Q_LO, Q_HI = 0.5 * (1 - 0.6827), 1 - 0.5 * (1 - 0.6827)


def test_fixed_inputs_give_the_closed_form():
    est = size_estimate(15.0, 0.0, albedo=0.04, band="V", n_samples=500, rng=1)
    d = diameter_from_H(15.0, 0.04, band="V")
    assert est.diameter == d and est.diameter_lo == d and est.diameter_hi == d


def test_h_error_only():
    est = size_estimate(16.0, 0.1, albedo=0.04, band="R", n_samples=100_000, rng=7)
    z = stats.norm.ppf(Q_HI)  # scipy.stats reference for the normal quantile
    assert est.diameter.value == pytest.approx(diameter_from_H(16.0, 0.04, band="R").value,
                                               rel=3e-3)
    assert est.diameter_lo.value == pytest.approx(
        diameter_from_H(16.0 + 0.1 * z, 0.04, band="R").value, rel=3e-3)
    assert est.diameter_hi.value == pytest.approx(
        diameter_from_H(16.0 - 0.1 * z, 0.04, band="R").value, rel=3e-3)


@pytest.mark.parametrize("prior, p_quantile", [
    pytest.param("uniform", lambda q: 0.02 + q * 0.04, id="uniform"),
    pytest.param("log-uniform", lambda q: 0.02 * 3.0**q, id="log-uniform"),
])
def test_albedo_range_only(prior, p_quantile):
    est = size_estimate(15.0, 0.0, albedo=(0.02, 0.06), albedo_prior=prior, band="V",
                        n_samples=100_000, rng=11)
    for got, q in [(est.diameter, 0.5), (est.diameter_lo, Q_HI), (est.diameter_hi, Q_LO)]:
        assert got.value == pytest.approx(diameter_from_H(15.0, p_quantile(q)).value, rel=3e-3)
    assert est.to_dict()["albedo_prior"] == prior
    assert est.radius == 0.5 * est.diameter


def test_same_seed_same_answer_and_interval_holds_median():
    a = size_estimate(14.0, 0.2, albedo=(0.02, 0.06), n_samples=2000, rng=5)
    b = size_estimate(14.0, 0.2, albedo=(0.02, 0.06), n_samples=2000, rng=5)
    assert a == b
    assert a.diameter_lo < a.diameter < a.diameter_hi
    assert a.diameter_samples.unit == u.km and a.diameter_samples.size == 2000


@pytest.mark.parametrize("kwargs, match", [
    pytest.param({"H_err": -0.1}, "'H_err' must be >= 0", id="negative-H-err"),
    pytest.param({"albedo": (0.06, 0.02)}, "range must be (lo, hi) with lo <= hi", id="reversed"),
    pytest.param({"albedo": (0.0, 0.06)}, "must be a geometric albedo in (0, 1]", id="zero-lo"),
    pytest.param({"albedo": (0.02, 0.04, 0.06)}, "one value or a (lo, hi) pair", id="triple"),
    pytest.param({"albedo_prior": "gaussian"}, "unknown albedo_prior 'gaussian'", id="prior"),
    pytest.param({"n_samples": 10}, "'n_samples' must be at least 100", id="few-samples"),
    pytest.param({"interval": 1.0}, "'interval' must be in (0, 1)", id="interval"),
])
def test_bad_input(kwargs, match):
    args = {"H": 15.0, "H_err": 0.1}
    args.update({k: kwargs.pop(k) for k in list(kwargs) if k in args})
    with pytest.raises(ValueError, match=__import__("re").escape(match)):
        size_estimate(args["H"], args["H_err"], **kwargs)


def test_samples_match_closed_form_elementwise():
    # an obviously correct oracle: the closed form evaluated on the same draws
    rng = np.random.default_rng(3)
    est = size_estimate(15.5, 0.05, albedo=(0.03, 0.05), n_samples=1000, rng=3)
    h = rng.normal(15.5, 0.05, 1000)
    p = rng.uniform(0.03, 0.05, 1000)
    assert np.allclose(est.diameter_samples.value, diameter_from_H(h, p).value, rtol=1e-12)
