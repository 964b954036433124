"""The shipped synthetic night reduced end to end, against its truth (photpipe.scenario).

``sample_frames/`` is rendered by ``sample_frames/make_sample_frames.py`` from the invented demo
scenario, and ``sample_frames/demo_truth.ecsv`` holds what went into each frame.
"""

import logging

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable, join

from photpipe.campaign.pipeline import run_campaign
from photpipe.config import load_config
from photpipe.store import CampaignStore

from ._nights import DEMO, ROOT


@pytest.fixture(scope="module")
def demo_rows(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("demo")
    text = DEMO.read_text().replace('results = "../results/demo"', f'results = "{tmp}"')
    text = text.replace('"../sample_frames/', f'"{ROOT}/sample_frames/')
    (tmp / "demo.toml").write_text(text)
    config = load_config(tmp / "demo.toml")
    summary = run_campaign(config, workers=0, progress=False,
                           echo=logging.getLogger("test").debug)
    with CampaignStore(config["campaign"]["store"]) as store:
        rows = store.export_table("measurements")
        nucleus = store.export_table("nucleus")
    truth = QTable.read(ROOT / "sample_frames" / "demo_truth.ecsv")
    return summary, rows, nucleus, truth


pytestmark = [pytest.mark.slow]


def test_every_science_frame_is_measured(demo_rows):
    summary, rows, nucleus, truth = demo_rows
    assert summary.measured == len(truth) == 12
    assert len(nucleus) == 12


def test_zero_point_and_nucleus_magnitude(demo_rows):
    _, rows, nucleus, truth = demo_rows
    # Measured: zero points within 0.026 mag of the rendered 23.80 and nucleus magnitudes
    # 0.015 mag (median) from the truth with 0.016 mag rms, against errors of 0.018 mag.
    assert np.all(np.abs(u.Quantity(rows["zp_mag"]).value - 23.80) < 0.03)
    both = join(QTable(truth)["frame", "nucleus_mag"], nucleus["frame", "nucleus_mag"],
                keys="frame", table_names=["truth", "fit"])
    diff = u.Quantity(both["nucleus_mag_truth"]).value - u.Quantity(both["nucleus_mag_fit"]).value
    assert abs(np.median(diff)) < 0.03
    assert np.std(diff) < 0.04


def test_nucleus_removed_afrho_matches_the_coma_truth(demo_rows):
    _, rows, _, truth = demo_rows
    both = join(rows, QTable(truth)["frame", "afrho_cm"], keys="frame",
                table_names=["", "truth"])
    expected = np.asarray(both["afrho_cm_truth"], float)  # cm (demo_truth.ecsv)
    total = u.Quantity(both["afrho_cm_"]).to_value(u.cm)
    coma = u.Quantity(both["afrho_coma_cm"]).to_value(u.cm)
    # The total light's Afρ holds the nucleus: measured +5.5 % at 20,000 km to +44 % at
    # 2,240 km (5 arcsec). With the fitted nucleus (trailed 2.2 pixels, sidereal tracking)
    # taken out, the coma's Afρ comes back to the truth: medians 77.24, 77.35, 77.45 cm at
    # 5,000, 10,000, 20,000 km against 77.20 cm, median ratio 1.0002, clean rows within 1.3 %,
    # rows a field star falls in (flag star_in_aperture) within 3.8 %.
    clean = np.array(["star_in_aperture" not in str(f) for f in both["flags"]])
    assert np.all(total / expected - 1 > 0.03)
    assert np.all(np.abs(coma / expected - 1)[clean] < 0.025)
    assert abs(np.median(coma / expected) - 1) < 0.01


def test_airmass_is_computed_from_the_site_when_the_header_has_none(demo_rows):
    _, rows, _, _ = demo_rows
    airmass = np.asarray(rows["airmass"], float)
    # The demo headers carry no AIRMASS; the site of [sites.kettle_rock] and the frame times
    # give it (Kasten & Young 1989): measured 1.02-1.89 over the invented night.
    assert np.all(np.isfinite(airmass))
    assert np.all((airmass > 1.0) & (airmass < 2.0))
    assert all("airmass_computed" in str(f) for f in rows["flags"])
