"""The within-night outburst search: calibration, false alarms, recovery and amplitude pulls.

The synthetic nights (`photpipe.activity.synthetic_nights`) carry stated errors of 1.5-3 % plus
an unstated zero-point jitter and an Ornstein-Uhlenbeck wander (0-0.03 mag each, correlation
time 0.3-3 h) that the search must cope with; the truth is the generator's.
"""

import numpy as np
import pytest
from astropy import units as u
from astropy.time import Time

from photpipe.activity import find_night_outbursts, simulate_night
from photpipe.activity._night_scan import build_setup, null_p_value, scan

N_SIMS = 300


def _search(night, seed):
    return find_night_outbursts(night.time, night.afrho, night.afrho_err, n_sims=N_SIMS,
                                seed=seed)


def _robust_sigma(x):
    # 1.4826 × median absolute deviation: the normal σ (Rousseeuw & Croux 1993, JASA 88, 1273)
    x = np.asarray(x)
    return 1.4826 * np.median(np.abs(x - np.median(x)))


@pytest.mark.parametrize("seed", range(3))
def test_large_outburst_found_with_its_onset_bracket(seed):
    night = simulate_night(seed=seed, n_frames=24, outburst_mag=-0.5)
    res = _search(night, seed)
    assert len(res.outbursts) == 1
    row = res.outbursts[0]
    assert row["onset_after"] < night.onset < row["onset_before"]
    assert row["false_alarm"] < 1e-3
    assert row["delta_mag"].unit == u.mag and row["decay_time"].unit == u.h


def test_quiet_night_without_unstated_noise_is_quiet():
    night = simulate_night(seed=4, n_frames=20, white_mag=0.0, wander_mag=0.0)
    res = _search(night, 4)
    assert len(res.outbursts) == 0
    assert res.nights["searched"][0]
    d = res.to_dict()
    assert d["outbursts"] == [] and d["n_nights_searched"] == 1


def test_short_nights_are_not_searched_and_say_why():
    night = simulate_night(seed=1, n_frames=6)
    res = _search(night, 1)
    assert not res.nights["searched"][0]
    assert res.nights["reason"][0] == "6 frames, fewer than 8"


def test_nights_are_split_and_apertures_chosen():
    a = simulate_night(seed=1, n_frames=12)
    b = simulate_night(seed=2, n_frames=12, start_mjd=61423.85)
    time = Time(np.concatenate([a.time.mjd, b.time.mjd, a.time.mjd]), format="mjd")
    afrho = np.concatenate([a.afrho, b.afrho, 2 * a.afrho])
    err = np.concatenate([a.afrho_err, b.afrho_err, 2 * a.afrho_err])
    rho = np.r_[np.full(24, 1e4), np.full(12, 5e3)] * u.km
    res = find_night_outbursts(time, afrho, err, rho=rho, n_sims=100)
    assert res.nights["n_frames"].tolist() == [12, 12]


def test_bad_input_is_named():
    night = simulate_night(seed=0, n_frames=10)
    with pytest.raises(ValueError, match="'afrho_err' has shape"):
        find_night_outbursts(night.time, night.afrho, night.afrho_err[:5])
    with pytest.raises(TypeError, match="'time' must be an astropy Time"):
        find_night_outbursts(night.time.mjd, night.afrho, night.afrho_err)


def test_calibration_is_uniform_when_the_model_holds():
    # Data drawn from the null model itself (white noise with the stated errors): the
    # simulated p-value must be uniform, so about 10 % of nights fall below 0.1
    # (binomial σ for 200 nights: 2.1 %).
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(0.0, 5.0, 20))
    sigma = np.full(20, 0.02)
    setup = build_setup(t, sigma)
    y = rng.standard_normal((20, 200)) * 0.02 + 0.001 * t[:, None]
    res = scan(setup, y)
    ps = np.array([null_p_value(setup, res.lam[i], res.cell0[i], n_sims=200, rng=rng)[0]
                   for i in range(200)])
    assert 0.05 <= np.mean(ps < 0.1) <= 0.16


@pytest.mark.slow
def test_false_alarms_on_quiet_nights():
    # At most 1 false alarm per 100 quiet nights is the requirement; 200 nights with
    # realistic unstated noise must give at most 2.
    found = sum(len(_search(simulate_night(seed=1000 + s), s).outbursts) for s in range(200))
    assert found <= 2


@pytest.mark.slow
def test_recovery_and_amplitude_pulls():
    # 0.3 mag inside a night of 16-30 frames: recovered in at least 90 % of 40 nights, with
    # the onset inside the bracket, and (estimate - truth)/error with a robust σ near 1.
    hits, inside, pulls = 0, 0, []
    for s in range(40):
        night = simulate_night(seed=s, outburst_mag=-0.3)
        res = _search(night, s)
        if len(res.outbursts):
            row = res.outbursts[0]
            hits += 1
            inside += bool(row["onset_after"] < night.onset < row["onset_before"])
            pulls.append((row["delta_mag"].to_value(u.mag) - night.delta_mag)
                         / row["delta_mag_err"].to_value(u.mag))
    assert hits >= 36
    assert inside >= 0.9 * hits
    assert 0.8 <= _robust_sigma(pulls) <= 1.25
    assert abs(np.median(pulls)) < 0.4
