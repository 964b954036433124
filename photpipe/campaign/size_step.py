"""The size step of a campaign: nucleus radius, mass, momentum bound and active fraction.

Reads the configuration's ``[size]`` section and the campaign's reduced lightcurve, writes
``<results>/size.json`` with a summary that states every assumption. `run_size_stage` is what
``photpipe run`` and ``photpipe size`` call.
"""

import json
import math
from pathlib import Path

import numpy as np
from astropy import units as u

from photpipe.size import assess_nucleus, mean_absolute_magnitude, reduce_magnitude

from .config import ConfigError, number_setting
from .result_files import read_ecsv, read_json, write_text

__all__ = ["run_size_stage", "read_lightcurve"]

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


def _section_value(size, key, name_of_file, *, positive=False, default=None):
    return number_setting(size, key, f"{name_of_file}: [size]", default=default,
                          low=0.0 if positive else None)


def _pair(size, key, name_of_file, default=None):
    value = size.get(key, default)
    if value is None:
        return None
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError) as exc:
        msg = f"{name_of_file}: [size] {key} must be a [lo, hi] pair of numbers, got {value!r}"
        raise ConfigError(msg) from exc
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo <= hi):
        msg = f"{name_of_file}: [size] {key} must be positive with lo <= hi, got [{lo}, {hi}]"
        raise ConfigError(msg)
    return lo, hi


def _accel_limit(size, name_of_file):
    units = {"nongrav_accel_limit_m_s2": u.m / u.s**2,
             "nongrav_accel_limit_m_day2": u.m / u.day**2,
             "nongrav_accel_limit_au_day2": u.au / u.day**2}
    given = [k for k in units if size.get(k) is not None]
    if len(given) > 1:
        msg = f"{name_of_file}: [size] give one acceleration limit, not {given}"
        raise ConfigError(msg)
    if not given:
        return None
    key = given[0]
    return _section_value(size, key, name_of_file, positive=True) * units[key]


def _band(config, table, name_of_file):
    band = config["size"].get("band") or config.get("photometry", {}).get("band")
    if band:
        return str(band)
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


def _read_rotation(out_dir, rotation_path):
    path = Path(rotation_path) if rotation_path else Path(out_dir) / "rotation.json"
    if rotation_path and not path.is_file():
        msg = f"{path}: no rotation result there"
        raise ValueError(msg)
    return read_json(path, "rotation result")


def run_size_stage(config, lightcurve_table, out_dir, *, rotation_path=None):
    """Run the size stage on a lightcurve and write ``<out_dir>/size.json``.

    Parameters
    ----------
    config : dict
        A configuration from `photpipe.campaign.config.load_config`; uses ``[size]``, the band of
        ``[photometry]`` and the phase coefficient of ``[rotation]``.
    lightcurve_table : `~astropy.table.Table`
        The lightcurve (columns ``nucleus_mag, nucleus_mag_err, r_h_au, delta_au, phase_deg``,
        optional ``reduced_mag``, ``mjd_utc_mid``, ``light_time_s``, ``flags``).
    out_dir : str or path-like
        Results folder; ``size.json`` goes there and ``rotation.json`` is read from it when
        present (a period makes H the mean of a Fourier fit over the rotation).
    rotation_path : str or path-like, optional
        A rotation result to use instead of ``<out_dir>/rotation.json``.

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
    size = dict(config.get("size", {}))
    if lightcurve_table is None:
        msg = "no lightcurve given: an H needs a lightcurve behind it"
        raise ValueError(msg)
    where = lightcurve_table.meta.get("path", "lightcurve")
    rows = _usable_rows(lightcurve_table, where)
    notes = []

    beta = _section_value(size, "phase_coefficient_mag_per_deg", name_of_file, default=config.get(
        "rotation", {}).get("phase_coefficient_mag_per_deg", 0.035))
    if "reduced_mag" in rows.colnames:
        reduced = _plain(rows["reduced_mag"])
        notes.append("H from the lightcurve's reduced magnitudes m(1,1,0)")
    else:
        missing = [c for c in _GEOMETRY_COLUMNS if c not in rows.colnames]
        if missing:
            msg = f"{where}: lightcurve lacks geometry column(s) {missing} needed to reduce it"
            raise ValueError(msg)
        reduced = reduce_magnitude(_plain(rows["nucleus_mag"]), _plain(rows["r_h_au"]) * u.au,
                                   _plain(rows["delta_au"]) * u.au,
                                   _plain(rows["phase_deg"]) * u.deg,
                                   phase_coefficient=beta * u.mag / u.deg).to_value(u.mag)
        notes.append(f"magnitudes reduced to r_h = Delta = 1 AU and zero phase with a linear "
                     f"phase coefficient of {beta:g} mag/deg (common practice for nuclei)")
    errors = _plain(rows["nucleus_mag_err"])

    rotation = _read_rotation(out_dir, rotation_path)
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

    albedo = _section_value(size, "albedo", name_of_file, positive=True, default=0.04)
    albedo_range = _pair(size, "albedo_range", name_of_file)
    density = _pair(size, "density_range_g_cm3", name_of_file, default=(0.3, 1.0))
    q = _section_value(size, "mass_loss_kg_s", name_of_file, positive=True)
    v = _section_value(size, "outflow_speed_m_s", name_of_file, positive=True)
    a = _accel_limit(size, name_of_file)
    eta = _section_value(size, "momentum_efficiency", name_of_file, positive=True, default=1.0)
    r_act = _section_value(size, "mass_loss_r_h_au", name_of_file, positive=True)
    if r_act is None and "r_h_au" in rows.colnames:
        r_act = float(np.median(_plain(rows["r_h_au"])))
        notes.append(f"mass-loss rate taken to hold at the lightcurve's median r_h, {r_act:.3g} AU")
    composition = size.get("composition")
    seed = size.get("seed", 20261202)
    m_sun = _section_value(size, "m_sun", name_of_file)

    result = assess_nucleus(
        h, band=_band(config, rows, name_of_file), m_sun=m_sun, albedo=albedo,
        albedo_range=albedo_range, albedo_prior=size.get("albedo_prior", "uniform"),
        density_range=density * (u.g / u.cm**3),
        mass_loss=None if q is None else q * u.kg / u.s,
        outflow_speed=None if v is None else v * u.m / u.s, accel_limit=a, efficiency=eta,
        composition=None if composition is None else dict(composition),
        activity_r_h=None if r_act is None else r_act * u.au,
        sublimation_geometry=size.get("sublimation_geometry", "subsolar"),
        bond_albedo=_section_value(size, "bond_albedo", name_of_file, default=0.01),
        emissivity=_section_value(size, "emissivity", name_of_file, default=0.9),
        n_samples=int(size.get("n_samples", 100_000)), rng=np.random.default_rng(seed),
        notes=notes,
    )
    out = result.to_dict()
    out["summary"] = result.summary()
    path = Path(out_dir) / "size.json"
    write_text(path, json.dumps(out, indent=2, allow_nan=False) + "\n")
    out["path"] = str(path)
    return out
