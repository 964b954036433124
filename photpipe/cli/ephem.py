"""``photpipe ephem``: the target's observing geometry over a time span, printed and as ECSV.

Uses the configured orbit (or ephemeris table), site and ephemeris. At a site it adds the
target's altitude and airmass, the Sun's altitude, the hours the target can be observed in a
dark sky, and, when the campaign has results, the magnitude its own Afρ trend and nucleus H
predict. Rows where the target is close to the Sun in the sky are marked, and the Sun caution
is printed above and below.
"""

import os
import re
import sys
import warnings

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe._warnings import PhotpipeWarning, SolarElongationWarning
from photpipe.campaign.result_files import read_json, write_ecsv
from photpipe.cli._errors import CONFIG, FAILED, OK, Failures, Problem, fail
from photpipe.cli._sky import DARK_SUN_ALTITUDE, dark_windows, predicted_magnitude_band, sky_columns
from photpipe.config import (
    GEOCENTRE,
    geometry_at_location,
    load_config,
    location_for_site,
    read_geometry,
)
from photpipe.geometry import solar_elongation_caution
from photpipe.geometry._columns import for_file

__all__ = ["HELP", "add_arguments", "execute", "parse_step", "time_grid", "format_table",
           "MAX_ROWS"]

HELP = ("the target's r_h, Δ, phase, elongation, altitude, dark hours and predicted magnitude "
        "over a time span (ECSV too)")

#: Largest number of rows one call may produce.
MAX_ROWS = 200_000

_STEP_UNITS = {"s": u.s, "sec": u.s, "m": u.min, "min": u.min, "h": u.hour, "hr": u.hour,
               "d": u.day, "day": u.day}
_STEP_RE = re.compile(r"^\s*([0-9]*\.?[0-9]+)\s*([a-z]+)\s*$")


def add_arguments(parser):
    """Add the command's arguments to ``parser``."""
    parser.add_argument("config", metavar="CONFIG", help="campaign configuration (TOML)")
    parser.add_argument("--start", required=True, metavar="ISO",
                        help="first time, UTC (e.g. 2026-12-01T00:00)")
    parser.add_argument("--stop", required=True, metavar="ISO", help="last time, UTC")
    parser.add_argument("--step", default="1h", metavar="STEP",
                        help="spacing: a number and s, min, h or d (default 1h)")
    parser.add_argument("--site", default=None, metavar="NAME",
                        help=f"a [sites.NAME] key, or '{GEOCENTRE}' (default: the first "
                             "[[night]]'s site)")
    parser.add_argument("--min-altitude", type=float, default=20.0, metavar="DEG",
                        help="lowest altitude counted as observable (default 20 degrees)")
    parser.add_argument("--output", default=None, metavar="FILE",
                        help="ECSV to write (default: <results>/ephemeris.ecsv)")


def parse_step(text):
    """Read a step such as ``"1h"``, ``"30min"``, ``"90s"`` or ``"0.5d"`` as a Quantity.

    Examples
    --------
    >>> parse_step("30min")
    <Quantity 30. min>
    """
    match = _STEP_RE.match(str(text).lower())
    if not match or match.group(2) not in _STEP_UNITS:
        msg = f"--step {text!r}: give a number and one of s, min, h, d (e.g. 1h, 30min)"
        raise ValueError(msg)
    value = float(match.group(1))
    if value <= 0:
        msg = f"--step {text!r} must be positive"
        raise ValueError(msg)
    return value * _STEP_UNITS[match.group(2)]


def _utc(text, option):
    try:
        return Time(text, scale="utc")
    except ValueError as exc:
        msg = f"{option} {text!r} is not an ISO time (e.g. 2026-12-01T00:00)"
        raise ValueError(msg) from exc


def time_grid(start, stop, step):
    """Times from ``start`` to ``stop`` inclusive (UTC) every ``step``.

    Raises
    ------
    ValueError
        Stop before start, or more than `MAX_ROWS` rows.
    """
    t0 = _utc(start, "--start")
    t1 = _utc(stop, "--stop")
    span = (t1 - t0).to_value(u.day)
    if span < 0:
        msg = f"--stop {stop} is before --start {start}"
        raise ValueError(msg)
    step_d = step.to_value(u.day)
    n = int(np.floor(span / step_d + 1e-9)) + 1
    if n > MAX_ROWS:
        msg = (f"{n} rows from --start to --stop every {step}: more than {MAX_ROWS}; "
               "use a longer step")
        raise ValueError(msg)
    return t0 + np.arange(n) * step_d * u.day


