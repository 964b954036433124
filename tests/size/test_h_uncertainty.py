"""H errors that hold: the unknown rotation, the phase coefficient, and the limit flag.

Truth: the project's synthetic campaign generator (photpipe/rotation/synthetic.py), whose mean
flux over the rotation and phase coefficient are known exactly; figures measured when written.
"""

import warnings

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.rotation import reduce_lightcurve, synthetic_lightcurve
from photpipe.size import (
    CALIBRATION_ERR_MAG,
    AbsoluteMagnitude,
    assess_nucleus,
    fit_phase_coefficient,
    h_method_for_rotation,
    mean_absolute_magnitude,
    phase_coefficient_assumed,
    size_estimate,
)

ONE_SITE = {"kettle_rock": -111.4}


def _true_h(truth):
    """Magnitude of the rotation-mean flux of the synthetic nucleus."""
    epochs = truth.t0_mjd + np.arange(4000) / 4000 * truth.period.to_value(u.day)
    return truth.absolute_mag - 2.5 * np.log10(np.mean(10 ** (-0.4 * truth.signal(epochs))))


def _robust_sigma(z):
    return 1.4826 * np.median(np.abs(z - np.median(z)))


@pytest.mark.parametrize("kw, periods, rsig, within2", [
    # seeds 0-99, measured with the period-averaged mean: one night (periods 4-14 h) robust σ
    # 0.49, 100 % within 2σ: conservative, since one night cannot exclude the slow periods of
    # the 2-60 h range, which the error must cover; one night of a slow rotator (14-60 h)
    # 0.38 / 100 % (the night-block error it replaced: 3.07 / 52 %, a wrong H with a small
    # error); eight nights at two sites 1.10 / 85 %, median +0.60 (a +0.001-mag bias the
    # known-period harmonic mean shares, +0.38; unmodelled harmonics of the flux leak into
    # the constant under uneven sampling).
    pytest.param({"n_nights": 1, "sites": ONE_SITE, "cloud_fraction": 0.0}, (4, 14),
                 (0.3, 0.8), 0.95, id="one-night"),
    pytest.param({"n_nights": 1, "sites": ONE_SITE, "cloud_fraction": 0.0}, (14, 60),
                 (0.25, 0.8), 0.95, id="one-night-slow-rotator"),
    pytest.param({"n_nights": 8}, (4, 14), (0.8, 1.25), 0.8, id="eight-nights"),
])
def test_h_without_rotation_model_covers_the_rotational_sampling(kw, periods, rsig, within2):
    z = []
    for seed in range(100):
        rng = np.random.default_rng(seed)
        table, truth = synthetic_lightcurve(period=rng.uniform(*periods) * u.h, rng=rng, **kw)
        lc = reduce_lightcurve(table)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", PoorResultWarning)
            h = mean_absolute_magnitude(lc.mag, lc.mag_err, method="rotation-unknown",
                                        times=lc.epoch_mjd * u.day)
        z.append((h.H - _true_h(truth)) / h.H_err)
    z = np.array(z)
    assert rsig[0] < _robust_sigma(z) < rsig[1]  # errors cover, never too small
    assert np.mean(np.abs(z) < 2) >= within2


def test_h_method_follows_the_rotation_status():
    assert h_method_for_rotation({"status": "ambiguous", "period_h": 2.78})[0] == \
        "rotation-unknown"
    assert h_method_for_rotation({"status": "none", "period_h": 5.0})[0] == "rotation-unknown"
    method, period = h_method_for_rotation({"period_h": 7.3})  # before statuses existed
    assert method == "harmonic" and period == 7.3 * u.h


def test_phase_coefficient_range_in_h_error():
    # ±0.01 mag/deg at 26° is ±0.26 mag in H. A uniform 0.02-0.06 range at 26° spreads H
    # uniformly over 1.04 mag, whose central 68.27 % spans 0.6827 x 1.04 mag (exact for a
    # uniform distribution); H_err_total is half that, the small normal H error aside
    pc = phase_coefficient_assumed(0.035, 26.0)
    est = size_estimate(15.0, 0.02, albedo=0.04, n_samples=200_000, rng=1, phase=pc)
    assert est.H_err_total == pytest.approx(0.6827 * 1.04 / 2, rel=0.03)
    # the nominal 0.035 is below the range's middle: the median H moves by (0.035 - 0.04) 26°
    assert est.H_median == pytest.approx(15.0 - 0.005 * 26, abs=0.01)
    assert size_estimate(15.0, 0.02, n_samples=1000, rng=1).H_err_total == pytest.approx(
        0.02, rel=0.1)


@pytest.mark.slow
def test_h_coverage_with_the_phase_coefficient_range():
    # True β drawn uniformly in 0.02-0.06 mag/deg, magnitudes reduced with the nominal 0.035,
    # H from the Fourier mean at the known period: the 68 % interval of the H draws holds the
    # truth in 74 of seeds 0-99 (measured) with the phase coefficient drawn, in 1 without (the
    # H error then holds only the photometry; binomial(100, 0.68) lies in 59-77 at 95 %).
    with_range = without = 0
    for seed in range(100):
        rng = np.random.default_rng(seed)
        beta = rng.uniform(0.02, 0.06)
        table, truth = synthetic_lightcurve(phase_coefficient=beta * u.mag / u.deg,
                                            phase=(24.0, 28.0) * u.deg, n_nights=6, rng=rng)
        lc = reduce_lightcurve(table, phase_coefficient=0.035 * u.mag / u.deg)
        h = mean_absolute_magnitude(lc.mag, lc.mag_err, method="harmonic",
                                    times=lc.epoch_mjd * u.day, period=truth.period)
        pc = phase_coefficient_assumed(0.035, float(np.mean(lc.phase_deg)))
        for phase in (pc, None):
            est = size_estimate(h.H, h.H_err, n_samples=4000, rng=seed, phase=phase)
            hit = abs(est.H_median - _true_h(truth)) < est.H_err_total
            with_range += hit and phase is not None
            without += hit and phase is None
    assert 59 <= with_range <= 80
    assert without < 20


