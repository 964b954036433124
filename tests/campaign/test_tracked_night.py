"""A night tracked on the comet reduces to the numbers of the same night tracked on the stars.

Both nights hold the same truth (the demo comet, its stars, times and seeing) rendered once with
the telescope following the stars (the comet trails 5 pixels in each 90 s frame) and once
following the comet (every star trails 5 pixels). The comet-tracked night says so in a
``TRACKING`` card (header style "comet-tracked") on three frames, and not on the last; the
configuration keeps its default ``tracking = "sidereal"``, so the headers must win, the unmarked
frame's stars (or the night's vote) must call it comet-tracked, and the stars must be measured
along their trails.
"""

from dataclasses import replace

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.time import Time

from photpipe.campaign.pipeline import run_campaign
from photpipe.config import load_config
from photpipe.scenario import make_star_field, render_night
from photpipe.scenario.demo import demo_exposures
from photpipe.scenario.header_styles import restyle_night
from photpipe.store import CampaignStore

from ._nights import SMALL, _geometry, write_config

CAMERA = replace(SMALL, shape=(256, 256))
#: magnitude giving 1 electron/s, and the exposure: the untrailed comet stays unsaturated
ZERO_POINT, EXPTIME = 23.3, 90.0


def _render(folder, tracking, stars_path):
    rng = np.random.default_rng(7)
    times = Time("2026-12-01T02:10:00", scale="utc") + np.arange(4) * 12 * u.min
    geometry = _geometry(times)
    exposures = [
        replace(e, tracking=tracking, exptime=EXPTIME * u.s, zero_point=ZERO_POINT,
                comet=replace(e.comet, nucleus_mag=e.comet.nucleus_mag + 1.0 * u.mag))
        for e in demo_exposures(times, geometry, phase_function=lambda phase: 1.0, rng=rng)]
    centre = SkyCoord(np.mean(geometry["ra"]), np.mean(geometry["dec"]))
    stars = make_star_field(centre, 6 * u.arcmin, n_stars=300, mag_range=(19.0, 15.0),
                            rng=np.random.default_rng(101))
    stars_path.parent.mkdir(parents=True, exist_ok=True)
    stars.write(stars_path, overwrite=True)
    truth = render_night(folder, CAMERA, exposures, stars=stars, rng=rng, n_bias=3, n_dark=2,
                         n_flat=2)
    return truth, exposures


def _tables(config):
    with CampaignStore(config["campaign"]["store"]) as store:
        return {name: store.export_table(name) for name in ("zero_points", "measurements",
                                                             "nucleus")}


def _values(table, column, err):
    return (np.asarray(u.Quantity(table[column]).value, float),
            np.asarray(u.Quantity(table[err]).value, float))


@pytest.fixture(scope="module")
def reduced(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("tracked")
    out = {}
    for tracking in ("sidereal", "comet"):
        stars_path = tmp / tracking / "stars.ecsv"
        truth, exposures = _render(tmp / tracking / "raw", tracking, stars_path)
        night = tmp / tracking / "2026-12-01"
        if tracking == "comet":
            paths = restyle_night(truth, night, "comet-tracked", rng=1)
            with fits.open(paths[max(truth.science)], mode="update") as hdul:
                for hdu in hdul:  # a compressed file repeats the cards in its primary header
                    hdu.header.remove("TRACKING", ignore_missing=True)
        else:
            restyle_night(truth, night, "clean", rng=1)
        config = load_config(write_config(tmp / tracking, [str(night)],
                                          stars_path=str(stars_path)))
        lines = []
        summary = run_campaign(config, workers=0, progress=False, echo=lines.append)
        out[tracking] = (truth, exposures, summary, _tables(config), night, lines)
    return out


@pytest.mark.slow
def test_comet_tracked_night_gives_the_sidereal_numbers(reduced):
    truth_s, exposures, summary_s, side, _, _ = reduced["sidereal"]
    truth_c, _, summary_c, comet, night, lines = reduced["comet"]
    assert summary_s.measured == summary_c.measured == 4
    sci = sorted(night.glob("sci_*"))
    assert fits.getheader(sci[0])["TRACKING"] == "NON-SIDEREAL"
    assert "TRACKING" not in fits.getheader(sci[-1])
    # every frame plate-solved, the unmarked one too (tried again with the trail's length)
    problems = [s.reason for n in summary_c.nights for s in n.skipped]
    assert not any("plate solution" in p for p in problems), problems
    # the unmarked frame is measured as comet-tracked: its stars decide, or else the night's
    # vote (three headers) carries it (tests/campaign/test_tracking_vote.py has that case)
    vote = [line for line in lines if "by the frames' votes" in line]
    assert vote in ([], ["night 2026-12-01: tracking comet by the frames' votes (3 comet); "
                         "measured again as comet: sci_0004"]), lines
    # the generator's trails: 5 pixels, the comet's under sidereal tracking, the stars'
    # under comet tracking
    for tr in truth_c.science.values():
        assert 4.0 < np.hypot(*tr.star_trail) < 8.0 and tr.comet_trail == (0.0, 0.0)

    zp_s, zpe_s = _values(side["zero_points"], "zp_mag", "zp_err_mag")
    zp_c, zpe_c = _values(comet["zero_points"], "zp_mag", "zp_err_mag")
    # each zero point within 3σ of the rendered one, and the two nights' within 3σ combined
    assert np.all(np.abs(zp_c - ZERO_POINT) < 3 * zpe_c)
    assert np.all(np.abs(zp_s - ZERO_POINT) < 3 * zpe_s)
    assert np.all(np.abs(zp_c - zp_s) < 3 * np.hypot(zpe_c, zpe_s))
    # the trailed stars' zero point is not much worse than the round stars'
    assert np.median(zpe_c) < 2.5 * np.median(zpe_s)

    for column, err in (("mag", "mag_err"), ("afrho_cm", "afrho_err_cm")):
        a, ae = _values(side["measurements"], column, err)
        b, be = _values(comet["measurements"], column, err)
        assert np.all(np.abs(a - b) < 3 * np.hypot(ae, be)), column
    # Afρ against the rendered value (A'Hearn et al. 1984 definition, the scenario's input)
    afrho_truth = np.array([tr.afrho_cm for tr in truth_c.science.values()])
    rho = np.asarray(u.Quantity(comet["measurements"]["rho_km"]).value)
    b, be = _values(comet["measurements"], "afrho_cm", "afrho_err_cm")
    wide = np.isclose(rho, 4000.0)
    assert np.all(np.abs(b[wide] - afrho_truth) < 3 * be[wide] + 0.05 * afrho_truth)

    nuc_s, nuc_c = side["nucleus"], comet["nucleus"]
    assert all("tracking_comet" in f for f in nuc_c["flags"])
    truth_mag = np.array([e.comet.nucleus_mag.to_value(u.mag) for e in exposures])
    a, ae = _values(nuc_s, "nucleus_mag", "nucleus_mag_err")
    b, be = _values(nuc_c, "nucleus_mag", "nucleus_mag_err")
    both = np.isfinite(ae) & np.isfinite(be)
    assert np.count_nonzero(both) >= 2
    assert np.all(np.abs(a - b)[both] < 3 * np.hypot(ae, be)[both])
    detected = np.isfinite(be)
    assert np.all(np.abs(b - truth_mag)[detected] < 3 * be[detected])
