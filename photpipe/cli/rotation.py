"""``photpipe rotation``: rotation period of the nucleus from the campaign lightcurve."""

from pathlib import Path

from photpipe.campaign.result_files import read_ecsv
from photpipe.campaign.rotation_step import run_rotation_stage
from photpipe.cli._errors import CONFIG, FAILED, NO_DATA, OK, Failures, Problem, fail
from photpipe.config import load_config

__all__ = ["HELP", "add_arguments", "execute"]

HELP = "search the campaign lightcurve for the nucleus rotation period"

#: Results that cannot be written (a file in the folder's place, read-only, a full disk).
CANNOT_WRITE = Problem(OSError, FAILED, "cannot write the results")


def add_arguments(parser):
    """Add the command's arguments to ``parser``."""
    parser.add_argument("config", help="TOML configuration of the campaign")
    parser.add_argument("--table", default=None,
                        help="lightcurve ECSV (default <results>/lightcurve.ecsv)")


def execute(args):
    """Run the command; return the exit code.

    Returns 0 when a result was written, 2 for a configuration problem, 4 when there is no
    lightcurve yet, 1 when the lightcurve cannot be read or lacks a column, or the results cannot
    be written. Data too few to constrain a period give 0 and a result of status "none".
    """
    with Failures("rotation", CONFIG, Problem(ValueError, FAILED)) as outcome:
        config = load_config(args.config)
        results = Path(config["campaign"]["results"])
        path = Path(args.table) if args.table else results / "lightcurve.ecsv"
        if path.is_file():
            table = read_ecsv(path, "lightcurve")
    if outcome.code is not None:
        return outcome.code
    if not path.is_file():
        return fail("rotation", f"{path}: no lightcurve there; run 'photpipe run' first",
                    NO_DATA)
    with Failures("rotation", CONFIG, Problem(ValueError, FAILED, str(path)),
                  CANNOT_WRITE) as outcome:
        data = run_rotation_stage(config, table, results)
    if outcome.code is not None:
        return outcome.code
    print(data["summary"])
    for text in data["warnings"]:
        print(f"caution: {text}")
    print(f"written: {data['files']['json']} and figures in {results}")
    return OK
