from photpipe.campaign.report_step import run_report_stage
from photpipe.campaign.steps import run_campaign_steps
from photpipe.config import load_config

from ._step_inputs import write_report_campaign


def test_campaign_steps_take_the_store_tables(tmp_path):
    cfg, results, meas, nuc, _ = write_report_campaign(tmp_path)

    # The store exports times as plain MJD numbers, without a unit.
    meas["mjd_utc_mid"] = meas["mjd_utc_mid"].value
    nuc["mjd_utc_mid"] = nuc["mjd_utc_mid"].value

    steps = run_campaign_steps(load_config(cfg), None, meas, nuc, results, echo=lambda _: None,
                               sources=["campaign store fake.sqlite"])
    path = steps.results["report"]
    assert path == results / "report.html"
    assert steps.results["activity"].analysis is not None
    assert "campaign store fake.sqlite" in path.read_text(encoding="utf-8")
    # no lightcurve: rotation and size are named as not run, the report is still written
    assert {s.stage for s in steps.skipped} == {"rotation", "size"}


def test_flagged_rows_left_out(tmp_path):
    cfg, results, meas, nuc, _ = write_report_campaign(tmp_path)
    meas["flags"][:30] = "upper_limit"
    path = run_report_stage(load_config(cfg), meas, nuc, {}, results)
    assert "30 measurement rows flagged upper_limit, saturated were left out" in \
        path.read_text(encoding="utf-8")


def test_empty_store_gives_a_page_that_says_so(tmp_path):
    from photpipe.store import CampaignStore

    cfg, results, *_ = write_report_campaign(tmp_path, write_tables=False)
    with CampaignStore(results / "campaign.sqlite") as store:
        measurements, nucleus = store.export_table("measurements"), store.export_table("nucleus")
    path = run_report_stage(load_config(cfg), measurements, nucleus, {}, results)
    page = path.read_text(encoding="utf-8")
    assert "No measurements were found, so there is no activity trend yet." in page
    assert not (results / "activity.json").exists()
