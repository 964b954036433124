"""A night written the way a small observatory writes it goes through the whole run.

No WCS (the pointing as sexagesimal strings), EXPOSURE, DATE-OBS and TIME-OBS apart, no GAIN,
RDNOISE or SATURATE, 'Light Frame' types, .fit files, and a catalogue with survey column names
(RAJ2000, DEJ2000, Rmag, e_Rmag): with an [instruments], [catalogue] and [filters] section and
no hand edits, every frame is measured and the zero points equal those of the clean night.
"""

import logging

import numpy as np
import pytest
from astropy.io import fits
from astropy.table import QTable

from photpipe.campaign.pipeline import run_campaign
from photpipe.config import load_config
from photpipe.scenario.header_styles import restyle_night
from photpipe.store import CampaignStore

from ._nights import SMALL, render_small_night, write_config

CAMERA = f"""
[instruments.small]
match_values = ["{SMALL.name}"]
gain = 1.6
read_noise = 8.0
saturation = 60000.0
pixel_scale_arcsec = 1.5
exptime_keywords = ["EXPOSURE"]

[catalogue]
ra = "RAJ2000"
dec = "DEJ2000"
magnitudes = {{ R = "Rmag" }}
errors = {{ R = "e_Rmag" }}

[filters.R]
band = "R"
"""


def _quiet(line):
    logging.getLogger("test").debug(line)


def _survey_catalogue(ecsv, path):
    t = QTable.read(ecsv)
    out = QTable({"RAJ2000": t["ra"], "DEJ2000": t["dec"], "Rmag": t["R"],
                  "e_Rmag": np.full(len(t), 0.01), "B-V": t["B-V"]})
    out.write(path, format="ascii.csv", overwrite=True)
    return path


def _zero_points(config):
    with CampaignStore(config["campaign"]["store"]) as store:
        rows = store.export_table("zero_points")
    zp = np.asarray(getattr(rows["zp_mag"], "value", rows["zp_mag"]), float)
    err = np.asarray(getattr(rows["zp_err_mag"], "value", rows["zp_err_mag"]), float)
    return {str(f): (z, e) for f, z, e in zip(rows["frame"], zp, err, strict=True)}


@pytest.mark.slow
def test_small_observatory_night_measured_with_no_hand_edits(tmp_path):
    clean_dir = tmp_path / "clean" / "2026-12-01"
    truth = render_small_night(clean_dir, n_science=3, seed=1,
                               stars_path=tmp_path / "stars.ecsv")
    styled_dir = tmp_path / "styled" / "2026-12-01"
    restyle_night(truth, styled_dir, "small-observatory", rng=5)
    sci = sorted(styled_dir.glob("sci_*.fit"))
    assert len(sci) == 3 and "CTYPE1" not in fits.getheader(sci[0])
    catalogue = _survey_catalogue(tmp_path / "stars.ecsv", tmp_path / "survey.csv")

    clean = load_config(write_config(tmp_path / "clean", [str(clean_dir)],
                                     stars_path=str(tmp_path / "stars.ecsv")))
    run_campaign(clean, workers=0, progress=False, echo=_quiet)
    (tmp_path / "styled_cfg").mkdir()
    styled = load_config(write_config(tmp_path / "styled_cfg", [str(styled_dir)],
                                      stars_path=str(catalogue), extra=CAMERA))
    summary = run_campaign(styled, workers=0, progress=False, echo=_quiet)
    assert summary.measured == 3
    a, b = _zero_points(clean), _zero_points(styled)
    assert sorted(a) == sorted(b) == ["sci_0001", "sci_0002", "sci_0003"]
    for frame in a:
        # the same pixels, calibrated on the same stars: equal within the zero point's error
        assert abs(a[frame][0] - b[frame][0]) < a[frame][1]


@pytest.mark.slow
def test_header_wcs_off_by_arcminutes_is_solved_and_measured(tmp_path):
    """A header WCS 2.2 arcmin off (beyond the 30 arcsec refinement): solved, then measured."""
    from photpipe.scenario.header_styles import HeaderStyle

    truth = render_small_night(tmp_path / "clean", n_science=2, seed=2,
                               stars_path=tmp_path / "stars.ecsv")
    wrong = HeaderStyle(name="wrong-wcs", wcs_error_pix=(70.0, -55.0))
    restyle_night(truth, tmp_path / "wrong", wrong, rng=1)
    config = load_config(write_config(tmp_path, [str(tmp_path / "wrong")],
                                      stars_path=str(tmp_path / "stars.ecsv")))
    summary = run_campaign(config, workers=0, progress=False, echo=_quiet)
    assert summary.measured == 2
    assert len(_zero_points(config)) == 2
