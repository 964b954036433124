"""The headline of a campaign: its main numbers with their errors and caveats, a few lines long.

Printed at the end of ``photpipe run`` and shown at the top of the report as "what to look at
first". Built from plain data: the measurement and nucleus tables and the result dicts of the
rotation, size and activity steps (as written to their JSON files).
"""

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.activity.columns import DETECTION_SIGMA
from photpipe.flags import INFORMATIONAL, split_flags
from photpipe.report.numbers import value_range, with_error

__all__ = ["headline_lines", "nightly_afrho", "night_date", "size_line", "REFERENCE_RHO"]

#: Aperture radius at which A(0)fρ is quoted (the aperture nearest to it is used).
REFERENCE_RHO = 10_000 * u.km


def _floats(table, name, unit=None):
    col = table[name]
    if isinstance(col, u.Quantity):
        return col.to_value(unit) if unit is not None else col.value
    values = np.asarray(col, dtype=float)
    if unit is not None and getattr(col, "unit", None) is not None:
        return (values * col.unit).to_value(unit)
    return values


def night_date(mjd):
    """The UTC date (YYYY-MM-DD) of the middle of a night's frames.

    Examples
    --------
    >>> night_date([61375.09, 61375.27])
    '2026-12-01'
    """
    return Time(float(np.median(mjd)), format="mjd", scale="utc").iso[:10]


def nightly_afrho(measurements, *, rho=REFERENCE_RHO, column="a0frho_cm"):
    """Weighted mean Afρ per night in the aperture nearest ``rho``.

    The error is that of the weighted mean, scaled up by sqrt(χ²/dof) when the frames of a
    night scatter more than their errors say (common practice).

    Returns
    -------
    rows : list of (str, float, float, float, int)
        Night date (UTC date of its middle frame; nights split at 12 h UTC), Afρ (cm), its
        error (cm), aperture (km), frames.

    Examples
    --------
    >>> from photpipe.activity.synthetic import simulate_campaign_tables
    >>> meas, _, _ = simulate_campaign_tables(seed=0, frames_per_night=2)
    >>> len(nightly_afrho(meas)) > 3
    True
    """
    rho_all = _floats(measurements, "rho_km", u.km)
    if not np.any(np.isfinite(rho_all)):
        return []
    target = u.Quantity(rho, u.km).value
    chosen = rho_all[np.nanargmin(np.abs(rho_all - target))]
    rows = np.abs(rho_all - chosen) <= 1e-3 * chosen
    a = _floats(measurements, column, u.cm)[rows]
    ae = _floats(measurements, column.replace("_cm", "_err_cm"), u.cm)[rows]
    mjd = _floats(measurements, "mjd_utc_mid", u.day)[rows]
    night = np.floor(mjd - 0.5)
    out = []
    for n in np.unique(night[np.isfinite(night)]):
        sel = (night == n) & np.isfinite(a) & np.isfinite(ae) & (ae > 0)
        if not np.any(sel):
            continue
        w = 1.0 / ae[sel] ** 2
        mean = float(np.sum(w * a[sel]) / np.sum(w))
        err = float(1.0 / np.sqrt(np.sum(w)))
        k = int(np.count_nonzero(sel))
        if k > 1:
            chi2 = float(np.sum(w * (a[sel] - mean) ** 2)) / (k - 1)
            err *= max(1.0, np.sqrt(chi2))
        out.append((night_date(mjd[night == n]), mean, err, float(chosen), k))
    return out


def _nucleus_line(nucleus):
    if nucleus is None or len(nucleus) == 0:
        return []
    m = _floats(nucleus, "nucleus_mag", u.mag)
    limit = np.array(["upper_limit" in split_flags(str(f)) for f in nucleus["flags"]]) \
        if "flags" in nucleus.colnames else np.zeros(len(nucleus), bool)
    det = np.isfinite(m) & ~limit
    line = "nucleus magnitude: "
    if np.any(det):
        line += (f"{value_range(np.min(m[det]), np.max(m[det]), 'mag')} over "
                 f"{np.count_nonzero(det)} frames")
    else:
        line += "not detected in any frame"
    if np.any(limit):
        line += f"; {np.count_nonzero(limit)} frame(s) give only an upper limit"
    return [line]


def _rotation_line(rot):
    if not rot:
        return []
    status = rot.get("status")
    allowed = rot.get("allowed_periods") or []
    if status == "ambiguous":
        periods = ", ".join(f"{p['period_h']:.3f} h" for p in allowed[:4] if "period_h" in p)
        return [f"rotation period: ambiguous{' (allowed: ' + periods + ')' if periods else ''}"
                " - more nights are needed to choose"]
    if status == "none" or rot.get("period_h") is None:
        reason = rot.get("reason") or rot.get("headline") or "no significant period"
        return [f"rotation period: none found ({reason})"]
    line = f"rotation period: {with_error(rot['period_h'], rot.get('period_err_h'), 'h')}"
    caveats = [f for f in split_flags(rot.get("flags") or []) if f not in INFORMATIONAL]
    if caveats:
        line += f" (caveats: {', '.join(caveats)})"
    if rot.get("n_upper_limits_set_aside"):
        line += f"; {rot['n_upper_limits_set_aside']} upper limit(s) set aside"
    return [line]


def _size_line(size):
    if not size:
        return []
    if size.get("radius_upper_limit_km") is not None and size.get("radius_km") is None:
        line = f"nucleus radius: below {size['radius_upper_limit_km']:.2g} km (upper limit)"
    elif size.get("radius_km") is not None:
        line = f"nucleus radius: {size['radius_km']:.2g} km"
        if size.get("radius_lo_km") is not None and size.get("radius_hi_km") is not None:
            span = value_range(size["radius_lo_km"], size["radius_hi_km"], "km")
            line += f" (68 % interval {span})"
    else:
        return [f"nucleus radius: not given ({size.get('reason') or 'no result'})"]
    if size.get("albedo") is not None:
        line += f" for an assumed albedo {size['albedo']:g}"
    if size.get("radius_km") is not None and size.get("status") not in (None, "radius"):
        line += f"; {str(size['status']).upper()}: {size.get('reason') or 'see size.json'}"
    return [line]


