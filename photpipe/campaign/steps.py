"""The once-per-campaign steps, in the order of the data: rotation -> activity -> size -> report.

Each step takes the results of the ones before it in memory (the size step gets the rotation
result, the report gets all of them); nothing is read back from files. A step that fails is
named with its reason, and the steps after it go on with what there is.
"""

import logging
import warnings
from dataclasses import dataclass, field

from photpipe._records import Skipped

from .activity_step import run_activity_stage
from .report_step import run_report_stage
from .rotation_step import run_rotation_stage
from .size_step import run_size_stage

__all__ = ["StepResults", "run_campaign_steps"]

log = logging.getLogger("photpipe.campaign")

_EMPTY = "the lightcurve is empty: no nucleus or small-aperture magnitude was measured"


@dataclass
class StepResults:
    """What the campaign steps returned, by step name, and what they could not do."""

    results: dict = field(default_factory=dict)
    skipped: list = field(default_factory=list)
    outputs: list = field(default_factory=list)


def _run_one(name, work, outcome, echo):
    """Run one step; keep its result, or its failure as a skip; echo its warnings."""
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            result = work()
        for w in caught:
            echo(f"{name}: {w.category.__name__}: {w.message}")
    except Exception as exc:  # noqa: BLE001 - a campaign step failing keeps the rest
        reason = f"{type(exc).__name__}: {exc}"
        outcome.skipped.append(Skipped(name, name, reason))
        echo(f"{name}: could not run: {reason}")
        log.debug("%s step traceback", name, exc_info=True)
        return None
    outcome.results[name] = result
    return result


def run_campaign_steps(config, lightcurve, measurements, nucleus, out_dir, *, echo=print,
                       sources=()):
    """Run rotation, activity, size and report on the campaign's tables.

    Parameters
    ----------
    config : dict
        A loaded configuration.
    lightcurve, measurements, nucleus : `~astropy.table.Table`
        The campaign's lightcurve, measurement rows and nucleus fits.
    out_dir : str or path-like
        The results folder.
    echo : callable, optional
        Where the steps' one-line accounts go.
    sources : sequence of str, optional
        Where the tables came from (for the report's notes).

    Returns
    -------
    StepResults
        ``results``: ``rotation`` (dict), ``activity``
        (`~photpipe.campaign.activity_step.ActivityOutcome`), ``size`` (dict), ``report``
        (path) for the steps that ran.
    """
    outcome = StepResults()
    has_lightcurve = lightcurve is not None and len(lightcurve) > 0
    rotation = None
    if has_lightcurve:
        rotation = _run_one("rotation", lambda: run_rotation_stage(config, lightcurve, out_dir),
                            outcome, echo)
    else:
        outcome.skipped.append(Skipped("rotation", "rotation", _EMPTY))
    activity = _run_one("activity", lambda: run_activity_stage(config, measurements, out_dir),
                        outcome, echo)
    if has_lightcurve:
        _run_one("size", lambda: run_size_stage(config, lightcurve, out_dir, rotation=rotation),
                 outcome, echo)
    else:
        outcome.skipped.append(Skipped("size", "size", _EMPTY))
    extra = {k: outcome.results[k] for k in ("rotation", "size") if k in outcome.results}
    extra["sources"] = list(sources)
    _run_one("report", lambda: run_report_stage(config, measurements, nucleus, extra, out_dir,
                                                activity=activity), outcome, echo)
    return outcome
