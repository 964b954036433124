"""``photpipe run CONFIG``: reduce every night of a campaign into its store and tables."""

from photpipe.cli._errors import (
    CONFIG,
    CONFIG_PROBLEM,
    FAILED,
    NO_DATA,
    OK,
    Failures,
    Problem,
    fail,
    store_problem,
)

__all__ = ["HELP", "add_arguments", "execute"]

HELP = "reduce every night a configuration names: calibrate, measure, store, summarise"


def add_arguments(parser):
    """Add the options of ``photpipe run`` to ``parser``."""
    parser.add_argument("config", metavar="CONFIG", help="campaign configuration (TOML)")
    parser.add_argument("--workers", type=int, default=None, metavar="N",
                        help="local worker processes (default: [run] workers, else 1; "
                             "0 runs everything in this process)")
    parser.add_argument("--scheduler", default=None, metavar="ADDRESS",
                        help="run the frame tasks on an existing Dask cluster, "
                             "e.g. tcp://host:8786 (default: [run] scheduler)")
    parser.add_argument("--rerun", action="store_true",
                        help="measure again frames already in the store with the same "
                             "file content and configuration")
    parser.add_argument("--no-progress", action="store_true",
                        help="do not draw progress bars")


def execute(args):
    """Run the campaign; print the summary; return the exit code.

    Returns 0 when the run completed, even with skipped frames; 2 for a configuration that
    cannot be used (checked before any frame is touched); 3 for a campaign store that is
    damaged or cannot be written; 4 when nothing could be measured (no night could be read, or
    every science frame was skipped); 1 when the results folder cannot be written (a file in
    its place, read-only, a full disk).
    """
    from photpipe.campaign.pipeline import run_campaign
    from photpipe.config import load_config

    if args.workers is not None and args.workers < 0:
        return fail("run", f"--workers must be 0 or more, got {args.workers}", CONFIG_PROBLEM)
    with Failures("run", CONFIG, store_problem(), Problem(ConnectionError, CONFIG_PROBLEM),
                  Problem(OSError, FAILED, "cannot write the results")) as outcome:
        config = load_config(args.config)
        summary = run_campaign(config, workers=args.workers, scheduler=args.scheduler,
                               rerun=args.rerun, progress=not args.no_progress,
                               echo=lambda line: print(line, flush=True))
    if outcome.code is not None:
        return outcome.code
    print()
    print(summary.format())
    unread = [n for n in summary.nights if not n.counts]
    if summary.nights and len(unread) == len(summary.nights):
        return fail("run", "none of the nights could be read; check the [[night]] paths", NO_DATA)
    if summary.measured == 0 and summary.reused == 0 and summary.kept == 0:
        return fail("run", "no science frame was measured (see 'skipped, and why' above)",
                    NO_DATA)
    lines = _headline(config, summary)
    if lines:
        print("\nheadline (errors are 1σ):")
        print("\n".join(f"  {line}" for line in lines))
    return OK


def _headline(config, summary):
    """The campaign's headline numbers, read back from the results; none if they cannot be."""
    from pathlib import Path

    from photpipe.campaign.report_inputs import read_inputs
    from photpipe.campaign.result_files import read_json
    from photpipe.report import headline_lines

    try:
        measurements, nucleus, extra = read_inputs(config)
        activity = read_json(Path(summary.results) / "activity.json", "activity result")
    except (OSError, ValueError) as exc:
        return [f"(no headline: {exc})"]
    report = Path(summary.results) / "report.html"
    return headline_lines(measurements=measurements, nucleus=nucleus,
                          rotation=extra.get("rotation"), size=extra.get("size"),
                          activity=activity, report=str(report) if report.is_file() else None)
