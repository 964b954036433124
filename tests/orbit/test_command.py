import json

import pytest

from photpipe.cli.main import main

from ._files import write_campaign
from ._synthetic import synthetic_campaign


@pytest.mark.slow
def test_orbit_command_fits_ades_files_and_names_what_it_skipped(tmp_path, capsys):
    table, sites, _ = synthetic_campaign(3, a123=(1e-8, 2e-9, 0.0), n_obs=120, n_sites=4)
    paths, sites_path = write_campaign(tmp_path, table, sites)
    stray = tmp_path / "stray.psv"
    stray.write_text("permID|stn|obsTime|ra|dec|rmsRA|rmsDec\n"
                     "C1|Q77|2026-02-01T00:00:00Z|10.0|10.0|0.5|0.5\n"
                     "C1|Q77|2026-02-01T00:10:00Z|10.0||0.5|0.5\n")
    out = tmp_path / "out"
    code = main(["orbit", *paths, str(stray), "--sites", sites_path, "--terms", "1,2",
                 "--out", str(out)])
    captured = capsys.readouterr()
    assert code == 0
    assert f"photpipe orbit: {stray}:3: skipped: no dec" in captured.err
    assert f"photpipe orbit: {stray}:2: unknown site Q77" in captured.err
    assert "non-gravitational (water law)" in captured.out
    assert "|a| at 1 AU below" in captured.out
    saved = json.loads((out / "orbit.json").read_text())
    assert saved["nongrav"]["confidence"] == 0.95
    assert (out / "orbit_residuals.png").stat().st_size > 0


def test_orbit_command_with_no_usable_file_says_so(tmp_path, capsys):
    bad = tmp_path / "bad.psv"
    bad.write_text("permID|stn|obsTime\nC1|Z01|2026-02-01T00:00:00Z\n")
    assert main(["orbit", str(bad)]) == 4
    err = capsys.readouterr().err
    assert f"{bad}:2: skipped: no ra" in err
    assert "no usable observations" in err
