"""``photpipe report CONFIG``: the activity trend, outbursts and one offline HTML page.

Reads the campaign's measurements and nucleus fits (from the campaign store when it exists,
else from the exported ``measurements.ecsv`` / ``nucleus.ecsv``) and writes
``<results>/report.html`` (plus ``activity.json``) through
`photpipe.campaign.report_step.run_report_stage`, after the activity step
(`photpipe.campaign.activity_step`). The ``[activity]`` keys are listed in ``configs/demo.toml``.
"""

from photpipe.campaign.report_inputs import read_inputs
from photpipe.campaign.report_step import run_report_stage
from photpipe.cli._errors import (
    CONFIG,
    CONFIG_PROBLEM,
    FAILED,
    NO_DATA,
    OK,
    STORE_PROBLEM,
    Failures,
    Problem,
    fail,
    store_problem,
)
from photpipe.config import load_config, read_activity

__all__ = ["HELP", "add_arguments", "execute", "OK", "CONFIG_PROBLEM", "STORE_PROBLEM", "NO_DATA"]

HELP = "activity trend, outbursts and figures in one self-contained HTML page"


def add_arguments(parser):
    """Add the options of ``photpipe report`` to ``parser``."""
    parser.add_argument("config", metavar="CONFIG", help="campaign configuration (TOML)")
    parser.add_argument("--output", metavar="PATH", default=None,
                        help="HTML file to write (default: <results>/report.html)")
    parser.add_argument("--from-tables", action="store_true",
                        help="read the exported ECSV tables even when a campaign store exists")


def execute(args):
    """Write the report; print its path; return the exit code.

    Returns 0 when the page was written, 2 for a configuration problem, 3 for a damaged
    campaign store, 4 when there are no measurements to report on, 1 when the report cannot
    be written.
    """
    with Failures("report", CONFIG, store_problem(), Problem(ValueError, NO_DATA)) as outcome:
        config = load_config(args.config)
        read_activity(config)  # fail early on a bad [activity]
        measurements, nucleus, extra = read_inputs(config, from_tables=args.from_tables)
    if outcome.code is not None:
        return outcome.code
    if measurements is None:
        results = config["campaign"]["results"]
        return fail("report", f"no measurements under {results} (no measurements.ecsv and no "
                    "campaign store); run 'photpipe run' first", NO_DATA)
    cannot_write = Problem(OSError, FAILED, "cannot write the report")
    with Failures("report", cannot_write) as outcome:
        path = run_report_stage(config, measurements, nucleus, extra, report_path=args.output)
    if outcome.code is not None:
        return outcome.code
    print(path)
    return OK
