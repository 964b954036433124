import json
import re

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.size import (
    AbsoluteMagnitude,
    SizeResult,
    assess_nucleus,
    diameter_from_H,
    momentum_mass_bound,
    radius_from_mass,
)

G_CM3 = u.g / u.cm**3
H = AbsoluteMagnitude(H=14.0, H_err=0.03, n_points=60, method="harmonic")
MOMENTUM = {"mass_loss": 150 * u.kg / u.s, "outflow_speed": 440 * u.m / u.s,
            "accel_limit": 15 * u.m / u.day**2}
REQUIRED = ["H_mag", "H_err_mag", "band", "albedo", "radius_km", "radius_lo_km", "radius_hi_km",
            "mass_kg_lo", "mass_kg_hi", "mass_bound_kg", "radius_bound_km", "active_fraction"]


@pytest.fixture
def result():
    return assess_nucleus(H, band="R", albedo=0.04, albedo_range=(0.02, 0.06),
                          activity_r_h=1.3 * u.au, n_samples=20_000, rng=1, **MOMENTUM)


def test_contract_keys_and_json(result):
    d = result.to_dict()
    for key in REQUIRED:  # DEVELOPERS.md size.json contract
        assert key in d
    json.dumps(d, allow_nan=False)
    assert isinstance(result, SizeResult)


def test_numbers_follow_the_parts(result):
    # radius at the nominal albedo from D = C / sqrt(p) 10^(-H/5) (Pravec & Harris 2007)
    assert result.radius_at_albedo_km == pytest.approx(
        0.5 * diameter_from_H(14.0, 0.04, band="R").to_value(u.km), rel=1e-12)
    assert result.radius_lo_km < result.radius_km < result.radius_hi_km
    # mass range: small radius x 0.3 g/cm^3 to large radius x 1.0 g/cm^3
    assert result.mass_kg_lo == pytest.approx(
        4 / 3 * np.pi * (result.radius_lo_km * 1e3) ** 3 * 300, rel=1e-12)
    assert result.mass_kg_hi == pytest.approx(
        4 / 3 * np.pi * (result.radius_hi_km * 1e3) ** 3 * 1000, rel=1e-12)
    # issue 7 example: M >= 3.28e13 kg; bound radius at the highest density (1 g/cm^3)
    m = momentum_mass_bound(MOMENTUM["mass_loss"], MOMENTUM["outflow_speed"],
                            MOMENTUM["accel_limit"])
    assert result.mass_bound_kg == pytest.approx(m.to_value(u.kg))
    assert result.radius_bound_km == pytest.approx(
        radius_from_mass(m, 1.0 * G_CM3).to_value(u.km))
    assert result.bound_consistent and 0 < result.active_fraction < 1


def test_summary_states_every_assumption(result):
    text = result.summary()
    assert "the sizes rest on the assumed albedo and density" in text
    assert "Assumptions:" in text
    for a in result.assumptions:
        assert a in text
    joined = " ".join(result.assumptions)
    for word in ["albedo 0.04", "density 0.3-1", "m_sun(R) = -27.15", "eta = 1", "H2O 0.7"]:
        assert word in joined


def test_without_mass_loss():
    res = assess_nucleus(H, band="V", n_samples=1000, rng=2)
    assert res.mass_bound_kg is None and res.active_fraction is None
    assert "not formed" in res.summary()
    assert res.albedo_lo == res.albedo_hi == 0.04


def test_mass_loss_alone_gives_active_fraction_only():
    res = assess_nucleus(H, band="V", mass_loss=100 * u.kg / u.s, activity_r_h=2 * u.au,
                         n_samples=1000, rng=2)
    assert res.mass_bound_kg is None and res.active_fraction > 0


def test_bound_violated_warns_and_flags():
    with pytest.warns(PoorResultWarning, match="below the momentum-bound radius"):
        res = assess_nucleus(H, band="R", n_samples=1000, rng=3, activity_r_h=1.3 * u.au,
                             mass_loss=150 * u.kg / u.s, outflow_speed=440 * u.m / u.s,
                             accel_limit=0.01 * u.m / u.day**2)
    assert "below_momentum_bound" in res.flags and res.bound_consistent is False
    assert res.albedo_max < 0.04


