"""The size step of a campaign: nucleus radius, mass, momentum bound and active fraction.

Takes the ``[size]`` settings, the campaign's lightcurve and the rotation result (in memory),
writes ``<results>/size.json`` with a summary that states every assumption. `run_size_stage` is
what ``photpipe run`` and ``photpipe size`` call; the command alone reads the rotation result
from its file (`read_rotation_result`).
"""

import json
import warnings
from pathlib import Path

import numpy as np
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.config import ConfigError, read_filters, read_size
from photpipe.orbit.bound import acceleration_limit_from_fit
from photpipe.size import (
    CALIBRATION_ERR_MAG,
    absolute_magnitude_limit,
    assess_nucleus,
    assess_nucleus_limit,
    count_detections,
    fit_phase_coefficient,
    h_method_for_rotation,
    mean_absolute_magnitude,
    phase_coefficient_assumed,
    reduce_magnitude,
)

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


def _one_filter(table, settings, config, where, notes):
    """The lightcurve rows of one filter, and that filter's band (None: one filter only).

    Magnitudes in two filters differ by the nucleus's colour, so an H from both would be
    neither: the rows of ``[size] band`` are kept (through ``[filters]``), else those of the
    most frequent filter.
    """
    if "filter" not in table.colnames or len(table) == 0:
        return table, None
    names = np.array([str(f).strip() for f in table["filter"]])
    kinds, counts = np.unique(names, return_counts=True)
    if len(kinds) < 2:
        return table, None
    filter_map = read_filters(config)

    def band_of(name):
        entry = filter_map.lookup(name)
        return entry.band if entry is not None else name

    if settings.band:
        keep = [k for k in kinds if band_of(k).casefold() == settings.band.casefold()]
        if not keep:
            msg = (f"{where}: the lightcurve's filters ({', '.join(kinds)}) hold none in band "
                   f"{settings.band!r} ([size] band)")
            raise ValueError(msg)
    else:
        keep = [str(kinds[int(np.argmax(counts))])]
    chosen = np.isin(names, keep)
    notes.append(f"H from the {', '.join(keep)} rows only ({np.count_nonzero(chosen)} of "
                 f"{len(table)}): magnitudes in other filters differ by the nucleus's colour")
    return table[chosen], band_of(keep[0])


def _band(settings, table, name_of_file, chosen=None):
    if settings.band:
        return settings.band
    if chosen:
        return chosen
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


def _emission_times(rows):
    if "mjd_utc_mid" not in rows.colnames:
        return None
    times = _plain(rows["mjd_utc_mid"])
    if "light_time_s" in rows.colnames:
        times = times - _plain(rows["light_time_s"]) / 86400.0
    return times


def _absolute_magnitude(rows, reduced, rotation, notes):
    errors = _plain(rows["nucleus_mag_err"])
    # the rotation model only for a firm period; else an error covering the rotation unknown
    method, period = h_method_for_rotation(rotation)
    times = _emission_times(rows)
    if method == "harmonic" and times is not None:
        h = mean_absolute_magnitude(reduced, errors, method="harmonic", times=times * u.day,
                                    period=period, shared_err=CALIBRATION_ERR_MAG)
        notes.append(f"H is the constant term of a 4-harmonic Fourier fit in flux at the "
                     f"rotation period {period.to_value(u.h):g} h (light-time corrected times)")
    else:
        h = mean_absolute_magnitude(reduced, errors, method="rotation-unknown",
                                    times=None if times is None else times * u.day,
                                    shared_err=CALIBRATION_ERR_MAG)
        status = "no rotation result" if not rotation else (
            f"rotation period {rotation.get('status', 'unknown')}")
        notes.append(f"H without a rotation model ({status}): the mean flux of all points, "
                     "its error covering the unknown rotational sampling (the scatter of the "
                     "nightly means from 4 nights on, else the rotational spread over "
                     "sqrt(3 n_nights))")
    notes.append(f"the H error holds {CALIBRATION_ERR_MAG:g} mag shared by every frame (the "
                 "catalogue zero point and colour), which averaging frames does not reduce")
    if rotation is not None and rotation.get("amplitude_mag") is not None:
        notes.append(f"lightcurve amplitude {float(rotation['amplitude_mag']):g} mag: the radius "
                     "is that of the mean cross-section, not of the long axis")
    return h


