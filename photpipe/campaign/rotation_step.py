"""The rotation step of a campaign: ``[rotation]`` settings -> period search -> result files.

`run_rotation_stage` is what ``photpipe run`` and ``photpipe rotation`` call.
"""

import json
import warnings
from pathlib import Path

import numpy as np
from astropy import units as u

from photpipe.rotation import (
    RotationWarning,
    periodogram_figure,
    phased_figure,
    reduce_lightcurve,
    residuals_figure,
    search_rotation,
)

from .config import ConfigError
from .result_files import write_atomic, write_text

__all__ = ["run_rotation_stage", "ROTATION_KEYS"]

#: ``[rotation]`` keys and their defaults.
ROTATION_KEYS = {
    "phase_law": "linear",
    "phase_coefficient_mag_per_deg": 0.035,
    "hg_slope": 0.15,
    "min_period_h": 2.0,
    "max_period_h": 60.0,
    "methods": ["lomb-scargle", "fourier", "pdm"],
    "n_bootstrap": 100,
    "seed": 0,
    "oversample": 10,
    "max_order": 4,
    "order_criterion": "bic",
    "lomb_scargle_nterms": 2,
    "pdm_bins": 10,
    "pdm_covers": 2,
    "prefer_double_peaked": True,
    "use_points": "auto",
    "coma_fraction": None,
    "amplitude_phase_slope_per_deg": 0.015,
}


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
        If a ``[rotation]`` key is unknown.
    LightcurveError
        If the lightcurve cannot constrain a period (the message says why).
    """
    section = dict(config.get("rotation", {}))
    unknown = sorted(set(section) - set(ROTATION_KEYS))
    if unknown:
        msg = (f"{config.get('_file', 'config')}: unknown [rotation] key(s) {unknown}; "
               f"known keys: {sorted(ROTATION_KEYS)}")
        raise ConfigError(msg)
    opt = {**ROTATION_KEYS, **section}
    reduced = reduce_lightcurve(
        table, phase_law=opt["phase_law"],
        phase_coefficient=opt["phase_coefficient_mag_per_deg"] * u.mag / u.deg,
        H_G_slope=opt["hg_slope"])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RotationWarning)
        result = search_rotation(
            reduced, min_period=opt["min_period_h"] * u.h, max_period=opt["max_period_h"] * u.h,
            methods=tuple(opt["methods"]), n_bootstrap=int(opt["n_bootstrap"]),
            rng=np.random.default_rng(opt["seed"]), oversample=int(opt["oversample"]),
            max_order=int(opt["max_order"]), order_criterion=opt["order_criterion"],
            ls_nterms=int(opt["lomb_scargle_nterms"]), pdm_bins=int(opt["pdm_bins"]),
            pdm_covers=int(opt["pdm_covers"]),
            prefer_double_peaked=bool(opt["prefer_double_peaked"]),
            use_points=opt["use_points"], coma_fraction=opt["coma_fraction"],
            amplitude_phase_slope=opt["amplitude_phase_slope_per_deg"] / u.deg)
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