@pytest.mark.parametrize("kwargs, error, match", [
    pytest.param({"albedo": 0.0}, ValueError, "'albedo' must be a geometric albedo",
                 id="albedo-zero"),
    pytest.param({"albedo": -0.1}, ValueError, "'albedo' must be a geometric albedo",
                 id="albedo-negative"),
    pytest.param({"density_range": [0.0, 1.0] * G_CM3}, ValueError,
                 "'density_range' must be one positive value", id="density-zero"),
    pytest.param({"density_range": [-0.5, 1.0] * G_CM3}, ValueError,
                 "'density_range' must be one positive value", id="density-negative"),
    pytest.param(dict(MOMENTUM, accel_limit=0 * u.m / u.day**2, activity_r_h=1 * u.au),
                 ValueError, "'a_limit' must be finite and positive", id="accel-zero"),
    pytest.param(dict(MOMENTUM, accel_limit=-3 * u.m / u.day**2, activity_r_h=1 * u.au),
                 ValueError, "'a_limit' must be finite and positive", id="accel-negative"),
    pytest.param({"mass_loss": 1 * u.kg / u.s, "accel_limit": 1 * u.m / u.s**2}, ValueError,
                 "missing ['outflow_speed']", id="partial-momentum"),
    pytest.param({"mass_loss": 1 * u.kg / u.s}, ValueError, "needs 'activity_r_h'",
                 id="no-activity-rh"),
])
def test_bad_input(kwargs, error, match):
    with pytest.raises(error, match=re.escape(match)):
        assess_nucleus(H, band="V", n_samples=500, rng=1, **kwargs)


def test_h_without_lightcurve():
    with pytest.raises(TypeError, match="must be an AbsoluteMagnitude from a lightcurve"):
        assess_nucleus(14.0, band="V")
    empty = AbsoluteMagnitude(H=14.0, H_err=0.1, n_points=0, method="flux-mean")
    with pytest.raises(ValueError, match="H with no lightcurve behind it"):
        assess_nucleus(empty, band="V")


def test_truth_recovery_from_demo_scenario_lightcurve():
    # synthetic truth from the project's generator (photpipe.scenario.demo): H_R = 14.0, a
    # double-peaked 0.30 mag lightcurve at 5.4 h, linear phase law 0.035 mag/deg
    from astropy.time import Time
    from scipy.special import i0

    from photpipe.scenario.demo import DEMO_TRUTH, demo_nucleus_mag
    from photpipe.size import mean_absolute_magnitude, reduce_magnitude

    rng = np.random.default_rng(2026)
    mjd = DEMO_TRUTH["rotation_epoch_mjd"] + np.sort(rng.uniform(0, 2.0, 90))
    r_h = (1.31 + 0.01 * (mjd - mjd[0])) * u.au
    delta = (0.62 + 0.015 * (mjd - mjd[0])) * u.au
    phase = (48.0 - 0.4 * (mjd - mjd[0])) * u.deg
    m = demo_nucleus_mag(Time(mjd, format="mjd"), r_h, delta, phase).to_value(u.mag)
    m = m + rng.normal(0, 0.02, m.size)
    reduced = reduce_magnitude(m, r_h, delta, phase,
                               phase_coefficient=DEMO_TRUTH["nucleus_phase_coeff_mag_deg"]
                               * u.mag / u.deg)
    h = mean_absolute_magnitude(reduced, np.full(m.size, 0.02), method="harmonic",
                                times=mjd * u.day, period=DEMO_TRUTH["rotation_period_h"] * u.h)
    # rotation mean in flux of m = H + (A/2) cos 2φ: H - 2.5 log10 I0(0.4 ln10 A/2) (exact)
    truth = DEMO_TRUTH["nucleus_H_mag"] - 2.5 * np.log10(
        i0(0.4 * np.log(10) * DEMO_TRUTH["rotation_amplitude_mag"] / 2))
    assert abs(h.H - truth) < 3 * h.H_err and h.H_err < 0.01
    res = assess_nucleus(h, band=DEMO_TRUTH["band"], m_sun=DEMO_TRUTH["m_sun"], albedo=0.04,
                         n_samples=20_000, rng=4)
    r_true = 0.5 * diameter_from_H(truth, 0.04, m_sun=DEMO_TRUTH["m_sun"]).to_value(u.km)
    assert res.radius_km == pytest.approx(r_true, rel=0.01)
    half_width = 0.5 * (res.radius_hi_km - res.radius_lo_km)  # about 1 sigma
    assert abs(res.radius_km - r_true) < 3 * half_width
