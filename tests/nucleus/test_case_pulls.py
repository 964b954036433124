"""Pulls, bias and upper limits of the nucleus fit on every named night case.

Each case of `photpipe.scenario.NIGHT_CASES` is rendered for N_SEEDS frames (seeing, PSF shape,
trail direction, faint stars and noise drawn afresh per seed) and run through the nucleus path
as the campaign runs it, on the benchmark's 161x161 frames with 12 catalogued stars and an
81-pixel cutout. (Smaller frames with 6 PSF stars would halve the cost but test another
regime: there the PSF part of the error, bootstrapped from 6 stars, is conservative, biweight
pull σ 0.4-0.9 over 40 seeds, measured.)

The pull (F - F_true)/σ_F must have a robust σ within 0.8-1.25 and a median within ±0.25
over all the cases together, and, per case, where the nucleus carries at least 30 % of the
light inside one FWHM, the magnitude bias must stay under 0.03 mag. The robust σ is the
biweight scale (astropy ``biweight_scale``, Beers, Flynn & Gebhardt 1990, AJ 100, 32), chosen
over 1.4826 MAD for its efficiency on normal data. Its sampling spread for N normal pulls,
measured on 10 000 simulated samples: standard deviation 0.15 for N = 24, 0.053 for 192; the
median's is 0.25 and 0.09 (1.2533/√N, Kendall & Stuart 1977, 10.10). So on 24 frames an honest
error lands in 0.8-1.25 with probability 0.85 and its median within ±0.25 with 0.68 per case,
and all eight cases pass both with probability 0.01: the goal bands are tested on the 192
pulls of the eight cases together (each case has seeds of its own, see `case_seeds`), where
an honest error passes with probability 0.99, and each case is held to bands three of its
standard errors wide (σ 0.6-1.45, median ±0.75), which catch a broken case (a σ of 1.9 or a
median of -1) and pass an honest one with probability 0.99. 24 frames a case is what the
test-time budget allows (~1.2 min for the 192 frames); the benchmark
(``benchmarks/recovery.py``) runs more seeds per case.
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


def case_seeds(index):
    """Seeds of the case at ``index`` in `NIGHT_CASES`: a range of its own.

    `render_case` draws seeing, positions and noise from one generator per seed, in the same
    order for every case, so with shared seeds the cases saw the same noise and their pull
    medians moved together (with the true PSF, seeds 0-15 gave medians near -0.45 on every
    case, seeds 16-79 +0.01 on the nominal one): eight medians that were one draw.
    """
    return range(1000 * index, 1000 * index + N_SEEDS)


@pytest.fixture(scope="module")
def recovered():
    return {name: recover_case(name, case_seeds(k), shape=SHAPE, n_catalogued=N_CATALOGUED,
                               cutout=CUTOUT)
            for k, name in enumerate(NIGHT_CASES)}


def _pulls(rows):
    p = np.array([(r["flux_e"] - r["truth_e"]) / r["err_e"] for r in rows], float)
    return p[np.isfinite(p)]


#: The goal bands, tested on the pooled pulls of all the cases (192 pulls).
POOLED_SIGMA_BAND = (0.8, 1.25)
POOLED_MEDIAN_BAND = 0.25
#: A case's bands: three sampling standard errors of 24 pulls (see the module's notes).
CASE_SIGMA_BAND = (0.6, 1.45)
CASE_MEDIAN_BAND = 0.75


@pytest.mark.slow
def test_error_bars_hold_over_all_cases(recovered):
    rows = [r for case_rows in recovered.values() for r in case_rows]
    s = summarise_recovery(rows)
    print({k: round(v, 3) if isinstance(v, float) else v for k, v in s.items()})
    assert s["n_failed"] == 0
    pulls = _pulls(rows)
    lo, hi = POOLED_SIGMA_BAND
    assert lo <= biweight_scale(pulls) <= hi
    assert abs(np.median(pulls)) < POOLED_MEDIAN_BAND


# Measured on these frames: pooled pull σ 0.97 (1.4826 MAD), median -0.08; per case biweight σ
# 0.81-1.28, medians -0.68 (nominal: seeds 0-23, -0.53 on them with the true PSF) to +0.23, bias
# 0.000-0.015 mag where the goal applies (faint_nucleus 0.014). With the PSF stars fitted on the
# comet's light and beside faint neighbours (before `measure_psf` left both out): pooled median
# -0.26, faint_nucleus median -1.04 and bias 0.064 mag, the Moffat β 0.06-0.08 high where the
# coma holds 90 % of the core.

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
    lo, hi = CASE_SIGMA_BAND
    assert lo <= biweight_scale(pulls) <= hi
    assert abs(np.median(pulls)) < CASE_MEDIAN_BAND
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
