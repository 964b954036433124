"""Recovery of the named night cases: nucleus bias, scatter, pull σ, upper limits, coma strength.

Every case of `photpipe.scenario.NIGHT_CASES` is rendered for ``--seeds`` frames (161x161 pixels,
seeing, PSF shape and positions drawn afresh per frame) and run through the nucleus path as the
campaign runs it (`measure_psf` on the catalogued stars, `fit_nucleus` with the comet's trail).
Printed per case: the median magnitude bias and robust scatter of the detections, the robust σ
and median of the pull (F - F_true)/σ_F over all frames, the share of upper limits, the number
of limits below the truth, the coma strength K over its truth (the coma-only Afρ scales with K),
and the seconds per frame beside a floor: rendering the frame (the generator's own cost, measured
in the same run). The machine may be shared: the seconds are noisy, the ratios less so.

Run: ``python benchmarks/recovery.py [--seeds 40] [--cases nominal,no_coma]``.
"""

import argparse
import time

import numpy as np

from photpipe.scenario import NIGHT_CASES, render_case
from photpipe.scenario.recovery import recover_case, summarise_recovery


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", type=int, default=40)
    ap.add_argument("--cases", default=",".join(NIGHT_CASES))
    args = ap.parse_args(argv)
    names = [c for c in args.cases.split(",") if c]
    print(f"{'case':<15}{'n':>4}{'bias':>8}{'scatter':>9}{'pull σ':>8}{'pull med':>9}"
          f"{'UL frac':>8}{'UL<true':>8}{'K ratio':>8}{'s/frame':>8}{'ratio':>7}")
    for name in names:
        seeds = range(1000, 1000 + args.seeds)
        t0 = time.perf_counter()
        for s in seeds:
            render_case(name, s)
        floor = (time.perf_counter() - t0) / args.seeds
        t0 = time.perf_counter()
        rows = recover_case(name, seeds)
        per = (time.perf_counter() - t0) / args.seeds
        s = summarise_recovery(rows)
        print(f"{name:<15}{s['n']:>4}{s['bias_mag']:>+8.3f}{s['scatter_mag']:>9.3f}"
              f"{s['pull_sigma']:>8.2f}{s['pull_median']:>+9.2f}{s['upper_limit_fraction']:>8.2f}"
              f"{s['limit_violations']:>8d}{s['coma_k_ratio']:>8.3f}{per:>8.2f}"
              f"{per / floor:>7.1f}", flush=True)
        failed = [r["flags"] for r in rows if not np.isfinite(r["flux_e"])]
        if failed:
            print(f"    {len(failed)} frames not fitted, e.g. {failed[0]}")


if __name__ == "__main__":
    main()