def _phase_coefficient(rows, settings):
    """The phase coefficient behind H: fitted where the campaign's phase span allows."""
    if "phase_deg" not in rows.colnames:
        return None
    nominal = settings.phase_coefficient.to_value(u.mag / u.deg)
    alpha = _plain(rows["phase_deg"])
    if not all(c in rows.colnames for c in ("r_h_au", "delta_au")) or "night" not in \
            rows.colnames:
        return phase_coefficient_assumed(nominal, float(np.mean(alpha)),
                                         value_range=settings.phase_coefficient_range)
    unit_distance = (_plain(rows["nucleus_mag"])
                     - 5 * np.log10(_plain(rows["r_h_au"]) * _plain(rows["delta_au"])))
    return fit_phase_coefficient(unit_distance, _plain(rows["nucleus_mag_err"]), alpha,
                                 np.asarray(rows["night"]).astype(str), nominal=nominal,
                                 value_range=settings.phase_coefficient_range,
                                 min_span_deg=settings.phase_fit_min_span_deg)


def _limit_result(table, settings, band, count, where, notes):
    """Radius upper limit from every frame (limits and the few detections).

    ``notes`` holds what was said before (the filter chosen) and gains this path's own notes.
    """
    finite = np.isfinite(_plain(table["nucleus_mag"]))
    rows = table[finite]
    reduced = _reduced_magnitudes(rows, settings, where, notes)
    limit = _upper_limit_mask(rows)
    h_lim = absolute_magnitude_limit(reduced, _plain(rows["nucleus_mag_err"]), limit)
    phase = _phase_coefficient(rows, settings)
    if phase is not None and phase.fitted:
        phase = phase_coefficient_assumed(phase.nominal, phase.mean_phase_deg,
                                          value_range=settings.phase_coefficient_range)
    notes.append("H limit: mean of the frames' flux bounds (limits as given, detections at "
                 "flux + 2 sigma)")
    return assess_nucleus_limit(h_lim, band=band, reason=count.reason, n_points=len(rows),
                                m_sun=settings.m_sun, albedo=settings.albedo,
                                albedo_range=settings.albedo_range, phase=phase, notes=notes)


def _upper_limit_mask(table):
    if "flags" not in table.colnames:
        return np.zeros(len(table), dtype=bool)
    return np.array(["upper_limit" in str(f).split(",") for f in table["flags"]])


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
    notes = []
    lightcurve_table, chosen_band = _one_filter(lightcurve_table, settings, config, where, notes)
    finite = lightcurve_table[np.isfinite(_plain(lightcurve_table["nucleus_mag"]))] \
        if "nucleus_mag" in lightcurve_table.colnames else lightcurve_table
    count = count_detections(_upper_limit_mask(finite), min_detections=settings.min_detections,
                             min_fraction=settings.min_detected_fraction)
    if len(finite) and not count.enough:
        result = _limit_result(lightcurve_table, settings,
                               _band(settings, finite, name_of_file, chosen_band), count, where,
                               notes)
        return _write(result, out_dir)
    rows = _usable_rows(lightcurve_table, where)
    reduced = _reduced_magnitudes(rows, settings, where, notes)
    with warnings.catch_warnings(record=True) as caught:
        # poor but usable (a large H error, a mass below the momentum bound): kept, said
        warnings.simplefilter("always", PoorResultWarning)
        result, provenance = _assess(rows, reduced, rotation, settings, name_of_file, notes,
                                     out_dir, chosen_band)
    return _write(result, out_dir, [str(w.message) for w in caught
                                    if issubclass(w.category, PoorResultWarning)], provenance)


def _assess(rows, reduced, rotation, settings, name_of_file, notes, out_dir, chosen_band=None):
    h = _absolute_magnitude(rows, reduced, rotation, notes)
    r_act = _activity_distance(rows, settings, notes)
    accel_limit, accel_provenance = _accel_limit(settings, out_dir, r_act, notes)
    return assess_nucleus(
        h, band=_band(settings, rows, name_of_file, chosen_band), m_sun=settings.m_sun,
        phase=_phase_coefficient(rows, settings), h_err_limit=settings.h_err_limit_mag,
        albedo=settings.albedo, albedo_range=settings.albedo_range,
        albedo_prior=settings.albedo_prior, density_range=settings.density_range,
        mass_loss=settings.mass_loss, outflow_speed=settings.outflow_speed,
        accel_limit=accel_limit, efficiency=settings.momentum_efficiency,
        composition=settings.composition,
        activity_r_h=r_act,
        sublimation_geometry=settings.sublimation_geometry, bond_albedo=settings.bond_albedo,
        emissivity=settings.emissivity, n_samples=settings.n_samples,
        rng=np.random.default_rng(settings.seed), notes=notes,
    ), accel_provenance


def _write(result, out_dir, caught=(), provenance=None):
    out = result.to_dict()
    out["warnings"] = list(caught)
    out.update(provenance or {})
    out["summary"] = result.summary()
    path = Path(out_dir) / "size.json"
    write_text(path, json.dumps(out, indent=2, allow_nan=False) + "\n")
    out["path"] = str(path)
    return out
