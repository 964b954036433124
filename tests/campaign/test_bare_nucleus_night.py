"""A night of a bare nucleus (no coma), end to end: the coma is said not to be detected.

Before, the coma-only Afρ of such a night had errors that shrank with the nucleus's share and
lost its negative half, and the activity series mixed in the total light where a frame lacked it:
a bare nucleus came out as an "outburst inside the night" of several magnitudes at >20 σ.
"""

import json

import numpy as np
import pytest
from astropy.table import Table

from photpipe.cli.main import main

from . import _nights as nights

pytestmark = pytest.mark.slow


def test_a_bare_nucleus_night_has_no_coma_no_trend_and_no_outburst(tmp_path, capsys):
    night = tmp_path / "2026-12-01"
    nights.render_small_night(night, n_science=8, seed=3, stars_path=tmp_path / "stars.ecsv",
                              comet_change={"afrho": None})
    config = nights.write_config(tmp_path, [night], stars_path=tmp_path / "stars.ecsv",
                                 results=str(tmp_path / "results"))
    assert main(["run", str(config), "--workers", "0", "--no-progress"]) == 0
    out = capsys.readouterr().out
    results = tmp_path / "results"
    meas = Table.read(results / "2026-12-01" / "measurements.ecsv")
    value = np.asarray(meas["a0frho_coma_cm"], float)
    error = np.asarray(meas["a0frho_coma_err_cm"], float)
    fitted = np.isfinite(value)
    assert np.count_nonzero(fitted) >= len(meas) // 2
    # the truth is zero: the pulls are about zero with a spread near one (loose for 8 frames:
    # their robust spread has a sampling error of about 0.25 per unit)
    pulls = value[fitted] / error[fitted]
    assert abs(np.median(pulls)) < 1.5
    assert 1.4826 * np.median(np.abs(pulls - np.median(pulls))) < 2.0
    activity = json.loads((results / "activity.json").read_text())
    assert activity["status"] == "not_fitted"
    assert "the coma is not detected" in activity["reason"]
    assert "outbursts_within_night" not in activity
    assert "not detected, below" in out
    assert "outbursts within a night" not in out
