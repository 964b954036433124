"""``photpipe report CONFIG``: the activity trend, outbursts and one offline HTML page.

Reads the campaign's measurements and nucleus fits (from the campaign store when it exists,
else from the exported ``measurements.ecsv`` / ``nucleus.ecsv``), fits the Afρ(r_h) trend
before and after perihelion, searches for outbursts, draws the campaign figures and writes
``<results>/report.html`` (plus ``activity.json``). `run_report_stage` is the same step for
``photpipe run``. The ``[activity]`` keys are listed in `photpipe.cli._activity_settings`.
"""

import json
from pathlib import Path

from astropy import units as u
from astropy.table import Table

from photpipe.cli import _report_content as content
from photpipe.cli._activity_settings import activity_settings
from photpipe.cli._errors import (
    CONFIG,
    CONFIG_PROBLEM,
    NO_DATA,
    OK,
    STORE_PROBLEM,
    Failures,
    Problem,
    fail,
    store_problem,
)
from photpipe.cli._files import write_text
from photpipe.cli._report_inputs import from_store, read_inputs, stage_results
from photpipe.cli.config import load_config

__all__ = ["HELP", "add_arguments", "execute", "run_report_stage", "activity_settings",
           "read_inputs", "OK", "CONFIG_PROBLEM", "STORE_PROBLEM", "NO_DATA"]

HELP = "activity trend, outbursts and figures in one self-contained HTML page"


def add_arguments(parser):
    """Add the options of ``photpipe report`` to ``parser``."""
    parser.add_argument("config", metavar="CONFIG", help="campaign configuration (TOML)")
    parser.add_argument("--output", metavar="PATH", default=None,
                        help="HTML file to write (default: <results>/report.html)")
    parser.add_argument("--from-tables", action="store_true",
                        help="read the exported ECSV tables even when a campaign store exists")


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
        A loaded configuration (`photpipe.cli.config.load_config`).
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
    from photpipe.campaign.report import write_report

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
    figures, captions = content.draw_figures(measurements, nucleus, analysis, settings, notes)
    summary = content.summary_items(config, measurements, nucleus, analysis, extra, settings)
    elong = None
    if measurements is not None and len(measurements) and "elong_deg" in measurements.colnames:
        elong = content.column_values(measurements, "elong_deg", u.deg)
    target = Path(report_path) if report_path is not None else out / "report.html"
    return write_report(target, campaign_name=summary["campaign"], summary=summary,
                        tables=content.result_tables(analysis, extra), figures=figures,
                        notes=notes, elongations=elong,
                        caution_elongation=settings["caution_elongation"], captions=captions)


def execute(args):
    """Write the report; print its path; return the exit code.

    Returns 0 when the page was written, 2 for a configuration problem, 3 for a damaged
    campaign store, 4 when there are no measurements to report on.
    """
    with Failures("report", CONFIG, store_problem(), Problem(ValueError, NO_DATA)) as outcome:
        config = load_config(args.config)
        activity_settings(config)  # fail early on a bad [activity]
        measurements, nucleus, extra = read_inputs(config, from_tables=args.from_tables)
    if outcome.code is not None:
        return outcome.code
    if measurements is None:
        results = config["campaign"]["results"]
        return fail("report", f"no measurements under {results} (no measurements.ecsv and no "
                    "campaign store); run 'photpipe run' first", NO_DATA)
    cannot_write = Problem(OSError, CONFIG_PROBLEM, "cannot write the report")
    with Failures("report", cannot_write) as outcome:
        path = run_report_stage(config, measurements, nucleus, extra, report_path=args.output)
    if outcome.code is not None:
        return outcome.code
    print(path)
    return OK
