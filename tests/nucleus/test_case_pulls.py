"""Pulls, bias and upper limits of the nucleus fit on every named night case.

Each case of `photpipe.scenario.NIGHT_CASES` is rendered for N_SEEDS frames (seeing, PSF shape,
trail direction, faint stars and noise drawn afresh per seed) and run through the nucleus path
as the campaign runs it. Kept to 5 frames a case so that the suite stays quick: the magnitude
bias must stay under 0.03 mag where the nucleus carries at least 30 % of the light inside one
FWHM, no frame may fail or get a non-finite error, no upper limit may lie below the truth, and
the pull (F - F_true)/σ_F over all 40 frames must have a robust σ within 0.7-1.5. That band is
wider than the goal (0.8-1.25) because 40 frames fix a robust σ only to about ±0.18 (1.4826
MAD has 37 % efficiency for a normal sample, Kendall & Stuart 1977, 10.10), and one case's 5
frames to ±0.5; ``benchmarks/recovery.py`` measures each case on 40 frames against 0.8-1.25.
"""

import numpy as np
import pytest

from photpipe.scenario import NIGHT_CASES
from photpipe.scenario.recovery import recover_case, summarise_recovery

N_SEEDS = 5
SHAPE = (161, 161)


@pytest.fixture(scope="module")
def recovered():
    return {name: recover_case(name, range(N_SEEDS), shape=SHAPE, cutout=81)
            for name in NIGHT_CASES}


@pytest.mark.slow
def test_error_bars_hold_over_all_cases(recovered):
    rows = [r for case_rows in recovered.values() for r in case_rows]
    s = summarise_recovery(rows)
    print({k: round(v, 3) if isinstance(v, float) else v for k, v in s.items()})
    assert s["n_failed"] == 0
    assert 0.7 <= s["pull_sigma"] <= 1.5


@pytest.mark.slow
@pytest.mark.parametrize("name", list(NIGHT_CASES))
def test_each_case_is_honest(name, recovered):
    rows = recovered[name]
    s = summarise_recovery(rows)
    case = NIGHT_CASES[name]
    print(name, {k: round(v, 3) if isinstance(v, float) else v for k, v in s.items()})
    assert s["n_failed"] == 0
    assert all(np.isfinite(r["err_e"]) and r["err_e"] > 0 for r in rows)
    if case.has_nucleus and (case.nucleus_fraction or 1.0) >= 0.3:
        assert abs(s["bias_mag"]) < 0.03
        assert s["upper_limit_fraction"] == 0.0
    # an upper limit must lie above the truth (a 3σ limit misses in 0.13 % of honest cases)
    assert s["limit_violations"] == 0


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
