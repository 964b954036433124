"""Benchmark of the rotation stage: 10^4 points over 10^5 trial frequencies per method.

The floor is astropy's fast Lomb-Scargle (one term, Press & Rybicki FFT method) on the same data
and grid. Timings are wall-clock on a shared machine and vary from run to run.
"""

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


def main():
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

    floor, _ = _timed(lambda: LombScargle(t, y, dy).power(freq, method="fast"))
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

    print(f"{N_POINTS} points, {N_FREQ} trial frequencies, baseline {baseline:.1f} d")
    print(f"floor: astropy LombScargle fast (1 term)   {floor:7.2f} s   1.0x")
    for name, fn in rows:
        dt, _ = _timed(fn)
        print(f"{name:<44s} {dt:7.2f} s  {dt / floor:5.1f}x")
    dt, res = _timed(whole)
    print(f"{'whole search_rotation (3 methods, 20 boot)':<44s} {dt:7.2f} s  {dt / floor:5.1f}x"
          f"   (grid {res.settings['n_frequencies']} freqs; period {res.period:.4f}, "
          f"truth {truth.period:.4f})")


if __name__ == "__main__":
    main()