def _sexagesimal(value_deg, *, hours):
    v = value_deg / 15.0 if hours else value_deg
    sign = "-" if v < 0 else ("" if hours else "+")
    v = abs(v)
    a = int(v)
    b = int((v - a) * 60.0)
    c = ((v - a) * 60.0 - b) * 60.0
    if round(c, 1 if hours else 0) >= 60.0:
        c, b = 0.0, b + 1
        if b == 60:
            b, a = 0, a + 1
    if hours:
        return f"{sign}{a:02d}:{b:02d}:{c:04.1f}"
    return f"{sign}{a:02d}:{b:02d}:{c:02.0f}"


#: Optional columns of the printed table: name -> (heading, unit line, width).
_EXTRA = {"alt": ("alt", "deg", 5), "airmass": ("air-", "mass", 5),
          "sun_alt": ("Sun", "alt", 5), "mag_pred": ("mag", "pred", 5),
          "mag_pred_err": ("±", "1σ", 4)}


def _extra_cell(row, name):
    value = row[name]
    value = value.value if isinstance(value, u.Quantity) else float(value)
    if not np.isfinite(value):
        return "-"
    return f"{value:.2f}" if name == "airmass" else f"{value:.1f}"


def format_table(geometry, *, limit):
    """The readable text table for the terminal: one line per row, near-Sun rows marked.

    Examples
    --------
    >>> from astropy import units as u
    >>> from astropy.table import QTable
    >>> from astropy.time import Time
    >>> row = {"time": Time(["2026-12-01T00:00"]), "ra": [258.73] * u.deg,
    ...        "dec": [-0.32] * u.deg, "r_h": [1.337] * u.au, "delta": [2.172] * u.au,
    ...        "phase": [17.7] * u.deg, "elong": [14.4] * u.deg,
    ...        "ra_rate": [-19.0] * u.arcsec / u.h, "dec_rate": [-68.8] * u.arcsec / u.h,
    ...        "pa_sun": [208.0] * u.deg, "pa_neg_velocity": [55.6] * u.deg,
    ...        "light_time": [1083.7] * u.s}
    >>> last = format_table(QTable(row), limit=20 * u.deg).splitlines()[-1]
    >>> last.split()[:4], last.split()[-3:]
    (['2026-12-01', '00:00', '17:14:55.2', '-00:19:12'], ['208.0', '55.6', 'SUN'])
    """
    extra = [c for c in ("alt", "airmass", "sun_alt", "mag_pred", "mag_pred_err")
             if c in geometry.colnames]
    widths = (16, 10, 9, 7, 8, 6, 6, 7, 6, 6, 6) + tuple(_EXTRA[c][2] for c in extra)
    top = ("UTC", "RA", "Dec", "r_h", "Delta", "phase", "elong", "motion", "PA of", "PA to",
           "PA of") + tuple(_EXTRA[c][0] for c in extra)
    sub = ("date       time", "h:m:s", "d:m:s", "au", "au", "deg", "deg", '"/h', "motion",
           "Sun", "-v") + tuple(_EXTRA[c][1] for c in extra)
    lines = ["  ".join(f"{t:<{w}}" if k == 0 else f"{t:>{w}}"
                       for k, (t, w) in enumerate(zip(hdr, widths, strict=True))).rstrip()
             for hdr in (top, sub)]
    lim = limit.to_value(u.deg)
    for row in geometry:
        rr = row["ra_rate"].to_value(u.arcsec / u.h)
        dr = row["dec_rate"].to_value(u.arcsec / u.h)
        elong = row["elong"].to_value(u.deg)
        cells = (
            row["time"].utc.iso[:16],
            _sexagesimal(row["ra"].to_value(u.deg), hours=True),
            _sexagesimal(row["dec"].to_value(u.deg), hours=False),
            f"{row['r_h'].to_value(u.au):.4f}",
            f"{row['delta'].to_value(u.au):.4f}",
            f"{row['phase'].to_value(u.deg):.1f}",
            f"{elong:.1f}",
            f"{float(np.hypot(rr, dr)):.1f}",
            f"{float(np.degrees(np.arctan2(rr, dr)) % 360.0):.1f}",
            f"{row['pa_sun'].to_value(u.deg):.1f}",
            f"{row['pa_neg_velocity'].to_value(u.deg):.1f}",
        ) + tuple(_extra_cell(row, c) for c in extra)
        line = "  ".join(f"{c:>{w}}" for c, w in zip(cells, widths, strict=True))
        lines.append(line + ("  SUN" if elong < lim else ""))
    return "\n".join(lines)


