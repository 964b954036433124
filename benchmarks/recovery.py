"""Recovery of the named night cases: nucleus pulls per frame, then period, H, Afρ and outburst.

Every case of `photpipe.scenario.NIGHT_CASES` is rendered for ``--seeds`` frames (161x161 pixels,
seeing, PSF shape and positions drawn afresh per frame) and run through the nucleus path as the
campaign runs it (`measure_psf` on the catalogued stars, `fit_nucleus` with the comet's trail).

First table, per case over the frames: the median magnitude bias and robust scatter, the robust
σ and median of the pull (F - F_true)/σ_F over all frames, the share of upper limits, the number
of limits below the truth, the coma strength K over its truth, the coma-only A(0)fρ over its
truth in a 10" aperture (median), and the seconds per frame beside a floor: rendering the frame
(the generator's own cost, measured in the same run; the machine may be shared, so the seconds
are noisy, the ratios less so).

Second table, per case over ``--seeds`` campaigns of three nights at one site (a true period of
4-14 h, 0.3 mag amplitude, a 0.3-mag coma outburst inside night 2; see
`photpipe.scenario.campaign_recovery` for how the case's fitted frames make each campaign's
frames): how the rotation search ended (period right, at half or double the truth, wrong,
"ambiguous", "none"), the median H error (fit - truth, mag) and the median and robust σ of its
pull (a calibration error of 0.02 mag shared by the campaign's frames is drawn and is in
the stated H error), the share of campaigns whose 68 % radius interval holds the true radius
(true albedo drawn in 0.02-0.06, the range assumed) and the robust σ of the radius pull
(radius - truth) / half the interval, and the share of campaigns whose outburst was found, with
the outbursts claimed in the quiet nights.

Run: ``python benchmarks/recovery.py [--seeds 40] [--cases nominal,no_coma] [--no-campaigns]``.
"""

import argparse
import time

import numpy as np

from photpipe.scenario import NIGHT_CASES, render_case
from photpipe.scenario.campaign_recovery import case_campaign, summarise_campaigns
from photpipe.scenario.recovery import recover_case, summarise_recovery


def _frame_line(name, rows, per, floor):
    s = summarise_recovery(rows)
    afrho = np.array([r.get("afrho_ratio", np.nan) for r in rows], float)
    a = float(np.nanmedian(afrho)) if np.isfinite(afrho).any() else np.nan
    return (f"{name:<15}{s['n']:>4}{s['bias_mag']:>+8.3f}{s['scatter_mag']:>9.3f}"
            f"{s['pull_sigma']:>8.2f}{s['pull_median']:>+9.2f}{s['upper_limit_fraction']:>8.2f}"
            f"{s['limit_violations']:>8d}{s['coma_k_ratio']:>8.3f}{a:>8.3f}{per:>8.2f}"
            f"{per / floor:>7.1f}")


def _campaign_line(name, results):
    s = summarise_campaigns(results)
    p = s["period"]
    ob = "-" if not np.isfinite(s["outburst_found"]) else f"{s['outburst_found']:.2f}"
    fa = "-" if not np.isfinite(s["outburst_found"]) else f"{s['false_outbursts']:d}"
    return (f"{name:<15}{s['n']:>4}{p['right']:>6}{p['half']:>5}{p['double']:>5}"
            f"{p['wrong']:>6}{p['ambiguous']:>6}{p['none']:>5}{s['H_err_median']:>+8.3f}"
            f"{s['H_pull_median']:>+8.2f}{s['H_pull_sigma']:>7.2f}{s['radius_coverage']:>7.2f}"
            f"{s['radius_pull_sigma']:>7.2f}{ob:>9}{fa:>7}")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=40)
    ap.add_argument("--cases", default=",".join(NIGHT_CASES))
    ap.add_argument("--no-campaigns", action="store_true")
    args = ap.parse_args(argv)
    names = [c for c in args.cases.split(",") if c]
    print(f"{'case':<15}{'n':>4}{'bias':>8}{'scatter':>9}{'pull σ':>8}{'pull med':>9}"
          f"{'UL frac':>8}{'UL<true':>8}{'K ratio':>8}{'Afρ rat':>8}{'s/frame':>8}{'ratio':>7}")
    recovered = {}
    for name in names:
        seeds = range(1000, 1000 + args.seeds)
        t0 = time.perf_counter()
        for s in seeds:
            render_case(name, s)
        floor = (time.perf_counter() - t0) / args.seeds
        t0 = time.perf_counter()
        rows = recover_case(name, seeds, afrho=True)
        per = (time.perf_counter() - t0) / args.seeds
        recovered[name] = rows
        print(_frame_line(name, rows, per, floor), flush=True)
        failed = [r["flags"] for r in rows if not np.isfinite(r["flux_e"])]
        if failed:
            print(f"    {len(failed)} frames not fitted, e.g. {failed[0]}")
    if args.no_campaigns:
        return
    print(f"\n{'campaigns':<15}{'n':>4}{'P ok':>6}{'P/2':>5}{'2P':>5}{'wrong':>6}{'ambig':>6}"
          f"{'none':>5}{'ΔH':>8}{'H pull':>8}{'σ':>7}{'R cov':>7}{'R σ':>7}{'outburst':>9}"
          f"{'false':>7}")
    for name in names:
        results = [case_campaign(name, recovered[name], 5000 + k) for k in range(args.seeds)]
        print(_campaign_line(name, results), flush=True)


if __name__ == "__main__":
    main()
