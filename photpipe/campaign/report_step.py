"""The report step of a campaign: the activity trend, outbursts and one offline HTML page.

Takes the campaign's measurements and nucleus fits (a campaign store, or the tables that
`photpipe.campaign.report_inputs` gathers), fits the Afρ(r_h) trend before and after perihelion,
searches for outbursts, draws the campaign figures and writes ``<results>/report.html`` (plus
``activity.json``). `run_report_stage` is what ``photpipe run`` and ``photpipe report`` call.
The ``[activity]`` keys are listed in `photpipe.campaign.activity_settings`.
"""

import json
from pathlib import Path

from astropy import units as u
from astropy.table import Table

from photpipe.report import content
from photpipe.report.page import write_report

from .activity_settings import activity_settings
from .report_inputs import from_store, stage_results
from .result_files import write_text

__all__ = ["run_report_stage"]


def _trend_note(settings):
    return (f"Trend: log10 Afρ against log10 r_h, one value per night, fitted with method "
            f"'{settings['method']}' on each side of perihelion; outbursts are nights more than "
            f"{settings['sigma']:g} σ above the trend with a sudden rise (> "
            f"{settings['jump_sigma']:g} σ) from the night before and a campaign-wide "
            f"false-alarm chance below {settings['max_false_alarm']:g}. "
            "Δm = -2.5 log10(Afρ/Afρ_trend) is the brightening of the dust in the aperture.")


def run_report_stage(config, measurements, nucleus=None, extra=None, out_dir=None, *,
                     report_path=None):
    """Fit the activity, draw the figures and write ``report.html`` (and ``activity.json``).

    Parameters
    ----------
    config : dict
        A loaded configuration (`photpipe.campaign.config.load_config`).
    measurements : `~astropy.table.Table` or campaign store
        The campaign's measurement rows. A campaign store (an object with ``export_table``)
        is also accepted, as ``run_report_stage(config, store, out_dir)``: the tables are
        exported from it and ``rotation.json`` / ``size.json`` are read from ``out_dir``.
    nucleus : `~astropy.table.Table`, optional
    extra : dict, optional
        ``rotation`` and ``size`` result dicts, when available.
    out_dir : str or path-like, optional
        Folder to write into (default ``[campaign] results``).
    report_path : str or path-like, optional
        The HTML file (default ``<out_dir>/report.html``).

    Returns
    -------
    path : `pathlib.Path`
        The report written.
    """
    extra = dict(extra or {})
    if hasattr(measurements, "export_table"):
        store = measurements
        if out_dir is None and nucleus is not None and not isinstance(nucleus, Table):
            out_dir, nucleus = nucleus, None
        measurements, nucleus = from_store(store)
        for name, value in stage_results(out_dir or config["campaign"]["results"]).items():
            extra.setdefault(name, value)
        extra.setdefault("sources", [f"campaign store {getattr(store, 'path', '')}"])
    out = Path(out_dir or config["campaign"]["results"])
    out.mkdir(parents=True, exist_ok=True)
    settings = activity_settings(config)
    notes = []
    analysis = None
    if measurements is None or len(measurements) == 0:
        notes.append("No measurements were found, so there is no activity trend yet.")
    else:
        try:
            analysis = content.fit_activity(measurements, settings, notes)
        except (ValueError, TypeError) as exc:
            notes.append(f"The activity trend could not be fitted: {exc}")
    if analysis is not None:
        notes.append(_trend_note(settings))
        payload = analysis.to_dict()
        payload["settings"] = {k: (str(v) if not isinstance(v, (int, float, str, type(None)))
                                   else v) for k, v in settings.items()}
        write_text(out / "activity.json", json.dumps(payload, indent=2, default=str) + "\n")
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
                        tables=content.result_tables(analysis, extra, measurements, nucleus),
                        figures=figures, notes=notes, elongations=elong,
                        caution_elongation=settings["caution_elongation"], captions=captions,
                        **content.page_extras(measurements, nucleus, analysis, extra))
