"""``photpipe draft``: a commented first configuration from a folder of frames.

Reads the headers of every FITS file below FOLDER (and the column names of a reference-star
catalogue, if given) and writes a TOML file with what it could read filled in and what the
user must still give marked ``TO SUPPLY`` (the work is `photpipe.frames.survey_folder` and
`photpipe.campaign.draft_step.draft_configuration`).
"""

import os

from photpipe.cli._errors import FAILED, NO_DATA, OK, Failures, Problem, fail

__all__ = ["HELP", "add_arguments", "execute"]

HELP = "draft a commented configuration from a folder of frames (and a catalogue)"


def add_arguments(parser):
    """Add the command's arguments to ``parser``."""
    parser.add_argument("folder", metavar="FOLDER", help="folder holding the nights' frames")
    parser.add_argument("--catalogue", metavar="FILE", default=None,
                        help="reference-star catalogue (any table astropy reads)")
    parser.add_argument("--output", metavar="PATH", default="campaign.toml",
                        help="configuration to write (default campaign.toml); never overwritten")


def execute(args):
    """Run ``photpipe draft``.

    Returns the exit code: 0 written, 4 no frames found, 1 any other problem (named).
    """
    from astropy.table import QTable

    from photpipe._files import replacing
    from photpipe.campaign.draft_step import draft_configuration
    from photpipe.frames import survey_folder

    if not os.path.isdir(args.folder):
        return fail("draft", f"{args.folder}: no such folder", FAILED)
    if os.path.exists(args.output):
        return fail("draft", f"{args.output}: exists; give another --output", FAILED)
    with Failures("draft", Problem((OSError, ValueError), FAILED)) as outcome:
        survey = survey_folder(args.folder)
        colnames = []
        if args.catalogue:
            colnames = QTable.read(args.catalogue, format="ascii" if args.catalogue.lower()
                                   .endswith((".txt", ".dat")) else None).colnames
        text = draft_configuration(survey, catalogue=args.catalogue, catalogue_colnames=colnames)
        if survey.nights:
            with replacing(args.output, mode=0o644) as tmp, open(tmp, "w",
                                                                 encoding="utf-8") as fh:
                fh.write(text)
    if outcome.code is not None:
        return outcome.code
    if not survey.nights:
        return fail("draft", f"{args.folder}: no readable FITS frames found", NO_DATA)
    n = sum(survey.nights.values())
    todo = text.count("TO SUPPLY")
    print(f"{n} frames in {len(survey.nights)} folders, {len(survey.cameras)} camera(s); "
          f"{todo} value(s) to supply")
    print(f"written: {args.output}")
    return OK
