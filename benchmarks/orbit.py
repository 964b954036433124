"""Benchmark of the orbit fit: 4,000 observations from 200 sites over 5 months, A1-A3 fitted.

The floor is one integration over the arc with the variational equations (state + A1-A3
partials), the unit the fit repeats. The fit (gravity-only fit with screening and site
weights, then the fit with A1-A3, then the gravity-only χ² on the same set) is timed from an
initial orbit given as elements. ``--pulls N`` also runs N smaller synthetic campaigns and
prints the A1/A2 pull σ and the coverage of the 95 % limits. Timings are wall-clock on a
shared machine; each is the best of ``--repeats`` runs.
"""

import argparse
import sys
import time
from pathlib import Path

import numpy as np
from astropy.time import Time

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "orbit"))
from _synthetic import synthetic_campaign  # noqa: E402

from photpipe.orbit import OrbitFitOptions, fit_orbit  # noqa: E402
from photpipe.orbit.fit import prepare_observations  # noqa: E402
from photpipe.orbit.propagate import ForceModel, integrate  # noqa: E402

A_TRUE = (1e-8, 2e-9, 0.0)


def _floor(data, state, jd_epoch):
    t = time.perf_counter()
    integrate(state, jd_epoch, (data.jd.min(), data.jd.max()),
              model=ForceModel(nongrav=(1, 2, 3)), a123=A_TRUE)
    return time.perf_counter() - t


def _fit(table, sites, truth):
    t = time.perf_counter()
    sol = fit_orbit(table, sites=sites, elements=truth["orbit"],
                    epoch=Time(truth["jd_epoch"], format="jd", scale="tdb"),
                    options=OrbitFitOptions(nongrav=(1, 2, 3)))
    return time.perf_counter() - t, sol


#: Pull-study cases: orbit kind and true (A1, A2, A3) in AU/day²; A1 and A2 are fitted.
PULL_CASES = (("hyperbolic", A_TRUE), ("elliptic", (5e-9, 1e-9, 0.0)),
              ("hyperbolic", (0.0, 0.0, 0.0)))


def _pulls(n):
    for kind, a_true in PULL_CASES:
        pulls, covered = [], []
        for seed in range(n):
            table, sites, truth = synthetic_campaign(1000 + seed, kind=kind, a123=a_true,
                                                     n_obs=160, n_sites=8)
            ng = fit_orbit(table, sites=sites, elements=truth["orbit"],
                           epoch=Time(truth["jd_epoch"], format="jd", scale="tdb"),
                           options=OrbitFitOptions(nongrav=(1, 2))).nongrav
            pulls.append((np.array(ng["a_au_d2"]) - a_true[:2]) / np.array(ng["a_err_au_d2"]))
            covered.append(np.hypot(*a_true[:2]) <= ng["limit_au_d2"])
        pulls = np.array(pulls)
        mad = 1.4826 * np.median(np.abs(pulls - np.median(pulls, axis=0)), axis=0)
        print(f"{kind} A = {a_true[:2]}: pulls over {n} seeds: A1 σ {pulls[:, 0].std():.2f} "
              f"(robust {mad[0]:.2f}), A2 σ {pulls[:, 1].std():.2f} (robust {mad[1]:.2f}); "
              f"mean {pulls.mean(0).round(2)}; 95 % limit covers the truth in "
              f"{100 * np.mean(covered):.0f} %", flush=True)


def main():
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--repeats", type=int, default=1)
    parser.add_argument("--pulls", type=int, default=0, metavar="N")
    parser.add_argument("--pulls-only", action="store_true")
    args = parser.parse_args()
    if args.pulls_only:
        _pulls(args.pulls)
        return
    table, sites, truth = synthetic_campaign(2026, a123=A_TRUE, n_obs=4000, n_sites=200)
    data, _, _ = prepare_observations(table, sites)
    floor, fit = np.inf, np.inf
    for _ in range(args.repeats):
        floor = min(floor, _floor(data, truth["bary"], truth["jd_epoch"]))
        seconds, sol = _fit(table, sites, truth)
        fit = min(fit, seconds)
    ng = sol.nongrav
    print(f"{len(table)} observations, {len(sites)} sites, "
          f"{np.ptp(data.jd):.0f} days; used {int(sol.residuals['used'].sum())}")
    print(f"one integration with partials: {floor:.2f} s")
    print(f"full fit with A1-A3: {fit:.2f} s = {fit / floor:.0f} x the integration "
          f"(target under 30 s; shared machine)")
    print(f"A = {np.array(ng['a_au_d2'])} ± {np.array(ng['a_err_au_d2'])}, status "
          f"{ng['status']}")
    if args.pulls:
        _pulls(args.pulls)


if __name__ == "__main__":
    main()
