"""The size step of a campaign: nucleus radius, mass, momentum bound and active fraction.

Takes the ``[size]`` settings, the campaign's lightcurve and the rotation result (in memory),
writes ``<results>/size.json`` with a summary that states every assumption. `run_size_stage` is
what ``photpipe run`` and ``photpipe size`` call; the command alone reads the rotation result
from its file (`read_rotation_result`).
"""

import json
import math
from pathlib import Path

import numpy as np
from astropy import units as u

from photpipe.config import ConfigError, read_size
from photpipe.orbit.bound import acceleration_limit_from_fit
from photpipe.size import assess_nucleus, mean_absolute_magnitude, reduce_magnitude

from .result_files import read_ecsv, read_json, write_text

__all__ = ["run_size_stage", "read_lightcurve", "read_rotation_result"]

_NEEDED_COLUMNS = ("nucleus_mag", "nucleus_mag_err")
_GEOMETRY_COLUMNS = ("r_h_au", "delta_au", "phase_deg")


def read_lightcurve(path):
    """Read a lightcurve ECSV, naming the file in any error.

    Raises
    ------
    ValueError
        If the file is missing, unreadable, or lacks the magnitude columns.
    """
    path = Path(path)
    if not path.is_file():
        msg = (f"{path}: no lightcurve there; an H needs a lightcurve behind it (run the rotation "
               "stage first, or pass --lightcurve)")
        raise ValueError(msg)
    table = read_ecsv(path, "lightcurve")
    table.meta["path"] = str(path)
    return table


def _band(settings, table, name_of_file):
    if settings.band:
        return settings.band
    if "filter" in table.colnames:
        names = sorted({str(f) for f in table["filter"]})
        if len(names) == 1:
            return names[0]
    msg = f"{name_of_file}: say the band of the magnitudes as [size] band or [photometry] band"
    raise ConfigError(msg)


def _usable_rows(table, where):
    missing = [c for c in _NEEDED_COLUMNS if c not in table.colnames]
    if missing:
        msg = f"{where}: lightcurve lacks column(s) {missing}"
        raise ValueError(msg)
    keep = np.ones(len(table), dtype=bool)
    if "flags" in table.colnames:
        keep &= np.array(["upper_limit" not in str(f).split(",") for f in table["flags"]])
    keep &= np.isfinite(np.asarray(u.Quantity(table["nucleus_mag"]).value, dtype=float))
    rows = table[keep]
    if len(rows) == 0:
        msg = (f"{where}: no usable nucleus magnitudes ({len(table)} row(s), all missing or upper "
               "limits): an H needs a lightcurve behind it")
        raise ValueError(msg)
    return rows


def _plain(column, unit=None):
    q = column
    if isinstance(q, u.Quantity):
        return q.to_value(unit) if unit is not None else q.value
    return np.asarray(q, dtype=float)


def read_rotation_result(out_dir, rotation_path=None):
    """The rotation result of ``photpipe rotation``, read from its file (None when absent).

    Parameters
    ----------
    out_dir : str or path-like
        Results folder; ``rotation.json`` there is read when present.
    rotation_path : str or path-like, optional
        A rotation result to use instead (it must exist).

    Raises
    ------
    ValueError
        Naming the file, when ``rotation_path`` is missing or a file is not JSON.
    """
    path = Path(rotation_path) if rotation_path else Path(out_dir) / "rotation.json"
    if rotation_path and not path.is_file():
        msg = f"{path}: no rotation result there"
        raise ValueError(msg)
    return read_json(path, "rotation result")


def _reduced_magnitudes(rows, settings, where, notes):
    if "reduced_mag" in rows.colnames:
        notes.append("H from the lightcurve's reduced magnitudes m(1,1,0)")
        return _plain(rows["reduced_mag"])
    missing = [c for c in _GEOMETRY_COLUMNS if c not in rows.colnames]
    if missing:
        msg = f"{where}: lightcurve lacks geometry column(s) {missing} needed to reduce it"
        raise ValueError(msg)
    beta = settings.phase_coefficient
    notes.append(f"magnitudes reduced to r_h = Delta = 1 AU and zero phase with a linear "
                 f"phase coefficient of {beta.to_value(u.mag / u.deg):g} mag/deg (common "
                 "practice for nuclei)")
    return reduce_magnitude(_plain(rows["nucleus_mag"]), _plain(rows["r_h_au"]) * u.au,
                            _plain(rows["delta_au"]) * u.au, _plain(rows["phase_deg"]) * u.deg,
                            phase_coefficient=beta).to_value(u.mag)


