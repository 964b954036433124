"""``photpipe size``: nucleus radius, mass, momentum bound and active fraction from a lightcurve.

Reads the configuration's ``[size]`` section and the campaign's reduced lightcurve, writes
``<results>/size.json`` and prints a summary that states every assumption (the work is
`photpipe.campaign.size_step.run_size_stage`).
"""

import os
import warnings

from photpipe.campaign.size_step import read_lightcurve, read_rotation_result, run_size_stage
from photpipe.cli._errors import CONFIG, FAILED, NO_DATA, OK, Failures, Problem, fail
from photpipe.config import load_config

__all__ = ["HELP", "add_arguments", "execute"]

HELP = "nucleus radius and mass under stated albedo and density, momentum bound, active area"


def add_arguments(parser):
    """Add the command's arguments to ``parser``."""
    parser.add_argument("config", metavar="CONFIG", help="campaign configuration (TOML)")
    parser.add_argument("--lightcurve", metavar="PATH", default=None,
                        help="lightcurve ECSV (default: <results>/lightcurve.ecsv)")
    parser.add_argument("--rotation", metavar="PATH", default=None,
                        help="rotation result JSON (default: <results>/rotation.json, if present)")


def execute(args):
    """Run ``photpipe size``.

    Returns the exit code: 0 written, 2 a configuration problem, 4 no lightcurve yet, 1 any
    other problem (named), such as results that cannot be written.
    """
    with Failures("size", CONFIG, Problem((ValueError, TypeError), FAILED)) as outcome:
        config = load_config(args.config)
        out_dir = config["campaign"]["results"]
        lc_path = args.lightcurve or os.path.join(out_dir, "lightcurve.ecsv")
    if outcome.code is not None:
        return outcome.code
    if not os.path.isfile(lc_path):
        return fail("size", f"{lc_path}: no lightcurve there; an H needs a lightcurve behind "
                    "it (run 'photpipe run' first, or pass --lightcurve)", NO_DATA)
    with Failures("size", CONFIG, Problem((ValueError, TypeError), FAILED),
                  Problem(OSError, FAILED, "cannot write the results")) as outcome:
        table = read_lightcurve(lc_path)
        with warnings.catch_warnings():
            warnings.simplefilter("default")
            rotation = read_rotation_result(out_dir, args.rotation)
            out = run_size_stage(config, table, out_dir, rotation=rotation)
    if outcome.code is not None:
        return outcome.code
    print(out["summary"])
    print(f"written: {out['path']}")
    return OK
