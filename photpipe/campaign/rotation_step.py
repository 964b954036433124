"""The rotation step of a campaign: ``[rotation]`` settings -> period search -> result files.

`run_rotation_stage` is what ``photpipe run`` and ``photpipe rotation`` call.
"""

import json
import warnings
from pathlib import Path

from photpipe.config import read_rotation
from photpipe.rotation import (
    RotationWarning,
    periodogram_figure,
    phased_figure,
    reduce_lightcurve,
    residuals_figure,
    search_rotation,
)
from photpipe.rotation.errors import LightcurveError, NoUsablePointsError

from .result_files import write_atomic, write_text

__all__ = ["run_rotation_stage"]

#: What a search writes besides ``rotation.json``.
_FIGURE_FILES = ("rotation_candidates.ecsv", "rotation_periodograms.png", "rotation_phased.png",
                 "rotation_residuals.png")


def run_rotation_stage(config, table, out_dir):
    """Run the rotation search on a lightcurve table and write its outputs.

    Parameters
    ----------
    config : dict
        The loaded configuration; only its ``[rotation]`` section is read.
    table : `~astropy.table.Table`
        The campaign lightcurve (``lightcurve.ecsv`` columns).
    out_dir : str or path-like
        Folder for ``rotation.json``, ``rotation_candidates.ecsv`` and the PNG figures.

    Returns
    -------
    result : dict
        The ``rotation.json`` content, plus ``"summary"`` (readable text) and ``"files"``.

    Raises
    ------
    ConfigError
        If a ``[rotation]`` key is unknown or its value cannot be used.
    LightcurveError
        If the lightcurve is malformed (a missing column, an unknown source). Data too few or
        too short to constrain a period are not an error: the result then has status
        ``"none"`` and says why in ``reason`` and ``headline``.
    """
    settings = read_rotation(config)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RotationWarning)
        # rows with bad errors are set aside with their reason, upper limits kept as limits
        try:
            reduced = reduce_lightcurve(table, phase_law=settings.phase_law,
                                        phase_coefficient=settings.phase_coefficient,
                                        H_G_slope=settings.hg_slope)
        except NoUsablePointsError as exc:
            return _no_period(str(exc), None, caught, out)
        try:
            result = search_rotation(reduced, **settings.search_options())
        except LightcurveError as exc:
            # too few detections, too short a baseline: no period, and the campaign goes on
            return _no_period(str(exc), reduced, caught, out)
    data = result.to_dict()
    data["warnings"] = [str(w.message) for w in caught if issubclass(w.category, RotationWarning)]
    files = {"json": out / "rotation.json", "candidates": out / "rotation_candidates.ecsv",
             "periodograms": out / "rotation_periodograms.png",
             "phased": out / "rotation_phased.png", "residuals": out / "rotation_residuals.png"}
    write_text(files["json"], json.dumps(data, indent=2) + "\n")
    write_atomic(files["candidates"],
                 lambda p: result.candidates.write(p, format="ascii.ecsv", overwrite=True))
    for key, make in (("periodograms", periodogram_figure), ("phased", phased_figure),
                      ("residuals", residuals_figure)):
        fig = make(result)
        write_atomic(files[key], lambda p, fig=fig: fig.savefig(p, format="png", dpi=110))
    data["summary"] = result.summary()
    data["files"] = {k: str(v) for k, v in files.items()}
    return data


def _no_period(reason, reduced, caught, out):
    """Write and return the ``rotation.json`` of a lightcurve that cannot constrain a period."""
    n_limits = 0 if reduced is None else int(reduced.upper_limit.sum())
    data = {
        "status": "none", "reason": reason,
        "headline": f"no rotation period: {reason}",
        "verdict_reasons": [reason], "allowed_periods": [], "period_h": None,
        "period_err_h": None, "amplitude_mag": None, "amplitude_err_mag": None,
        "axial_ratio_min": None, "method": None,
        "n_points": 0 if reduced is None else int(reduced.n_points - n_limits),
        "n_upper_limits_set_aside": n_limits,
        "set_aside": {} if reduced is None else reduced.set_aside_counts,
        "flags": ["period_none"] + (["upper_limits_set_aside"] if n_limits else []),
        "warnings": [str(w.message) for w in caught if issubclass(w.category, RotationWarning)],
    }
    # figures of an earlier search would show a period this result does not have
    for name in _FIGURE_FILES:
        (out / name).unlink(missing_ok=True)
    path = out / "rotation.json"
    write_text(path, json.dumps(data, indent=2) + "\n")
    data["summary"] = data["headline"]
    data["files"] = {"json": str(path)}
    return data
