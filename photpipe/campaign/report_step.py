"""The report step of a campaign: figures and one offline HTML page.

Takes the campaign's measurements and nucleus fits, the activity step's analysis and the
rotation and size results (all in memory), draws the campaign figures and writes
``<results>/report.html``. `run_report_stage` is what ``photpipe run`` and ``photpipe report``
call; the command alone runs the activity step first and reads the other results from files.
"""

from pathlib import Path

from astropy import units as u

from photpipe.report import content
from photpipe.report.page import write_report

from .activity_step import run_activity_stage

__all__ = ["run_report_stage"]


def run_report_stage(config, measurements, nucleus=None, extra=None, out_dir=None, *,
                     activity=None, report_path=None):
    """Draw the figures and write ``report.html``.

    Parameters
    ----------
    config : dict
        A loaded configuration (`photpipe.config.load_config`).
    measurements : `~astropy.table.Table` or None
        The campaign's measurement rows.
    nucleus : `~astropy.table.Table`, optional
    extra : dict, optional
        ``rotation`` and ``size`` result dicts when available, and ``sources`` (where the
        tables came from).
    out_dir : str or path-like, optional
        Folder to write into (default ``[campaign] results``).
    activity : `~photpipe.campaign.activity_step.ActivityOutcome`, optional
        The activity step's outcome; run here when not given.
    report_path : str or path-like, optional
        The HTML file (default ``<out_dir>/report.html``).

    Returns
    -------
    path : `pathlib.Path`
        The report written.
    """
    extra = dict(extra or {})
    out = Path(out_dir or config["campaign"]["results"])
    out.mkdir(parents=True, exist_ok=True)
    if activity is None:
        activity = run_activity_stage(config, measurements, out)
    settings = activity.settings.as_dict()
    analysis = activity.analysis
    notes = list(activity.notes)
    for src in extra.get("sources", []):
        notes.append(f"Input: {src}")
    figures, captions = content.draw_figures(measurements, nucleus, analysis, settings, notes,
                                             extra=extra, out_dir=out)
    summary = content.summary_items(config, measurements, nucleus, analysis, extra, settings)
    elong = None
    if measurements is not None and len(measurements) and "elong_deg" in measurements.colnames:
        elong = content.column_values(measurements, "elong_deg", u.deg)
    target = Path(report_path) if report_path is not None else out / "report.html"
    return write_report(target, campaign_name=summary["campaign"], summary=summary,
                        tables=content.result_tables(analysis, extra, measurements, nucleus,
                                                     afrho_column=settings["column"]),
                        figures=figures, notes=notes, elongations=elong,
                        caution_elongation=settings["caution_elongation"], captions=captions,
                        **content.page_extras(measurements, nucleus, analysis, extra,
                                              afrho_column=settings["column"]))
