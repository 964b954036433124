"""Benchmark of the size stage: the Monte Carlo size and the sublimation solve.

Run as ``python benchmarks/size.py``. Prints seconds for

1. ``size_estimate`` with 10^5 samples (H error and albedo range), against a floor measured in
   the same run: bare numpy drawing the same samples and evaluating D = C / sqrt(p) 10^(-H/5);
2. ``sublimation_rate`` for H2O over 10^3 values of r_h (subsolar and sunlit-hemisphere),
   against a floor of bare numpy evaluating the energy-balance residual on the same number of
   points as the solver's iterations needed (counted in the run), i.e. the cost of the function
   evaluations alone; and against scipy's brentq looping over the same points.

The machine is shared, so timings are noisy; each figure is the best of several repeats.
"""

import time

import numpy as np
from astropy import units as u
from scipy.optimize import brentq

from photpipe.size import ICES, size_estimate, sublimation_rate
from photpipe.size._balance import SIGMA_SB, local_balance


def best_of(fn, repeats=5):
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def floor_montecarlo(n):
    rng = np.random.default_rng(1)
    h = rng.normal(15.0, 0.1, n)
    p = rng.uniform(0.02, 0.06, n)
    d = 1330.3 / np.sqrt(p) * 10.0 ** (-0.2 * h)
    return d


def main():
    n = 100_000
    t_mc = best_of(lambda: size_estimate(15.0, 0.1, albedo=(0.02, 0.06), band="V",
                                         n_samples=n, rng=1))
    t_floor = best_of(lambda: floor_montecarlo(n))
    print(f"Monte Carlo size, {n} samples:        {t_mc:.4f} s")
    print(f"  floor (bare numpy draw + D(H, p)):   {t_floor:.4f} s   ratio {t_mc / t_floor:.2f}")

    r = np.geomspace(0.1, 50.0, 1000)
    ice = ICES["H2O"]
    t_sub = best_of(lambda: sublimation_rate("H2O", r * u.au, geometry="subsolar"))
    t_hemi = best_of(lambda: sublimation_rate("H2O", r * u.au, geometry="sunlit-hemisphere"),
                     repeats=3)

    # count residual evaluations the solver needs, then time that many bare evaluations
    flux = 0.99 * 1361.0 / r**2
    calls = {"points": 0}
    real_mass_flux = ice.mass_flux

    class Counting:
        latent_heat = ice.latent_heat

        @staticmethod
        def mass_flux(t):
            calls["points"] += np.size(t)
            return real_mass_flux(t)

    local_balance(Counting, flux, 0.9)
    n_eval = calls["points"]
    t_grid = np.linspace(50.0, 250.0, n_eval)
    s_grid = np.resize(flux, n_eval)
    t_eval = best_of(lambda: s_grid - 0.9 * SIGMA_SB * t_grid**4
                     - real_mass_flux(t_grid) * ice.latent_heat)

    def brent_loop():
        for s in flux:
            hi = (s / (0.9 * SIGMA_SB)) ** 0.25 * (1 + 1e-8)
            brentq(lambda t, s=s: s - 0.9 * SIGMA_SB * t**4 - ice.mass_flux(t) * ice.latent_heat,
                   1e-3 * hi, hi, xtol=1e-9, rtol=1e-12)

    t_brent = best_of(brent_loop, repeats=3)
    print(f"sublimation, H2O, 1000 r_h, subsolar:  {t_sub:.4f} s")
    print(f"  floor (bare numpy residual, {n_eval} points = the solver's evaluations): "
          f"{t_eval:.4f} s   ratio {t_sub / t_eval:.2f}")
    print(f"  scipy brentq looping over the 1000 r_h: {t_brent:.4f} s   "
          f"(vectorised solve is {t_brent / t_sub:.1f}x faster)")
    print(f"sublimation, sunlit-hemisphere (32 nodes per r_h): {t_hemi:.4f} s   "
          f"ratio to the subsolar solve {t_hemi / t_sub:.1f} (32x the points)")
    print("(shared CPU: figures are noisy; best of several repeats)")


if __name__ == "__main__":
    main()
