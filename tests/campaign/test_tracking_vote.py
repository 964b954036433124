"""A night's tracking mode from its frames' verdicts (`night_tracking_vote`)."""

import pytest

from photpipe.campaign.night import night_tracking_vote


def _v(mode, source, strong=False):
    return {"mode": mode, "source": source, "strong": strong}


def test_undecided_frames_follow_the_night_and_strong_ones_keep_their_own():
    verdicts = {"f1": _v("comet", "header", True), "f2": _v("comet", "stars"),
                "f3": _v("comet", "stars"), "f4": _v("sidereal", "configuration"),
                "f5": _v("sidereal", "stars"), "f6": _v("sidereal", "stars", True), "f7": None}
    # 3 of 5 votes is below two thirds: the night does not decide
    split = night_tracking_vote(verdicts)
    assert split.mode is None and split.votes == {"comet": 3, "sidereal": 2}
    # 3 of 4: the weak and the undecided frames follow the night, the strong one does not
    decided = night_tracking_vote({**verdicts, "f5": _v("sidereal", "configuration")})
    assert decided.mode == "comet"
    assert decided.again == ("f4", "f5") and decided.own == ("f6",)
    assert "measured again as comet: f4, f5" in decided.line("n1", "")
    assert "keep their own mode on strong evidence: f6" in decided.line("n1", "")


@pytest.mark.parametrize("verdicts", [
    {},
    {"a": _v("comet", "stars"), "b": _v("sidereal", "configuration")},      # one vote
    {"a": _v("comet", "stars"), "b": _v("comet", "stars"),
     "c": _v("sidereal", "stars"), "d": _v("sidereal", "header", True)},    # a split
    {"a": _v("sidereal", "configuration"), "b": _v("sidereal", "configuration")},
], ids=["none", "one-vote", "split", "configuration-only"])
def test_no_night_mode_without_a_clear_majority(verdicts):
    vote = night_tracking_vote(verdicts)
    assert vote.mode is None and vote.again == () and vote.line("n1", "") is None


def test_a_night_that_agrees_says_nothing():
    vote = night_tracking_vote({f: _v("comet", "header", True) for f in "abc"})
    assert vote.mode == "comet" and vote.line("n1", "") is None


@pytest.mark.slow
def test_a_frame_that_cannot_tell_is_measured_again_in_its_nights_mode(tmp_path):
    """Two frames say TRACKING = NON-SIDEREAL, the third nothing (its round stars cannot
    tell a 2-pixel trail): the night is comet-tracked, the third is measured again so."""
    from astropy.io import fits

    from photpipe.campaign.pipeline import run_campaign
    from photpipe.config import load_config
    from photpipe.scenario.header_styles import restyle_night
    from photpipe.store import CampaignStore

    from ._nights import render_small_night, write_config

    truth = render_small_night(tmp_path / "raw", n_science=3, seed=4,
                               stars_path=tmp_path / "stars.ecsv")
    night = tmp_path / "2026-12-01"
    paths = restyle_night(truth, night, "comet-tracked", rng=1)
    with fits.open(paths[max(truth.science)], mode="update") as hdul:
        hdul[0].header.remove("TRACKING")
    config = load_config(write_config(tmp_path, [str(night)],
                                      stars_path=str(tmp_path / "stars.ecsv")))
    lines = []
    summary = run_campaign(config, workers=0, progress=False, echo=lines.append)
    assert summary.measured == 3
    said = [line for line in lines if "by the frames' votes" in line]
    assert said == ["night 2026-12-01: tracking comet by the frames' votes (2 comet); "
                    "measured again as comet: sci_0003"]
    with CampaignStore(config["campaign"]["store"]) as store:
        nucleus = store.export_table("nucleus")
    assert all("tracking_comet" in f for f in nucleus["flags"])
