"""``photpipe draft``: a first configuration from a folder of small-observatory frames."""

import numpy as np
import pytest
from astropy.table import QTable
from campaign._nights import SMALL, render_small_night

from photpipe.cli.main import main
from photpipe.config import load_config, read_catalogue_columns, read_filters, read_instruments
from photpipe.scenario.header_styles import restyle_night


@pytest.mark.slow
def test_draft_from_a_small_observatory_folder(tmp_path, capsys):
    truth = render_small_night(tmp_path / "clean" / "n1", n_science=2, seed=3,
                               stars_path=tmp_path / "stars.ecsv")
    restyle_night(truth, tmp_path / "frames" / "2026-12-01", "small-observatory", rng=1)
    stars = QTable.read(tmp_path / "stars.ecsv")
    survey_cat = QTable({"RAJ2000": stars["ra"], "DEJ2000": stars["dec"], "Rmag": stars["R"],
                         "e_Rmag": np.full(len(stars), 0.02), "B-V": stars["B-V"]})
    survey_cat.write(tmp_path / "field.csv", format="ascii.csv")
    out = tmp_path / "draft.toml"
    code = main(["draft", str(tmp_path / "frames"), "--catalogue", str(tmp_path / "field.csv"),
                 "--output", str(out)])
    assert code == 0
    printed = capsys.readouterr().out
    assert "9 frames in 1 folders, 1 camera(s)" in printed
    text = out.read_text()
    # what the headers could not give is asked for, by name
    assert "gain = 1.0   # TO SUPPLY" in text
    assert "read_noise = 1.0   # TO SUPPLY" in text
    assert "pixel_scale_arcsec = 1.0   # TO SUPPLY" in text
    assert "longitude_deg = 0.0                # TO SUPPLY" in text
    config = load_config(out)  # loads as written; the marked values are placeholders
    cam = read_instruments(config)[0]
    assert cam.match_values == (SMALL.name,)
    assert cam.keys("exptime") == ("EXPOSURE",)
    assert read_filters(config).lookup("R").band == "R"
    assert read_catalogue_columns(config) == {"ra": "RAJ2000", "dec": "DEJ2000", "R": "Rmag",
                                              "R_err": "e_Rmag"}
    assert config["night"][0]["instrument"] == "invented_small_test_camera"


def test_draft_refuses_to_overwrite_and_empty_folder(tmp_path, capsys):
    (tmp_path / "c.toml").write_text("")
    assert main(["draft", str(tmp_path), "--output", str(tmp_path / "c.toml")]) == 1
    assert main(["draft", str(tmp_path), "--output", str(tmp_path / "d.toml")]) == 4
    assert "no readable FITS frames" in capsys.readouterr().err