def _absolute_magnitude(rows, reduced, rotation, notes):
    errors = _plain(rows["nucleus_mag_err"])
    period_h = None if rotation is None else rotation.get("period_h")
    if period_h is not None and math.isfinite(float(period_h)) and "mjd_utc_mid" in rows.colnames:
        times = _plain(rows["mjd_utc_mid"])
        if "light_time_s" in rows.colnames:
            times = times - _plain(rows["light_time_s"]) / 86400.0
        h = mean_absolute_magnitude(reduced, errors, method="harmonic", times=times * u.day,
                                    period=float(period_h) * u.h)
        notes.append(f"H is the constant term of a 4-harmonic Fourier fit in flux at the "
                     f"rotation period {float(period_h):g} h (light-time corrected times)")
    else:
        h = mean_absolute_magnitude(reduced, errors, method="flux-mean")
    if rotation is not None and rotation.get("amplitude_mag") is not None:
        notes.append(f"lightcurve amplitude {float(rotation['amplitude_mag']):g} mag: the radius "
                     "is that of the mean cross-section, not of the long axis")
    return h


def _activity_distance(rows, settings, notes):
    if settings.mass_loss_r_h is not None or "r_h_au" not in rows.colnames:
        return settings.mass_loss_r_h
    r_act = float(np.median(_plain(rows["r_h_au"])))
    notes.append(f"mass-loss rate taken to hold at the lightcurve's median r_h, {r_act:.3g} AU")
    return r_act * u.au


def _accel_limit(settings, out_dir, r_act, notes):
    # the typed [size] limit wins; else the limit of <out_dir>/orbit.json (photpipe orbit)
    if settings.accel_limit is not None:
        return settings.accel_limit, {"accel_limit_source": "[size] configuration",
                                      "accel_limit_confidence": None}
    path = Path(out_dir) / "orbit.json"
    fit = read_json(path, "orbit fit")
    if fit is None:
        return None, {}
    limit, prov = acceleration_limit_from_fit(fit.get("nongrav", {}), r_h=r_act,
                                              source=str(path))
    if limit is not None:
        notes.append(f"acceleration limit from the orbit fit ({path.name}, "
                     f"{100 * prov['accel_limit_confidence']:.0f} % confidence, "
                     f"{prov['accel_limit_law']} law at r_h {prov['accel_limit_r_h_au']:.3g} AU)")
    return limit, prov


def run_size_stage(config, lightcurve_table, out_dir, *, rotation=None):
    """Run the size stage on a lightcurve and write ``<out_dir>/size.json``.

    Parameters
    ----------
    config : dict
        A configuration from `photpipe.config.load_config`; uses ``[size]`` (with the band of
        ``[photometry]`` and the phase coefficient of ``[rotation]`` as its defaults).
    lightcurve_table : `~astropy.table.Table`
        The lightcurve (columns ``nucleus_mag, nucleus_mag_err, r_h_au, delta_au, phase_deg``,
        optional ``reduced_mag``, ``mjd_utc_mid``, ``light_time_s``, ``flags``).
    out_dir : str or path-like
        Results folder; ``size.json`` goes there.
    rotation : dict, optional
        The rotation step's result (a period makes H the mean of a Fourier fit over the
        rotation).

    Returns
    -------
    result : dict
        The `~photpipe.size.SizeResult` as a dict plus ``"summary"`` (text) and ``"path"``.

    Raises
    ------
    ConfigError
        For a bad ``[size]`` value (zero or negative albedo, density, acceleration, ...).
    ValueError
        For a lightcurve with no usable rows, or a bad value found by the size stage.
    """
    name_of_file = config.get("_file", "configuration")
    settings = read_size(config)
    if lightcurve_table is None:
        msg = "no lightcurve given: an H needs a lightcurve behind it"
        raise ValueError(msg)
    where = lightcurve_table.meta.get("path", "lightcurve")
    rows = _usable_rows(lightcurve_table, where)
    notes = []
    reduced = _reduced_magnitudes(rows, settings, where, notes)
    h = _absolute_magnitude(rows, reduced, rotation, notes)
    r_act = _activity_distance(rows, settings, notes)
    accel_limit, accel_provenance = _accel_limit(settings, out_dir, r_act, notes)
    result = assess_nucleus(
        h, band=_band(settings, rows, name_of_file), m_sun=settings.m_sun,
        albedo=settings.albedo, albedo_range=settings.albedo_range,
        albedo_prior=settings.albedo_prior, density_range=settings.density_range,
        mass_loss=settings.mass_loss, outflow_speed=settings.outflow_speed,
        accel_limit=accel_limit, efficiency=settings.momentum_efficiency,
        composition=settings.composition,
        activity_r_h=r_act,
        sublimation_geometry=settings.sublimation_geometry, bond_albedo=settings.bond_albedo,
        emissivity=settings.emissivity, n_samples=settings.n_samples,
        rng=np.random.default_rng(settings.seed), notes=notes,
    )
    out = result.to_dict()
    out.update(accel_provenance)
    out["summary"] = result.summary()
    path = Path(out_dir) / "size.json"
    write_text(path, json.dumps(out, indent=2, allow_nan=False) + "\n")
    out["path"] = str(path)
    return out
