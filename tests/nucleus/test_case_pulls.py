"""Pulls, bias and upper limits of the nucleus fit on every named night case.

Each case of `photpipe.scenario.NIGHT_CASES` is rendered for N_SEEDS frames (seeing, PSF shape,
trail direction, faint stars and noise drawn afresh per seed) and run through the nucleus path
as the campaign runs it, on the benchmark's 161x161 frames with 12 catalogued stars and an
81-pixel cutout. (Smaller frames with 6 PSF stars would halve the cost but test another
regime: there the PSF part of the error, bootstrapped from 6 stars, is conservative, biweight
pull σ 0.4-0.9 over 40 seeds, measured.)

Per case, the pull (F - F_true)/σ_F must have a robust σ within 0.8-1.25 and, where the nucleus
carries at least 30 % of the light inside one FWHM, the magnitude bias must stay under
0.03 mag. The robust σ is the biweight scale (astropy ``biweight_scale``, Beers, Flynn &
Gebhardt 1990, AJ 100, 32), chosen over 1.4826 MAD for its efficiency on normal data. Its
sampling spread for N normal pulls, measured on 10 000 simulated samples: standard deviation
0.17 for N = 20, 0.14 for 30, 0.12 for 40, 0.10 for 60 (1.4826 MAD: 0.25, 0.21, 0.18, 0.15).
So with N = 24 an honest error (σ = 1) lands in 0.8-1.25 with probability 0.84 per case (the
same simulation; 0.88 for N = 30, 0.93 for 40): the band is the goal, and 24 frames a case
is what the test-time budget allows (~1.5 min for the 192 frames here on the 2-core machine,
unloaded, ~1.2 min more than the 5 frames a case this test had; they also serve the other
tests of this module). A case outside the band is a cause to find in the pipeline, not
a band to widen; the benchmark (``benchmarks/recovery.py``) runs more seeds.
"""

import numpy as np
import pytest
from astropy.stats import biweight_scale

from photpipe.scenario import NIGHT_CASES
from photpipe.scenario.recovery import recover_case, summarise_recovery

N_SEEDS = 24
SHAPE = (161, 161)
N_CATALOGUED = 12
CUTOUT = 81


@pytest.fixture(scope="module")
def recovered():
    return {name: recover_case(name, range(N_SEEDS), shape=SHAPE, n_catalogued=N_CATALOGUED,
                               cutout=CUTOUT)
            for name in NIGHT_CASES}


def _pulls(rows):
    p = np.array([(r["flux_e"] - r["truth_e"]) / r["err_e"] for r in rows], float)
    return p[np.isfinite(p)]


@pytest.mark.slow
def test_error_bars_hold_over_all_cases(recovered):
    rows = [r for case_rows in recovered.values() for r in case_rows]
    s = summarise_recovery(rows)
    print({k: round(v, 3) if isinstance(v, float) else v for k, v in s.items()})
    assert s["n_failed"] == 0
    assert 0.8 <= biweight_scale(_pulls(rows)) <= 1.25


# Open causes, measured on these frames (seeds 0-23) and kept visible as expected failures:
# - every case with a coma has a negative pull median (-0.2 to -1.1): with γ free, noise
#   moves γ and the nucleus trades against the coma's core; on comet_trailed frames without
#   faint stars and with the true PSF the median flux ratio is 0.978 with γ free and 0.997 with
#   γ fixed at 1 (16 seeds, same noise), 1.000 noise-free. poor_seeing reaches +0.030 mag and
#   comet_trailed +0.030 (seeds 0-29: +0.014, +0.023).
# - comet_tracked: biweight pull σ 1.33 (seeds 0-29: 1.30), median -0.80; the PSF measured on
#   the trailed stars adds to the scatter (measured PSF vs true on the same data: 0.969 vs
#   0.978 median flux ratio on comet_trailed).
_OPEN_SIGMA = {"comet_tracked": "pull σ 1.33 > 1.25: PSF from trailed stars, cause open"}
_OPEN_BIAS = {n: "bias ~0.03 mag: nucleus-γ trade under noise, cause open"
              for n in ("poor_seeing", "comet_trailed")}


def _cases(open_causes):
    return [pytest.param(n, marks=pytest.mark.xfail(strict=False, reason=open_causes[n]))
            if n in open_causes else n for n in NIGHT_CASES]


@pytest.mark.slow
@pytest.mark.parametrize("name", _cases(_OPEN_SIGMA))
def test_each_case_pull_sigma(name, recovered):
    rows = recovered[name]
    s = summarise_recovery(rows)
    pulls = _pulls(rows)
    print(name, {k: round(v, 3) if isinstance(v, float) else v for k, v in s.items()},
          "biweight σ", round(biweight_scale(pulls), 3))
    assert s["n_failed"] == 0
    assert all(np.isfinite(r["err_e"]) and r["err_e"] > 0 for r in rows)
    assert 0.8 <= biweight_scale(pulls) <= 1.25
    # an upper limit must lie above the truth (a 3σ limit misses in 0.13 % of honest cases)
    assert s["limit_violations"] == 0


@pytest.mark.slow
@pytest.mark.parametrize("name", _cases(_OPEN_BIAS))
def test_each_case_bias(name, recovered):
    case = NIGHT_CASES[name]
    if not (case.has_nucleus and (case.nucleus_fraction or 1.0) >= 0.3):
        pytest.skip("the bias goal holds where the nucleus has >= 30 % of the core's light")
    s = summarise_recovery(recovered[name])
    assert abs(s["bias_mag"]) < 0.03
    assert s["upper_limit_fraction"] == 0.0


@pytest.mark.slow
def test_pure_coma_never_claims_a_nucleus(recovered):
    assert summarise_recovery(recovered["no_nucleus"])["upper_limit_fraction"] == 1.0


@pytest.mark.slow
def test_bare_nucleus_coma_is_consistent_with_zero(recovered):
    rows = recovered["no_coma"]
    k = np.array([r["coma_k"] for r in rows])
    k_err = np.array([r["coma_k_err"] for r in rows])
    assert np.all(np.isfinite(k_err)) and np.all(k_err > 0)
    assert np.mean(np.abs(k) < 3 * k_err) >= 0.9
