"""The ``photpipe`` command: a table of sub-commands, each in a module of its own.

Each sub-command module defines ``HELP`` (one line), ``add_arguments(parser)`` and
``execute(args) -> int``. Modules are imported only when their command runs, so ``photpipe --help``
stays fast.
"""

import argparse
import importlib
import sys

from photpipe import __version__

__all__ = ["main", "COMMANDS"]

#: Sub-command name -> module that implements it.
COMMANDS = {
    "run": "photpipe.cli.run",
    "ephem": "photpipe.cli.ephem",
    "rotation": "photpipe.cli.rotation",
    "size": "photpipe.cli.size",
    "report": "photpipe.cli.report",
    "orbit": "photpipe.cli.orbit",
    "draft": "photpipe.cli.draft",
}


def _build_parser():
    parser = argparse.ArgumentParser(
        prog="photpipe",
        description="Comet photometry from raw CCD frames: calibration, Afρ, nucleus, spin, size.",
    )
    parser.add_argument("--version", action="version", version=f"photpipe {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, modname in COMMANDS.items():
        try:
            mod = importlib.import_module(modname)
        except ModuleNotFoundError as exc:
            if exc.name != modname:
                raise
            continue  # a stage whose command is not written yet
        p = sub.add_parser(name, help=mod.HELP, description=mod.HELP)
        mod.add_arguments(p)
        p.set_defaults(_execute=mod.execute)
    return parser


def main(argv=None):
    """Run the ``photpipe`` command line; return the process exit code."""
    parser = _build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    try:
        return int(args._execute(args) or 0)
    except KeyboardInterrupt:
        print("photpipe: interrupted; what was already stored is kept.", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
