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


# Measured on these frames (seeds 0-23) with the joint PSF measurement: biweight pull σ 0.94-1.19
# on every case, bias 0.002-0.025 mag where the goal applies (faint_nucleus 0.065). Open: the pull
# medians are negative (-0.17 to -1.25). On faint_nucleus frames without faint stars the median
# flux ratio is 0.949 with the measured PSF and 0.989 with the true one (20 seeds, same noise),
# 0.966 with the PSF measured on noise-free stars: the Moffat β comes out 0.06-0.07 high and a
# coma with 90 % of the core light passes that misfit to the nucleus (the PSF measurement's
# matter). Before that measurement was rewritten, comet_tracked had σ 1.33 and poor_seeing and
# comet_trailed a bias of 0.030 mag on the same seeds.

#: Cases where the bias goal applies: a nucleus with at least 30 % of the light in one FWHM.
_BIAS_CASES = [name for name, case in NIGHT_CASES.items()
               if case.has_nucleus and (case.nucleus_fraction or 1.0) >= 0.3]


@pytest.mark.slow
@pytest.mark.parametrize("name", list(NIGHT_CASES))
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
@pytest.mark.parametrize("name", _BIAS_CASES)
def test_each_case_bias(name, recovered):
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
