"""Benchmark of the activity stage: trend fit + outburst search on 10^4 measurements.

The figure is the wall time of `analyse_activity` (night binning, the two-branch trend with its
scatter posterior, the iterated outburst search); the floor is a bare numpy weighted polyfit of
log10 Afρ against log10 r_h on the same rows, per branch. Times are the best of several repeats;
the machine is shared, so expect noise.
"""

import time
import warnings

import numpy as np

from photpipe.activity import analyse_activity, fit_activity_trend
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


if __name__ == "__main__":
    main()
