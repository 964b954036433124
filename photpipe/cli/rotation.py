"""``photpipe rotation``: rotation period of the nucleus from the campaign lightcurve."""

from pathlib import Path

from photpipe.campaign.result_files import read_ecsv
from photpipe.campaign.rotation_step import run_rotation_stage
from photpipe.cli._errors import CONFIG, CONFIG_PROBLEM, FAILED, OK, Failures, Problem
from photpipe.config import load_config

__all__ = ["HELP", "add_arguments", "execute"]

HELP = "search the campaign lightcurve for the nucleus rotation period"


def add_arguments(parser):
    """Add the command's arguments to ``parser``."""
    parser.add_argument("config", help="TOML configuration of the campaign")
    parser.add_argument("--table", default=None,
                        help="lightcurve ECSV (default <results>/lightcurve.ecsv)")


def execute(args):
    """Run the command; return the exit code.

    Returns 0 when a result was written, 2 for a configuration or lightcurve file that cannot be
    read, 1 when the lightcurve cannot constrain a period or a ``[rotation]`` key is wrong.
    """
    with Failures("rotation", CONFIG, Problem(ValueError, CONFIG_PROBLEM)) as outcome:
        config = load_config(args.config)
        results = Path(config["campaign"]["results"])
        path = Path(args.table) if args.table else results / "lightcurve.ecsv"
        table = read_ecsv(path, "lightcurve")
    if outcome.code is not None:
        return outcome.code
    with Failures("rotation", CONFIG, Problem(ValueError, FAILED, str(path))) as outcome:
        data = run_rotation_stage(config, table, results)
    if outcome.code is not None:
        return outcome.code
    print(data["summary"])
    for text in data["warnings"]:
        print(f"caution: {text}")
    print(f"written: {data['files']['json']} and figures in {results}")
    return OK
