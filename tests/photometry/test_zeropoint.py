import numpy as np
import pytest

from photpipe.photometry import fit_zero_point


def test_recovers_zero_point_with_outliers():
    rng = np.random.default_rng(21)
    n = 60
    inst = rng.uniform(-14, -8, n)
    err = np.full(n, 0.02)
    cat = inst + 24.8 + rng.normal(0, 0.02, n)
    cat[:5] += np.array([0.5, -0.8, 1.2, 0.4, -0.6])  # variables, blends
    zp, used, res = fit_zero_point(inst, err, cat, np.zeros(n), np.zeros(n))
    assert not used[:5].any()
    assert zp.n_stars == 55 and zp.n_rejected == 5
    # the weighted mean of 55 stars of σ = 0.022 (with the floor) has σ ≈ 0.003
    assert zp.zp == pytest.approx(24.8, abs=0.01)
    assert zp.zp_err == pytest.approx(np.hypot(0.02, 0.01) / np.sqrt(55), rel=0.3)


def test_colour_term():
    rng = np.random.default_rng(22)
    n = 80
    inst = rng.uniform(-14, -8, n)
    colour = rng.uniform(0.2, 1.4, n)
    cat = inst + 25.1 + 0.08 * colour + rng.normal(0, 0.01, n)
    zp, used, _ = fit_zero_point(inst, np.full(n, 0.01), cat, np.zeros(n), colour,
                                 fit_colour_term=True)
    assert zp.colour_term == pytest.approx(0.08, abs=0.01)
    assert zp.zp == pytest.approx(25.1, abs=0.01)
    assert np.isfinite(zp.colour_term_err)


def test_single_star():
    zp, used, _ = fit_zero_point([-10.0], [0.01], [15.0], [0.02], [0.5])
    assert zp.zp == pytest.approx(25.0) and zp.n_stars == 1


def test_no_finite_star():
    with pytest.raises(ValueError, match="no star with finite instrumental and catalogue"):
        fit_zero_point([np.nan], [0.01], [15.0], [0.0], [0.0])


def test_to_dict():
    zp, _, _ = fit_zero_point([-10.0, -11.0], [0.01, 0.01], [15.0, 14.0], [0, 0], [0, 0],
                              band="R")
    assert zp.to_dict()["band"] == "R"


def test_aperture_correction_error_adds_in_quadrature():
    # the correction scales every star alike, so its error does not average down:
    # σ_zp² = σ_fit² + (2.5 / ln 10 · σ_c / c)² (propagation of errors, common practice)
    inst = np.array([-10.0, -11.0, -12.0, -9.0])
    args = (inst, np.full(4, 0.01), inst + 25.0, np.zeros(4), np.zeros(4))
    plain, _, _ = fit_zero_point(*args)
    with_ap, _, _ = fit_zero_point(*args, aperture_correction_err=0.02)
    assert with_ap.zp == plain.zp
    assert with_ap.zp_err == pytest.approx(np.hypot(plain.zp_err, 2.5 / np.log(10) * 0.02),
                                           rel=1e-12)
    assert with_ap.aperture_correction_err == 0.02
