"""``photpipe run CONFIG``: reduce every night of a campaign into its store and tables."""

import sys

__all__ = ["HELP", "add_arguments", "execute"]

HELP = "reduce every night a configuration names: calibrate, measure, store, summarise"

#: Exit codes.
OK, CONFIG_PROBLEM, STORE_PROBLEM, NOTHING_READ = 0, 2, 3, 4


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
    cannot be used, 3 for a damaged campaign store, 4 when none of the nights could be read.
    """
    from photpipe.campaign.pipeline import run_campaign
    from photpipe.campaign.store import StoreError
    from photpipe.cli.config import ConfigError, load_config

    if args.workers is not None and args.workers < 0:
        print(f"photpipe run: --workers must be 0 or more, got {args.workers}", file=sys.stderr)
        return CONFIG_PROBLEM
    try:
        config = load_config(args.config)
        summary = run_campaign(config, workers=args.workers, scheduler=args.scheduler,
                               rerun=args.rerun, progress=not args.no_progress,
                               echo=lambda line: print(line, flush=True))
    except ConfigError as exc:
        print(f"photpipe run: configuration problem: {exc}", file=sys.stderr)
        return CONFIG_PROBLEM
    except StoreError as exc:
        print(f"photpipe run: campaign store problem: {exc}", file=sys.stderr)
        return STORE_PROBLEM
    except ConnectionError as exc:
        print(f"photpipe run: {exc}", file=sys.stderr)
        return CONFIG_PROBLEM
    print()
    print(summary.format())
    unread = [n for n in summary.nights if not n.counts]
    if summary.nights and len(unread) == len(summary.nights):
        print("photpipe run: none of the nights could be read; check the [[night]] paths",
              file=sys.stderr)
        return NOTHING_READ
    print(f"\nresults are in {summary.results}")
    return OK
