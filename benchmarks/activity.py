"""Benchmark of the activity stage: trend fit + outburst search on 10^4 measurements, then the
within-night search (see `within_night`).

The figure is the wall time of `analyse_activity` (night binning, the two-branch trend with its
scatter posterior, the iterated outburst search); the floor is a bare numpy weighted polyfit of
log10 Afρ against log10 r_h on the same rows, per branch. Times are the best of several repeats;
the machine is shared, so expect noise.
"""

import time
import warnings

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.activity import (
    analyse_activity,
    find_night_outbursts,
    fit_activity_trend,
    simulate_night,
)
from photpipe.activity._night_scan import build_setup
from photpipe.activity.synthetic import simulate_activity

N_NIGHTS = 125
FRAMES_PER_NIGHT = 80  # 125 x 80 = 10 000 measurements
REPEATS = 5


def _best(func):
    best = np.inf
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        out = func()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main():
    offsets = np.linspace(-120.0, 120.0, N_NIGHTS) + 0.3
    sim = simulate_activity(seed=0, night_offsets=offsets, frames_per_night=FRAMES_PER_NIGHT,
                            frame_spacing_h=0.1, outburst_night=80, outburst_mag=-0.8)
    n = len(sim.time)
    t = sim.time.mjd
    x = np.log10(sim.r_h.value)
    y = np.log10(sim.afrho.value)
    w = sim.afrho.value * np.log(10) / sim.afrho_err.value  # 1 / σ(log10 Afρ)
    post = t >= sim.perihelion_time.mjd

    def floor():
        return [np.polyfit(x[s], y[s], 1, w=w[s]) for s in (~post, post)]

    def stage():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return analyse_activity(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
                                    perihelion_time=sim.perihelion_time)

    def trend_only():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return fit_activity_trend(sim.time, sim.r_h, sim.afrho, sim.afrho_err,
                                      perihelion_time=sim.perihelion_time)

    t_floor, _ = _best(floor)
    t_trend, _ = _best(trend_only)
    t_stage, res = _best(stage)
    print(f"activity benchmark: {n} measurements on {N_NIGHTS} nights")
    for b in res.trend.branches:
        print(f"  {b.name}: k = {b.k:.3f} ± {b.k_err:.3f} (true {sim.truth['k_' + b.name]})")
    print(f"  outbursts found: {len(res.outbursts)} (one injected, -0.8 mag)")
    print(f"  floor, numpy weighted polyfit per branch : {t_floor:.4f} s")
    print(f"  fit_activity_trend                       : {t_trend:.4f} s "
          f"(ratio {t_trend / t_floor:.0f})")
    print(f"  analyse_activity (trend + outbursts)     : {t_stage:.4f} s "
          f"(ratio {t_stage / t_floor:.0f})")
    print("  (best of 5; shared CPU, figures are noisy)")
    within_night()


def within_night(n_nights=10, n_sims=400):
    """Within-night search: 10 nights of 24 frames against a floor in the same run.

    The floor is the least the calibration can cost: for each night, ``n_sims`` simulated
    series whitened by one covariance and projected on the candidate templates (one matrix
    product each). The search does this for each of its 96 noise cells, and once more for
    the data.
    """
    nights = [simulate_night(seed=s, n_frames=24, outburst_mag=-0.3 if s % 2 else None)
              for s in range(n_nights)]
    time_all = Time(np.concatenate([nt.time.mjd + 2.0 * i for i, nt in enumerate(nights)]),
                    format="mjd")
    afrho = np.concatenate([nt.afrho.value for nt in nights]) * u.cm
    err = np.concatenate([nt.afrho_err.value for nt in nights]) * u.cm
    rng = np.random.default_rng(0)
    setups = [build_setup((nt.time.mjd - nt.time.mjd[0]) * 24.0,
                          1.0857 * (nt.afrho_err / nt.afrho).value) for nt in nights]

    def floor():
        out = []
        for st in setups:
            z = rng.standard_normal((st.t.size, n_sims))
            out.append(st.templates[0].T @ (st.whiten[0] @ (st.lower[0] @ z)))
        return out

    def stage():
        return find_night_outbursts(time_all, afrho, err, n_sims=n_sims)

    t_floor, _ = _best(floor)
    t_stage, res = _best(stage)
    print(f"within-night search: {n_nights} nights x 24 frames, {n_sims} simulations each")
    print(f"  outbursts found: {len(res.outbursts)} ({n_nights // 2} injected, -0.3 mag)")
    print(f"  floor, one-cell simulate + project       : {t_floor:.4f} s")
    print(f"  find_night_outbursts                     : {t_stage:.4f} s "
          f"(ratio {t_stage / t_floor:.0f})")


if __name__ == "__main__":
    main()
