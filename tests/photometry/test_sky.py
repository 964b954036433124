import numpy as np
import pytest

from photpipe.photometry import SKY_METHODS, estimate_sky


def _annulus(rng, inner, outer, sky, k, noise):
    yy, xx = np.mgrid[-outer:outer + 1, -outer:outer + 1]
    rho = np.hypot(xx, yy)
    sel = (rho >= inner) & (rho <= outer)
    values = sky + k / rho[sel] + rng.normal(0, noise, sel.sum())
    return values, rho[sel]


def test_coma_fit_removes_coma_light():
    rng = np.random.default_rng(31)
    values, rho = _annulus(rng, 80, 160, 300.0, 4e4, 20.0)
    fit = estimate_sky(values, rho, method="coma-fit")
    assert fit.level == pytest.approx(300.0, abs=4 * fit.error)
    assert fit.coma_k == pytest.approx(4e4, rel=0.1)


def test_median_is_biased_by_the_coma():
    # a plain median sees roughly K/ρ at the annulus (Jewitt & Meech 1987, AJ 93, 1542: Σ = K/ρ);
    # the area-weighted median radius of an 80-160 annulus is sqrt((80² + 160²)/2) ≈ 126.5
    rng = np.random.default_rng(32)
    values, rho = _annulus(rng, 80, 160, 300.0, 4e4, 5.0)
    med = estimate_sky(values, rho, method="median")
    assert med.level - 300.0 == pytest.approx(4e4 / 126.5, rel=0.05)


def test_median_without_coma():
    rng = np.random.default_rng(33)
    values, rho = _annulus(rng, 50, 80, 120.0, 0.0, 10.0)
    med = estimate_sky(values, rho, method="median")
    # error of a median: sqrt(π/2) σ/√n (common practice)
    assert med.error == pytest.approx(np.sqrt(np.pi / 2) * 10 / np.sqrt(values.size), rel=0.05)
    assert med.level == pytest.approx(120.0, abs=4 * med.error)


def test_unknown_method():
    with pytest.raises(ValueError, match="unknown sky method 'mode'"):
        estimate_sky(np.ones(3), np.ones(3), method="mode")


def test_methods():
    assert set(SKY_METHODS) == {"coma-fit", "median"}