def test_phase_coefficient_fitted_when_the_span_allows():
    # eight nights from 5° to 25° phase, β = 0.05: the fit recovers it within its error; a
    # campaign spanning 4° keeps the assumed range
    rng = np.random.default_rng(5)
    table, _ = synthetic_lightcurve(phase_coefficient=0.05 * u.mag / u.deg, n_nights=8,
                                    phase=(5.0, 25.0) * u.deg, rng=rng)
    lc = reduce_lightcurve(table, phase_coefficient=0.0 * u.mag / u.deg)
    nights = np.floor(lc.epoch_mjd).astype(int)
    pc = fit_phase_coefficient(lc.mag, lc.mag_err, lc.phase_deg, nights, nominal=0.035)
    assert pc.fitted and abs(pc.value - 0.05) < 3 * pc.error
    assert "fitted" in pc.describe()
    narrow = fit_phase_coefficient(lc.mag, lc.mag_err, np.full(lc.n_points, 20.0), nights,
                                   nominal=0.035)
    assert not narrow.fitted and (narrow.lo, narrow.hi) == (0.02, 0.06)


def test_large_h_error_is_flagged_and_said():
    h = AbsoluteMagnitude(H=15.0, H_err=0.05, n_points=40, method="rotation-unknown")
    with pytest.warns(PoorResultWarning, match="exceeds the 0.3 mag limit"):
        res = assess_nucleus(h, band="V", phase=phase_coefficient_assumed(0.035, 40.0),
                             n_samples=5000, rng=2)
    d = res.to_dict()
    assert d["status"] == "uncertain" and "h_error_large" in d["flags"]
    assert "phase coefficient" in d["reason"] and "RADIUS UNCERTAIN" in res.summary()
    assert d["phase_coefficient"]["phase_coefficient_range"] == [0.02, 0.06]
    small = assess_nucleus(h, band="V", phase=phase_coefficient_assumed(0.035, 5.0),
                           n_samples=5000, rng=2)
    assert small.status == "radius" and small.reason == ""


def test_shared_error_adds_in_quadrature():
    # an error every point shares is not reduced by averaging (common practice)
    mag, err = [15.1, 14.9, 15.1, 14.9], [0.02] * 4
    alone = mean_absolute_magnitude(mag, err)
    h = mean_absolute_magnitude(mag, err, shared_err=0.02 * u.mag)
    assert h.H == alone.H and h.H_err_statistical == pytest.approx(alone.H_err, rel=1e-12)
    assert h.H_err == pytest.approx(np.hypot(alone.H_err, 0.02), rel=1e-12)
    assert h.H_err_shared == 0.02
    with pytest.raises(ValueError, match="'shared_err' must be zero or positive"):
        mean_absolute_magnitude(mag, err, shared_err=-0.01)


def _bare_nucleus_campaign(seed):
    """Six nights, 1 % frame errors, a calibration error of 0.02 mag shared by all frames."""
    rng = np.random.default_rng(seed)
    table, truth = synthetic_lightcurve(period=rng.uniform(4, 14) * u.h, rng=rng, n_nights=6,
                                        sites=ONE_SITE, cloud_fraction=0.0, noise=0.01 * u.mag,
                                        amplitude=0.3 * u.mag)
    table["nucleus_mag"] += rng.normal(0.0, CALIBRATION_ERR_MAG)
    return reduce_lightcurve(table), truth


def test_h_error_holds_the_calibration_error_every_frame_shares():
    # Measured when written (seeds 0-149, known period): pulls robust σ 1.05 with the shared
    # error and 13.4 without it (~90 frames of 1 % give H to 0.0015 mag, but the zero point
    # all of them share is off by 0.02 mag). The recovery campaigns of the bare-nucleus case
    # showed it as a pull σ of 2.0 (benchmarks/recovery.py). (Seed 198's 12.0 h period, two
    # cycles a day, leaves the 4-harmonic fit degenerate: the pipeline calls such a period
    # ambiguous, its rotation unobserved, and never fits it.)
    with_shared, without = [], []
    for seed in range(150):
        lc, truth = _bare_nucleus_campaign(seed)
        for out, shared in ((with_shared, CALIBRATION_ERR_MAG), (without, 0.0)):
            h = mean_absolute_magnitude(lc.mag, lc.mag_err, method="harmonic",
                                        times=lc.epoch_mjd * u.day, period=truth.period,
                                        shared_err=shared)
            out.append((h.H - _true_h(truth)) / h.H_err)
    assert 0.8 < _robust_sigma(np.array(with_shared)) < 1.25
    assert _robust_sigma(np.array(without)) > 3
