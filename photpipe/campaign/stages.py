"""Which stages this installation can run, found from their public functions.

The pipeline runs every stage that is available and says plainly which are not (a stage module
that is absent, or that lacks its entry function, or that fails to import), so a partial
installation still reduces what it can and never fills a missing stage with made-up numbers.
"""

import importlib
from dataclasses import dataclass

__all__ = ["STAGES", "FRAME_STAGES", "StageStatus", "stage_status", "stage_function"]

#: Stage name -> (module, public functions the pipeline calls), in the order they run.
STAGES = {
    "calibration": ("photpipe.frames", ("scan_night", "plan_calibrations", "build_masters",
                                        "calibrate_frame", "write_calibrated")),
    "geometry": ("photpipe.campaign.geometry_settings", ("location_for_night",
                                                         "geometry_at_location")),
    "photometry": ("photpipe.photometry", ("measure_comet_frame",)),
    "nucleus": ("photpipe.nucleus", ("measure_psf", "fit_nucleus", "coma_only_afrho")),
    "rotation": ("photpipe.campaign.rotation_step", ("run_rotation_stage",)),
    "size": ("photpipe.campaign.size_step", ("run_size_stage",)),
    "report": ("photpipe.campaign.report_step", ("run_report_stage",)),
}

#: Stages that run on each science frame (in a worker); the others run once per campaign.
FRAME_STAGES = ("calibration", "geometry", "photometry", "nucleus")


@dataclass(frozen=True)
class StageStatus:
    """Whether a stage can run, and if not, why.

    Attributes
    ----------
    name : str
    available : bool
    reason : str
        Empty when available; otherwise one line for the summary.
    """

    name: str
    available: bool
    reason: str = ""

    def __str__(self):
        return f"{self.name}: {'available' if self.available else 'not available: ' + self.reason}"


def stage_status(name):
    """Return the `StageStatus` of stage ``name``.

    Examples
    --------
    >>> stage_status("calibration").available
    True
    """
    modname, functions = STAGES[name]
    try:
        module = importlib.import_module(modname)
    except ModuleNotFoundError as exc:
        if exc.name and modname.startswith(exc.name):
            return StageStatus(name, False, f"module {modname} is not installed")
        return StageStatus(name, False, f"module {modname} cannot be imported: {exc}")
    except Exception as exc:  # noqa: BLE001 - a broken stage module must not stop the others
        return StageStatus(name, False, f"module {modname} fails to import: "
                                        f"{type(exc).__name__}: {exc}")
    missing = [f for f in functions if not callable(getattr(module, f, None))]
    if missing:
        return StageStatus(name, False, f"{modname} has no {', '.join(missing)}")
    return StageStatus(name, True)


def stage_function(name, function):
    """Return ``function`` of stage ``name`` (the stage must be available)."""
    modname, _ = STAGES[name]
    return getattr(importlib.import_module(modname), function)
