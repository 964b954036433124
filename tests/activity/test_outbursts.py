import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.activity.outbursts import analyse_activity, find_outbursts
from photpipe.activity.synthetic import simulate_activity
from photpipe.activity.trend import fit_activity_trend

# A campaign observed every third night, -44 .. +46 d from perihelion (31 nights).
DENSE = np.arange(-44.0, 47.0, 3.0)
OUTBURST_NIGHT = 20  # 16 d after perihelion
OUTBURST_MAG = -1.0


def _analyse(sim, **kw):
    return analyse_activity(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
                            perihelion_time=sim.perihelion_time, **kw)


@pytest.mark.parametrize("seed", range(8))
def test_injected_outburst_found_on_the_right_night(seed):
    sim = simulate_activity(seed=seed, night_offsets=DENSE, outburst_night=OUTBURST_NIGHT,
                            outburst_mag=OUTBURST_MAG)
    res = _analyse(sim)
    assert len(res.outbursts) == 1
    row = res.outbursts[0]
    frames = sim.time.mjd
    bright_first = frames[sim.night == OUTBURST_NIGHT].min()
    quiet_last = frames[sim.night == OUTBURST_NIGHT - 1].max()
    # The bracket is exactly (last frame of the quiet night, first frame of the bright night).
    assert row["onset_after"].mjd == pytest.approx(quiet_last, abs=1e-6)
    assert row["onset_before"].mjd == pytest.approx(bright_first, abs=1e-6)
    assert row["onset_after"].mjd < sim.truth["outburst_onset_mjd"] < row["onset_before"].mjd
    # Injected -1.0 mag, decayed by exp(-0.08 d / 3 d) over the night: about -0.98 mag
    # (generator setting); night-to-night scatter 0.03 dex = 0.075 mag, so 0.25 mag is ~3σ.
    assert row["delta_mag"].to_value(u.mag) == pytest.approx(-0.98, abs=0.25)
    assert row["significance"] > 5.0
    assert row["false_alarm"] < 0.01
    assert row["branch"] == "post"
    # The outburst nights are out of the fit; the index is still recovered.
    post = res.trend.branch("post")
    assert abs(post.k - sim.truth["k_post"]) < 4 * post.k_err


@pytest.mark.parametrize("seed", range(20))
def test_no_false_outbursts_on_quiet_campaigns(seed):
    sim = simulate_activity(seed=seed)
    assert len(find_outbursts(sim.time, sim.afrho, sim.afrho_err, r_h=sim.r_h,
                              perihelion_time=sim.perihelion_time)) == 0


def test_slow_rise_is_not_an_outburst():
    # A gradual departure: +0.05 dex a night for 8 nights (0.4 dex in all) is a change of
    # trend, not a sudden brightening; each step is below the jump threshold.
    sim = simulate_activity(seed=4, night_offsets=DENSE, scatter_dex=0.02)
    ramp = np.clip(sim.night - 21, 0, 8) * 0.05
    afrho = sim.afrho * 10 ** ramp
    res = analyse_activity(sim.time, sim.r_h, afrho, sim.afrho_err * 10 ** ramp,
                           perihelion_time=sim.perihelion_time)
    assert len(res.outbursts) == 0


def test_given_trend_is_used_as_is():
    sim = simulate_activity(seed=1, night_offsets=DENSE, outburst_night=OUTBURST_NIGHT,
                            outburst_mag=-1.5)
    res = _analyse(sim)
    again = find_outbursts(sim.time, sim.afrho, sim.afrho_err, trend=res.trend, r_h=sim.r_h)
    assert len(again) == 1
    assert again["night"][0].mjd == pytest.approx(res.outbursts["night"][0].mjd)
    assert again["delta_mag"][0].value == pytest.approx(res.outbursts["delta_mag"][0].value,
                                                        abs=1e-9)


def test_two_outbursts():
    sim = simulate_activity(seed=2, night_offsets=DENSE, outburst_night=8, outburst_mag=-1.2,
                            outburst_decay_days=2.0)
    second = simulate_activity(seed=2, night_offsets=DENSE, outburst_night=24,
                               outburst_mag=-1.2, outburst_decay_days=2.0)
    quiet = simulate_activity(seed=2, night_offsets=DENSE)
    afrho = sim.afrho * (second.afrho_true / quiet.afrho_true)
    res = analyse_activity(sim.time, sim.r_h, afrho, sim.afrho_err,
                           perihelion_time=sim.perihelion_time)
    nights = [np.argmin(np.abs(DENSE + 61400.0 - t.mjd)) for t in res.outbursts["night"]]
    assert nights == [8, 24]
    assert res.outbursts["branch"].tolist() == ["pre", "post"]


def test_outburst_on_first_night_warns():
    sim = simulate_activity(seed=0, night_offsets=DENSE, outburst_night=0, outburst_mag=-1.5)
    with pytest.warns(PoorResultWarning, match="no earlier night shows whether the rise"):
        res = _analyse(sim)
    assert len(res.outbursts) == 0
    assert res.outburst_nights[0]


def test_table_columns_and_dict(tmp_path):
    sim = simulate_activity(seed=3, night_offsets=DENSE, outburst_night=OUTBURST_NIGHT,
                            outburst_mag=OUTBURST_MAG)
    res = _analyse(sim)
    t = res.outbursts
    assert t.colnames[:6] == ["onset_after", "onset_before", "night", "r_h", "delta_mag",
                              "delta_mag_err"]
    assert t["delta_mag"].unit == u.mag
    t.write(tmp_path / "outbursts.ecsv")
    d = res.to_dict()
    assert len(d["outbursts"]) == 1
    assert d["trend"]["branches"][0]["branch"] == "pre"


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        pytest.param({"r_h": None}, "find_outbursts needs 'r_h'", id="no-r_h"),
        pytest.param({"perihelion_time": None}, "find_outbursts needs 'perihelion_time'",
                     id="no-perihelion"),
    ],
)
def test_bad_input(kwargs, match):
    sim = simulate_activity(seed=0)
    args = {"r_h": sim.r_h, "perihelion_time": sim.perihelion_time}
    args.update(kwargs)
    with pytest.raises(ValueError, match=match):
        find_outbursts(sim.time, sim.afrho, sim.afrho_err, **args)


def test_trend_of_wrong_kind():
    sim = simulate_activity(seed=0)
    with pytest.raises(TypeError, match="'trend' must be an ActivityTrend"):
        find_outbursts(sim.time, sim.afrho, sim.afrho_err, r_h=sim.r_h, trend="power law")


def test_fit_without_outburst_nights_equals_excluding_them():
    sim = simulate_activity(seed=5, night_offsets=DENSE, outburst_night=OUTBURST_NIGHT,
                            outburst_mag=-1.5)
    res = _analyse(sim)
    bad_nights = np.flatnonzero(res.outburst_nights)
    exclude = np.isin(sim.night, bad_nights)
    direct = fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
                                perihelion_time=sim.perihelion_time, exclude=exclude,
                                continuous=True)
    assert direct.continuous and res.trend.continuous
    assert direct.branch("post").k == pytest.approx(res.trend.branch("post").k, rel=1e-9)