def execute(args):
    """Run ``photpipe ephem``.

    Returns the exit code: 0 written, 2 a configuration problem, 1 any other problem (named).
    """
    with Failures("ephem", CONFIG, Problem((ValueError, TypeError), FAILED)) as outcome:
        config = load_config(args.config)
        site = args.site
        if site is None:
            nights = config.get("night", [])
            site = nights[0].get("site") if nights else None
        location = location_for_site(config, site)
        times = time_grid(args.start, args.stop, parse_step(args.step))
        limit = read_geometry(config).caution_elongation
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", PhotpipeWarning)
            geometry = geometry_at_location(config, location, times)
        output = args.output or os.path.join(config["campaign"]["results"], "ephemeris.ecsv")
    if outcome.code is not None:
        return outcome.code

    prediction = _add_sky_and_prediction(geometry, config, location)
    caution = solar_elongation_caution(geometry["elong"], limit=limit)
    target = config.get("target", {}).get("name", "target")
    observer = site if site not in (None, GEOCENTRE) else GEOCENTRE
    geometry.meta.update({"target": target, "observer_name": observer,
                          "config": config.get("_file", "")})
    if caution:
        geometry.meta["caution"] = caution
    print(f"{target}: geometry from {geometry.meta.get('source', 'orbit')}, observer "
          f"{observer}, ephemeris {geometry.meta.get('ephemeris')}; {len(geometry)} rows")
    if caution:
        print(caution)
    print(format_table(geometry, limit=limit))
    if caution:
        print(caution)
    for line in _observable_lines(geometry, location, args.min_altitude * u.deg, prediction):
        print(line)
    for w in caught:
        if not issubclass(w.category, SolarElongationWarning):
            print(f"note: {w.message}", file=sys.stderr)
    try:
        path = write_ecsv(output, for_file(geometry))
    except OSError as exc:
        return fail("ephem", str(exc), FAILED)
    print(f"written: {path}")
    return OK


def _add_sky_and_prediction(geometry, config, location):
    """Add altitude, airmass and the Sun's altitude (at a site), and the predicted magnitude."""
    if location is not None:
        alt, airmass, sun_alt = sky_columns(geometry["time"], location, geometry["ra"],
                                            geometry["dec"])
        geometry["alt"], geometry["airmass"], geometry["sun_alt"] = alt, airmass, sun_alt
    results = config["campaign"]["results"]
    try:
        activity = read_json(os.path.join(results, "activity.json"), "activity result")
        size = read_json(os.path.join(results, "size.json"), "size result")
    except ValueError as exc:
        return f"no predicted magnitude: {exc}"
    mag, err, note = predicted_magnitude_band(geometry, activity=activity, size=size)
    if mag is None:
        return note
    geometry["mag_pred"] = mag * u.mag
    geometry["mag_pred_err"] = err * u.mag
    geometry.meta["mag_pred"] = f"predicted magnitude: {note}"
    return note


def _observable_lines(geometry, location, min_altitude, prediction):
    """Lines naming the dark-sky windows and what the predicted magnitude rests on."""
    lines = []
    if prediction and "mag_pred" in geometry.colnames:
        lines.append(f"mag pred: predicted from the campaign's own results ({prediction})")
    elif prediction:
        lines.append(prediction)
    if location is None:
        lines.append("altitude, airmass and dark hours need a site (--site NAME)")
        return lines
    windows = dark_windows(geometry["time"], geometry["alt"], geometry["sun_alt"],
                           min_altitude=min_altitude)
    head = (f"observable in a dark sky (Sun below {DARK_SUN_ALTITUDE.to_value(u.deg):g}°, "
            f"target above {min_altitude.to_value(u.deg):g}°), to the grid's step:")
    if not windows:
        return lines + [f"{head} never in this span"]
    total = 0.0
    lines.append(head)
    for a, b in windows:
        hours = (b - a).to_value(u.h)
        total += hours
        lines.append(f"  {a.utc.iso[:16]} to {b.utc.iso[:16]} UTC ({hours:.1f} h)")
    lines.append(f"  {total:.1f} h in all")
    return lines
