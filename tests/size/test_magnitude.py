import re

import numpy as np
import pytest
from astropy import units as u
from scipy.special import i0

from photpipe._warnings import PoorResultWarning
from photpipe.size import mean_absolute_magnitude, reduce_magnitude

# Truth of the synthetic nucleus (same form as the demo scenario's lightcurve): a double-peaked
# lightcurve m = H0 + (A/2) cos(2 φ). Its rotation mean in flux is exactly
# H0 - 2.5 log10(I0(0.4 ln10 A/2)) (mean of exp(x cos θ) over θ is the modified Bessel I0;
# scipy.special.i0 is the reference).
H0, AMP, PERIOD_H = 14.0, 0.30, 5.4
H_FLUX_MEAN = H0 - 2.5 * np.log10(i0(0.4 * np.log(10) * AMP / 2))


def lightcurve(t_days, rng, noise=0.0):
    phi = 2 * np.pi * t_days * 24 / PERIOD_H
    m = H0 + 0.5 * AMP * np.cos(2 * phi)
    return m + rng.normal(0, noise, t_days.size) if noise else m


def test_reduce_exact():
    # m(1,1,0) = m - 5 log10(r_h Δ) - β α (Russell 1916 reduction; linear phase law)
    m = reduce_magnitude([20.0, 21.0], [2.0, 3.0] * u.au, [1.0, 2.5] * u.au, [10, 20] * u.deg,
                         phase_coefficient=0.04 * u.mag / u.deg)
    assert np.allclose(m.to_value(u.mag), [20 - 5 * np.log10(2) - 0.4,
                                           21 - 5 * np.log10(7.5) - 0.8], atol=1e-13)


def test_flux_mean_of_evenly_sampled_rotation_is_exact():
    t = np.arange(400) / 400 * PERIOD_H / 24  # one full rotation, evenly
    h = mean_absolute_magnitude(lightcurve(t, None), np.full(t.size, 0.01))
    assert h.H == pytest.approx(H_FLUX_MEAN, abs=1e-9)
    assert h.n_points == 400 and h.method == "flux-mean" and h.flags == ()


def test_harmonic_removes_uneven_sampling_bias():
    rng = np.random.default_rng(42)
    # 300 points crowded near one lightcurve minimum, 40 spread over the rest
    phase = np.concatenate([rng.uniform(0.20, 0.30, 300), rng.uniform(0, 1, 40)])
    t = (phase + rng.integers(0, 20, phase.size)) * PERIOD_H / 24
    m = lightcurve(t, rng, noise=0.02)
    err = np.full(t.size, 0.02)
    plain = mean_absolute_magnitude(m, err)
    fitted = mean_absolute_magnitude(m, err, method="harmonic", times=t * u.day,
                                     period=PERIOD_H * u.h)
    assert abs(fitted.H - H_FLUX_MEAN) < 3 * fitted.H_err
    assert abs(plain.H - H_FLUX_MEAN) > 0.05  # the bias the fit removes


def test_harmonic_errors_are_calibrated():
    # pulls (H - truth) / H_err over 100 noise draws: mean 0 and spread 1 within sampling error
    pulls = []
    for seed in range(100):
        rng = np.random.default_rng(seed)
        t = np.sort(rng.uniform(0, 3, 60))
        h = mean_absolute_magnitude(lightcurve(t, rng, noise=0.03), np.full(60, 0.03),
                                    method="harmonic", times=t * u.day, period=PERIOD_H * u.h)
        pulls.append((h.H - H_FLUX_MEAN) / h.H_err)
    assert abs(np.mean(pulls)) < 0.3 and 0.75 < np.std(pulls) < 1.25


def test_phase_binned_random_sampling():
    rng = np.random.default_rng(9)
    t = np.sort(rng.uniform(0, 5, 400))
    h = mean_absolute_magnitude(lightcurve(t, rng, noise=0.02), np.full(400, 0.02),
                                method="phase-binned", times=t * u.day, period=PERIOD_H * u.h,
                                n_bins=16)
    assert abs(h.H - H_FLUX_MEAN) < 3 * h.H_err + 0.005


def test_harmonic_few_points_lowers_order():
    t = np.array([0.0, 0.05, 0.11, 0.17, 0.2])
    with pytest.warns(PoorResultWarning, match="few_points_for_harmonics"):
        h = mean_absolute_magnitude(lightcurve(t, None), np.full(5, 0.02), method="harmonic",
                                    times=t * u.day, period=PERIOD_H * u.h)
    assert np.isfinite(h.H)


def test_truth_recovery_with_noise_within_error():
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(0, 4, 200))
    h = mean_absolute_magnitude(lightcurve(t, rng, noise=0.03), np.full(200, 0.03))
    assert abs(h.H - H_FLUX_MEAN) < 3 * h.H_err
    assert 0.005 < h.H_err < 0.03  # the rotation scatter, not only the 0.03/sqrt(200) noise


def test_nonfinite_rows_dropped():
    h = mean_absolute_magnitude([15.0, np.nan, 15.0, 15.0], [0.1, 0.1, np.nan, 0.1])
    assert h.n_points == 2


def test_no_lightcurve_behind_h():
    with pytest.raises(ValueError, match="H needs a lightcurve behind it"):
        mean_absolute_magnitude([], [])
    with pytest.raises(ValueError, match="H needs a lightcurve behind it"):
        mean_absolute_magnitude([np.nan, np.nan], [0.1, 0.1])


def test_single_point_and_sparse_coverage_warn():
    with pytest.warns(PoorResultWarning, match="single_point"):
        h = mean_absolute_magnitude([15.0], [0.05])
    assert h.H == pytest.approx(15.0) and h.H_err == pytest.approx(0.05)
    with pytest.warns(PoorResultWarning, match="sparse_rotation_coverage"):
        mean_absolute_magnitude([15.0, 15.1], [0.05, 0.05], method="phase-binned",
                                times=[0.0, 0.001] * u.day, period=5 * u.h, n_bins=8)


@pytest.mark.parametrize("kwargs, match", [
    pytest.param({"method": "median"}, "unknown method 'median'", id="method"),
    pytest.param({"method": "phase-binned"}, "needs both 'times' and 'period'", id="no-period"),
    pytest.param({"method": "harmonic", "times": [0, 1] * u.day}, "needs both 'times' and",
                 id="no-period-harmonic"),
])
def test_bad_options(kwargs, match):
    with pytest.raises(ValueError, match=re.escape(match)):
        mean_absolute_magnitude([15.0, 15.2], [0.05, 0.05], **kwargs)


def test_bad_errors():
    with pytest.raises(ValueError, match="differ in shape"):
        mean_absolute_magnitude([15.0, 15.2], [0.05])
    with pytest.raises(ValueError, match="'reduced_mag_err' must be >= 0"):
        mean_absolute_magnitude([15.0], [-0.05])
