"""Benchmark of the rotation stage: 10^4 points over 10^5 trial frequencies per method.

The floor is astropy's fast Lomb-Scargle (one term, Press & Rybicki FFT method) on the same data
and grid. Timings are wall-clock on a shared machine and vary from run to run: every figure is the
best of ``--repeats`` runs, the floor and the methods timed in turn within each repeat.
"""

import argparse
import time
import warnings

import numpy as np
from astropy import units as u
from astropy.timeseries import LombScargle

from photpipe.rotation import (
    FrequencyGrid,
    RotationWarning,
    fourier_periodogram,
    lomb_scargle_periodogram,
    pdm_periodogram,
    reduce_lightcurve,
    search_rotation,
    synthetic_lightcurve,
)

N_POINTS = 10_000
N_FREQ = 100_000


def _timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def main(repeats=3):
    rng = np.random.default_rng(1)
    sites = {f"site{i}": lon for i, lon in enumerate((-111.4, -70.7, 20.8, 149.1))}
    table, truth = synthetic_lightcurve(period=7.3 * u.h, n_nights=60, sites=sites,
                                        cadence=2.1 * u.min, night_hours=8.0, rng=rng)
    table = table[np.sort(rng.choice(len(table), N_POINTS, replace=False))]
    lc = reduce_lightcurve(table)
    t, y, dy = lc.epoch_mjd, lc.mag, lc.mag_err
    baseline = float(np.ptp(t))
    f0, f1 = 1 / 2.5, 12.0  # 60 h to 2 h
    grid = FrequencyGrid(f0, (f1 - f0) / (N_FREQ - 1), N_FREQ, baseline)
    freq = grid.frequency

    rows = [
        ("lomb-scargle, 2 harmonics (trig sums)",
         lambda: lomb_scargle_periodogram(t, y, dy, grid, nterms=2)),
        ("fourier series, orders 1-4 (trig sums)",
         lambda: fourier_periodogram(t, y, dy, grid, max_order=4)),
        ("pdm, 10 bins x 2 covers",
         lambda: pdm_periodogram(t, y, dy, grid)),
        ("astropy lomb-scargle, 2 harmonics (fastchi2)",
         lambda: LombScargle(t, y, dy, nterms=2).power(freq, method="fastchi2")),
    ]
    oversample = int(round(1 / (grid.df * baseline)))

    def whole():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RotationWarning)
            return search_rotation(lc, min_period=2 * u.h, max_period=60 * u.h,
                                   oversample=oversample, n_bootstrap=20, rng=rng)

    timings = {"floor": [], **{name: [] for name, _ in rows}, "whole": []}
    res = None
    for _ in range(repeats):
        timings["floor"].append(_timed(
            lambda: LombScargle(t, y, dy).power(freq, method="fast"))[0])
        for name, fn in rows:
            timings[name].append(_timed(fn)[0])
        dt, res = _timed(whole)
        timings["whole"].append(dt)
    best = {k: min(v) for k, v in timings.items()}
    floor = best["floor"]
    print(f"{N_POINTS} points, {N_FREQ} trial frequencies, baseline {baseline:.1f} d; "
          f"best of {repeats} (shared machine)")
    print(f"{'floor: astropy LombScargle fast (1 term)':<44s} {floor:7.2f} s  {1.0:5.1f}x")
    for name, _ in rows:
        print(f"{name:<44s} {best[name]:7.2f} s  {best[name] / floor:5.1f}x")
    print(f"{'whole search_rotation (3 methods, 20 boot)':<44s} {best['whole']:7.2f} s  "
          f"{best['whole'] / floor:5.1f}x   (grid {res.settings['n_frequencies']} freqs; "
          f"period {res.period:.4f}, truth {truth.period:.4f})")

if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3, help="runs per figure (best kept)")
    main(parser.parse_args().repeats)