def size_line(size):
    """One line for the size result: the radius or its upper limit, with its status.

    Parameters
    ----------
    size : dict
        The size result as in ``size.json``.

    Returns
    -------
    line : str
        For example ``"nucleus radius: 4.6 km (68 % interval 3.8-5.5 km) for an assumed
        albedo 0.04"``.

    Examples
    --------
    >>> size_line({"radius_km": 4.6, "albedo": 0.04, "status": "radius"})
    'nucleus radius: 4.6 km for an assumed albedo 0.04'
    """
    lines = _size_line(size)
    return lines[0] if lines else "nucleus radius: not given (no result)"


def _activity_lines(measurements, activity):
    lines = []
    column = _afrho_column(measurements, activity)
    main = (activity or {}).get("filter")
    if main and measurements is not None and "filter" in measurements.colnames:
        # the nights of the filter the trend follows: Afρ differs between filters
        measurements = measurements[[str(f).strip() == main for f in measurements["filter"]]]
    if column is not None:
        nights = nightly_afrho(measurements, column=column)
        shown = nights if len(nights) <= 6 else nights[:3] + nights[-3:]
        name = ("A(0°)fρ" if column.startswith("a0") else "Afρ") + (
            " of the coma" if "coma" in column else " of all the light") + (
            f" in {main}" if main else "")
        for date, mean, err, rho, k in shown:
            value = with_error(mean, err, 'cm')
            if "coma" in column and not mean > DETECTION_SIGMA * err:
                # a coma not detected is an upper limit, not a small value
                value = (f"not detected, below {max(mean, 0.0) + 2.0 * err:.2g} cm (2σ; "
                         f"{value})")
            lines.append(f"{name} {date} (ρ = {rho:g} km, {k} frames): {value}")
        if len(nights) > 6:
            lines.insert(3, f"  ... {len(nights) - 6} more nights in the report")
    if (activity or {}).get("status") == "not_fitted":
        lines.append(f"activity trend: not fitted ({activity.get('reason', 'no reason given')})")
    for b in (activity or {}).get("trend", {}).get("branches", []) or []:
        if b.get("k") is not None:
            side = "before" if b.get("branch") == "pre" else "after"
            lines.append(f"activity trend {side} perihelion: Afρ ∝ r_h^k with "
                         f"k = {with_error(b['k'], b.get('k_err'))}")
    outbursts = (activity or {}).get("outbursts") or []
    if outbursts:
        lines.append(f"outbursts found: {len(outbursts)}")
    within = (activity or {}).get("outbursts_within_night") or []
    if within:
        lines.append(f"outbursts within a night: {len(within)}")
    for c in (activity or {}).get("colours") or []:
        if c.get("status") == "measured":
            lines.append(f"comet colour {c['label']}: "
                         f"{with_error(c['colour_mag'], c['colour_err_mag'], 'mag')} "
                         f"({c['n_pairs']} frames paired)")
        else:
            lines.append(f"comet colour {c['label']}: none ({c.get('reason', '')})")
    return lines


def _afrho_column(measurements, activity):
    """The Afρ column the activity step used (coma-only by default), else the total light's."""
    if measurements is None or len(measurements) == 0:
        return None
    for column in ((activity or {}).get("afrho_column"), "a0frho_cm"):
        if column and column in measurements.colnames and np.any(
                np.isfinite(_floats(measurements, column, u.cm))):
            return column
    return None


def _flag_line(measurements):
    if measurements is None or len(measurements) == 0 or "flags" not in measurements.colnames:
        return []
    counts = {}
    for text in np.asarray(measurements["flags"]).astype(str):
        for w in split_flags(text):
            if w not in INFORMATIONAL:
                counts[w] = counts.get(w, 0) + 1
    if not counts:
        return []
    words = ", ".join(f"{w} ({n})" for w, n in sorted(counts.items(), key=lambda kv: -kv[1]))
    return [f"flagged measurement rows: {words}"]


def headline_lines(*, measurements=None, nucleus=None, rotation=None, size=None, activity=None,
                   report=None):
    """The campaign's headline numbers with errors and caveats, one line each.

    Parameters
    ----------
    measurements, nucleus : `~astropy.table.Table`, optional
        The campaign's measurement and nucleus rows.
    rotation, size, activity : dict, optional
        The results as in ``rotation.json``, ``size.json`` and ``activity.json``.
    report : str, optional
        The report's path, named last as where to look next.

    Returns
    -------
    lines : list of str

    Examples
    --------
    >>> headline_lines(rotation={"status": "ambiguous",
    ...                          "allowed_periods": [{"period_h": 6.1, "delta_chi2": 0.0},
    ...                                              {"period_h": 12.2, "delta_chi2": 1.2}]})
    ['rotation period: ambiguous (allowed: 6.100 h, 12.200 h) - more nights are needed to choose']
    >>> headline_lines(size={"radius_upper_limit_km": 1.23, "albedo": 0.04})
    ['nucleus radius: below 1.2 km (upper limit) for an assumed albedo 0.04']
    """
    lines = _activity_lines(measurements, activity)
    lines += _nucleus_line(nucleus)
    lines += _rotation_line(rotation)
    lines += _size_line(size)
    lines += _flag_line(measurements)
    if report:
        lines.append(f"open the report: {report}")
    return lines
