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

from .result_files import write_atomic, write_text

__all__ = ["run_rotation_stage"]


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
        If the lightcurve cannot constrain a period (the message says why).
    """
    settings = read_rotation(config)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RotationWarning)
        # rows with bad errors are set aside with their reason, upper limits kept as limits
        reduced = reduce_lightcurve(table, phase_law=settings.phase_law,
                                    phase_coefficient=settings.phase_coefficient,
                                    H_G_slope=settings.hg_slope)
        result = search_rotation(reduced, **settings.search_options())
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
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
