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

__all__ = ["HELP", "add_arguments", "execute", "step_lines"]

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


def _rotation_lines(rot):
    status = rot.get("status")
    if status == "ambiguous":
        allowed = ", ".join(f"{p['period_h']:.3f} h (Δχ² {p['delta_chi2']:.1f})"
                            for p in rot.get("allowed_periods") or [])
        line = f"rotation: ambiguous; the data allow {allowed or 'several periods'}"
    elif status == "none" or rot.get("period_h") is None:
        line = "rotation: no period (the data cannot support one)"
    else:
        err = rot.get("period_err_h")
        line = f"rotation: period {rot['period_h']:.3f}" + \
            (f" ± {err:.3f} h (1σ)" if err is not None else " h")
    lines = [line]
    if rot.get("n_upper_limits_set_aside"):
        lines.append(f"  {rot['n_upper_limits_set_aside']} upper limit(s) set aside")
    return lines


def _size_lines(size):
    if size.get("radius_upper_limit_km") is not None:
        line = f"size: radius below {size['radius_upper_limit_km']:.3g} km (upper limit)"
    elif size.get("radius_km") is not None:
        line = (f"size: radius {size['radius_km']:.3g} km ({size.get('radius_lo_km', 0):.3g}-"
                f"{size.get('radius_hi_km', 0):.3g} km) at albedo {size.get('albedo')}")
    else:
        line = "size: no radius"
    if size.get("status"):
        line += f"; status {size['status']}"
    if size.get("reason"):
        line += f" ({size['reason']})"
    return [line]


def step_lines(results):
    """Lines for the screen about the campaign steps' results (rotation, size), if present.

    Examples
    --------
    >>> step_lines({"rotation": {"status": "ambiguous", "allowed_periods": [
    ...     {"period_h": 7.3, "delta_chi2": 0.0}, {"period_h": 14.6, "delta_chi2": 1.2}]}})
    ['rotation: ambiguous; the data allow 7.300 h (Δχ² 0.0), 14.600 h (Δχ² 1.2)']
    """
    lines = []
    if isinstance(results.get("rotation"), dict):
        lines += _rotation_lines(results["rotation"])
    if isinstance(results.get("size"), dict):
        lines += _size_lines(results["size"])
    return lines


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
    for line in step_lines(summary.step_results):
        print(line)
    unread = [n for n in summary.nights if not n.counts]
    if summary.nights and len(unread) == len(summary.nights):
        return fail("run", "none of the nights could be read; check the [[night]] paths", NO_DATA)
    if summary.measured == 0 and summary.reused == 0 and summary.kept == 0:
        return fail("run", "no science frame was measured (see 'skipped, and why' above)",
                    NO_DATA)
    print(f"\nresults are in {summary.results}")
    return OK
