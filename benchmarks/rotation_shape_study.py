"""Study of the rotation search over seeds: period doubling, double-peak detection, 95 % coverage.

Three campaigns of the project's synthetic generator (double-peaked nucleus, two invented sites,
weather), each searched over many seeds:

- ``nightly-errors``: periods 4-14 h, 8 nights, a 0.02 mag zero-point error per site-night that
  the stated errors leave out. Counts the seeds whose adopted period is twice the truth.
- ``plain``: the same campaigns without nightly errors.
- ``5.4h-double`` (and ``5.4h-double-nightly``): a 5.4 h elongated nucleus whose two maxima
  differ (asymmetry 0.25), 4 nights. Counts the seeds where the data show the double peak
  (choice ``"double-peaked"``, not assumed) at the true period.
- ``one-site-4-nights``: one site, 4 nights of 7 h, too few site-nights for the night-block
  bootstrap (single points are drawn).
- ``symmetric``: periods 4-14 h, 8 nights, a pure cos 2θ signal (two identical halves per
  rotation). Counts the seeds at 1.5 times the period (column ``1.5P``).

Every campaign also counts the seeds whose result is firm (status ``"period"``) and the firm
ones that are wrong (not within 1 % of the truth).

For every campaign it also counts how often the truth lies in the reported 95 % interval.
Figures vary a little with the seeds drawn; nothing here is timed.

Measured when written (seeds 0-199, 100 resamples), before -> after the odd-harmonic test took
a zero point per site-night and the interval became the expanded bootstrap percentile one:
period doubled 14 -> 1 (nightly-errors) and 17 -> 2 (5.4h-double-nightly); double peak seen
in the data 198 -> 198 (5.4h-double); truth inside the 95 % interval 176 -> 187
(nightly-errors), 189 -> 184 (plain), 196 -> 191 (5.4h-double), 181 -> 194
(5.4h-double-nightly), 142 -> 142 (one-site-4-nights, ±1.96σ both times).

Measured (seeds 0-99, 40 resamples, shared machine) before -> after each Fourier order's peak
was refined before the orders are compared, curves of three identical parts moved to 3f, and
the verdict added: at 1.5 P 5 -> 0 (symmetric), 5 -> 0 (one-site-4-nights); right 95 -> 100
(symmetric), 77 -> 86 (one-site-4-nights); firm results 66 of 100 on one-site-4-nights, 1 of
them wrong; 100 / 100 / 100 / 98 / 98 firm and right on plain / symmetric / 5.4h-double /
nightly-errors / 5.4h-double-nightly; truth inside the 95 % interval 94 -> 91
(nightly-errors), 89 -> 88 (plain), 92 -> 94 (5.4h-double), 95 -> 94 (5.4h-double-nightly),
69 -> 81 (one-site-4-nights), 88 -> 93 (symmetric).
"""

import argparse
import warnings

import numpy as np
from astropy import units as u

from photpipe.rotation import (
    RotationWarning,
    fourier_series,
    reduce_lightcurve,
    search_rotation,
    synthetic_lightcurve,
)

CAMPAIGNS = {
    "nightly-errors": {"n_nights": 8, "night_offset": 0.02 * u.mag},
    "plain": {"n_nights": 8},
    "5.4h-double": {"n_nights": 4, "period": 5.4 * u.h},
    "5.4h-double-nightly": {"n_nights": 4, "period": 5.4 * u.h, "night_offset": 0.02 * u.mag},
    "one-site-4-nights": {"n_nights": 4, "sites": {"kettle_rock": -111.4}, "night_hours": 7.0},
    "symmetric": {"n_nights": 8, "symmetric": True, "pure_second_harmonic": True},
}


def _pure_second_harmonic(table, truth):
    """Replace the signal by one cos 2θ of 0.4 mag peak to peak (two identical halves)."""
    t = reduce_lightcurve(table).epoch_mjd
    f = 1 / truth.period.to_value(u.day)
    table["nucleus_mag"] = (table["nucleus_mag"] - truth.signal(t)
                            + fourier_series(t, f, np.array([0, 0, 0, 0.2, 0.0]),
                                             t0=truth.t0_mjd))
    return table


def run_campaign(name, seeds, n_bootstrap):
    """Return counts for one campaign over ``seeds``."""
    options = dict(CAMPAIGNS[name])
    counts = {"seeds": 0, "right": 0, "doubled": 0, "halved": 0, "1.5P": 0, "other": 0,
              "double_from_data": 0, "covered": 0, "firm": 0, "firm_wrong": 0, "interval": None}
    pure = options.pop("pure_second_harmonic", False)
    for seed in seeds:
        rng = np.random.default_rng(seed)
        kw = dict(options)
        if "period" not in kw:
            kw["period"] = rng.uniform(4, 14) * u.h
        table, truth = synthetic_lightcurve(rng=rng, **kw)
        if pure:
            table = _pure_second_harmonic(table, truth)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RotationWarning)
            res = search_rotation(reduce_lightcurve(table), min_period=3 * u.h,
                                  max_period=20 * u.h, n_bootstrap=n_bootstrap, rng=rng)
        ratio = float(res.period / truth.period)
        key = ("right" if abs(ratio - 1) < 0.01 else "doubled" if abs(ratio - 2) < 0.02
               else "halved" if abs(ratio - 0.5) < 0.005 else "1.5P" if abs(ratio - 1.5) < 0.03
               else "other")
        firm = getattr(res, "status", "period") == "period"
        counts["firm"] += int(firm)
        counts["firm_wrong"] += int(firm and key != "right")
        counts[key] += 1
        counts["seeds"] += 1
        if key == "right" and res.shape["choice"] == "double-peaked":
            counts["double_from_data"] += 1
        lo, hi = res.period_interval_95.to_value(u.h)
        counts["covered"] += int(lo <= truth.period.to_value(u.h) <= hi)
        counts["interval"] = res.to_dict()["period_interval_95_method"]
    return counts


def main(n_seeds=100, n_bootstrap=100, campaigns=tuple(CAMPAIGNS)):
    print(f"seeds 0-{n_seeds - 1}, {n_bootstrap} bootstrap resamples")
    print(f"{'campaign':<22s} {'right':>5s} {'2P':>4s} {'P/2':>4s} {'1.5P':>4s} {'other':>5s} "
          f"{'double from data':>16s} {'95% covered':>11s} {'firm':>5s} {'firm wrong':>10s}"
          f"  interval")
    for name in campaigns:
        c = run_campaign(name, range(n_seeds), n_bootstrap)
        print(f"{name:<22s} {c['right']:5d} {c['doubled']:4d} {c['halved']:4d} {c['1.5P']:4d} "
              f"{c['other']:5d} {c['double_from_data']:16d} {c['covered']:11d} {c['firm']:5d} "
              f"{c['firm_wrong']:10d}  {c['interval']}")


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=100, help="seeds per campaign")
    parser.add_argument("--bootstrap", type=int, default=100, help="bootstrap resamples")
    parser.add_argument("--campaign", action="append", choices=sorted(CAMPAIGNS),
                        help="campaign to run (repeatable; default all)")
    args = parser.parse_args()
    main(args.seeds, args.bootstrap, tuple(args.campaign or CAMPAIGNS))
