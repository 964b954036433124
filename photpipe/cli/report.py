"""``photpipe report CONFIG``: the activity trend, outbursts and one offline HTML page.

Reads the campaign's measurements and nucleus fits (from the campaign store when it exists,
else from the exported ``measurements.ecsv`` / ``nucleus.ecsv``), fits the Afρ(r_h) trend
before and after perihelion, searches for outbursts, draws the campaign figures and writes
``<results>/report.html`` (plus ``activity.json``). `run_report_stage` is the same step for
``photpipe run``.

``[activity]`` keys (all optional): ``outburst_sigma`` (5.0), ``jump_sigma`` (3.0),
``quiet_sigma`` (2.0), ``max_false_alarm`` (0.01), ``fit_method`` ("scatter", "clip" or
"robust"), ``aperture_km`` (default: the most measured aperture, ties nearest 10 000 km),
``afrho_column`` ("a0frho_cm" or "afrho_cm"), ``night_gap_h`` (6.0), ``exclude_flags``
(["upper_limit", "saturated"]), ``perihelion_time`` (ISO, TDB; default ``[target.orbit]
perihelion_time``). The Sun caution limit is ``[geometry] caution_elongation_deg`` (20).
"""

import glob
import json
import math
import os
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import QTable, Table, vstack
from astropy.time import Time

from photpipe.cli.config import ConfigError, load_config

__all__ = ["HELP", "add_arguments", "execute", "run_report_stage", "activity_settings",
           "read_inputs"]

HELP = "activity trend, outbursts and figures in one self-contained HTML page"

#: Exit codes.
OK, CONFIG_PROBLEM, STORE_PROBLEM, NO_DATA = 0, 2, 3, 4

_FIT_METHODS = ("scatter", "clip", "robust")
_AFRHO_COLUMNS = ("a0frho_cm", "afrho_cm")
_DEFAULT_EXCLUDE = ("upper_limit", "saturated")


def add_arguments(parser):
    """Add the options of ``photpipe report`` to ``parser``."""
    parser.add_argument("config", metavar="CONFIG", help="campaign configuration (TOML)")
    parser.add_argument("--output", metavar="PATH", default=None,
                        help="HTML file to write (default: <results>/report.html)")
    parser.add_argument("--from-tables", action="store_true",
                        help="read the exported ECSV tables even when a campaign store exists")


# -- configuration ---------------------------------------------------------------------------

def _number(section, key, default, where, *, low=None, high=None, inclusive_high=True):
    value = section.get(key, default)
    if value is None:
        return None
    try:
        value = float(value)
    except (TypeError, ValueError) as exc:
        msg = f"{where}: [activity] {key} must be a number, got {value!r}"
        raise ConfigError(msg) from exc
    if not math.isfinite(value) or (low is not None and value <= low) or (
            high is not None and (value > high if inclusive_high else value >= high)):
        bounds = f"above {low}" + (f" and at most {high}" if high is not None else "")
        msg = f"{where}: [activity] {key} must be {bounds}, got {value}"
        raise ConfigError(msg)
    return value


def activity_settings(config):
    """Return the ``[activity]`` section as checked keyword values (see the module notes).

    Raises
    ------
    ConfigError
        Naming the file and the key, for a value of the wrong kind or out of range.
    """
    where = config.get("_file", "configuration")
    section = config.get("activity", {}) or {}
    method = section.get("fit_method", "scatter")
    if method not in _FIT_METHODS:
        msg = f"{where}: [activity] fit_method must be one of {list(_FIT_METHODS)}, got {method!r}"
        raise ConfigError(msg)
    column = section.get("afrho_column", "a0frho_cm")
    if column not in _AFRHO_COLUMNS:
        msg = (f"{where}: [activity] afrho_column must be one of {list(_AFRHO_COLUMNS)}, "
               f"got {column!r}")
        raise ConfigError(msg)
    flags = section.get("exclude_flags", list(_DEFAULT_EXCLUDE))
    if isinstance(flags, str) or not all(isinstance(f, str) for f in flags):
        msg = f"{where}: [activity] exclude_flags must be a list of flag words, got {flags!r}"
        raise ConfigError(msg)
    peri = section.get("perihelion_time")
    if peri is None:
        peri = ((config.get("target") or {}).get("orbit") or {}).get("perihelion_time")
        peri_source = "[target.orbit] perihelion_time"
    else:
        peri_source = "[activity] perihelion_time"
    perihelion = None
    if peri is not None:
        try:
            perihelion = Time(str(peri), scale="tdb")
        except ValueError as exc:
            msg = f"{where}: {peri_source} is not a date and time: {peri!r}"
            raise ConfigError(msg) from exc
    caution = _number(config.get("geometry", {}) or {}, "caution_elongation_deg", 20.0, where,
                      low=0.0, high=180.0)
    aperture = _number(section, "aperture_km", None, where, low=0.0)
    return {
        "sigma": _number(section, "outburst_sigma", 5.0, where, low=0.0),
        "jump_sigma": _number(section, "jump_sigma", 3.0, where, low=0.0),
        "quiet_sigma": _number(section, "quiet_sigma", 2.0, where, low=0.0),
        "max_false_alarm": _number(section, "max_false_alarm", 0.01, where, low=0.0, high=1.0),
        "method": method,
        "aperture": None if aperture is None else aperture * u.km,
        "column": column,
        "night_gap": _number(section, "night_gap_h", 6.0, where, low=0.0) * u.h,
        "exclude_flags": tuple(flags),
        "perihelion_time": perihelion,
        "perihelion_source": peri_source if perihelion is not None else None,
        "caution_elongation": caution * u.deg,
    }


# -- inputs ----------------------------------------------------------------------------------

def _read_ecsv(path):
    try:
        return QTable.read(path, format="ascii.ecsv")
    except Exception as exc:  # astropy raises many kinds for a broken ECSV
        msg = f"{path}: cannot read the table ({exc})"
        raise ValueError(msg) from exc


def _read_results_table(results, name):
    top = results / f"{name}.ecsv"
    if top.is_file():
        return _read_ecsv(top), [str(top)]
    per_night = sorted(glob.glob(str(results / "*" / f"{name}.ecsv")))
    if not per_night:
        return None, []
    tables = [_read_ecsv(p) for p in per_night]
    tables = [t for t in tables if len(t)]
    if not tables:
        return QTable(), per_night
    return vstack(tables, join_type="outer", metadata_conflicts="silent"), per_night


def _read_json(path):
    if not path.is_file():
        return None
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        msg = f"{path}: cannot read ({exc})"
        raise ValueError(msg) from exc


def read_inputs(config, *, from_tables=False):
    """Gather the report's inputs for a configuration.

    Returns
    -------
    measurements, nucleus : `~astropy.table.QTable` or None
    extra : dict
        ``rotation`` and ``size`` dicts when their JSON files exist, and ``sources`` (where
        the tables came from).

    Raises
    ------
    ValueError
        Naming the file, when a table exists but cannot be read.
    """
    results = Path(config["campaign"]["results"])
    store_path = Path(config["campaign"].get("store", results / "campaign.sqlite"))
    extra = {"sources": []}
    if not from_tables and store_path.is_file():
        from photpipe.campaign.store import CampaignStore

        with CampaignStore(store_path) as store:
            measurements, nucleus = _from_store(store)
        extra["sources"].append(f"campaign store {store_path}")
    else:
        measurements, src_m = _read_results_table(results, "measurements")
        nucleus, src_n = _read_results_table(results, "nucleus")
        extra["sources"] += src_m + src_n
    for name in ("rotation", "size"):
        value = _read_json(results / f"{name}.json")
        if value is not None:
            extra[name] = value
    return measurements, nucleus, extra


def _from_store(store):
    return store.export_table("measurements"), store.export_table("nucleus")


# -- the stage -------------------------------------------------------------------------------

def _col(table, name, unit=None):
    col = table[name]
    if isinstance(col, u.Quantity):
        return col.to(unit) if unit is not None else col
    values = np.asarray(col, dtype=float)
    if unit is None:
        return values
    col_unit = getattr(col, "unit", None)
    return (values * col_unit).to(unit) if col_unit is not None else values * u.Unit(unit)


def _flag_mask(table, words):
    if "flags" not in table.colnames or not words:
        return np.zeros(len(table), dtype=bool)
    out = np.zeros(len(table), dtype=bool)
    for i, text in enumerate(np.asarray(table["flags"]).astype(str)):
        out[i] = bool(set(w.strip() for w in text.split(",")) & set(words))
    return out


def _atomic_text(path, text):
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def _one_row(d, keys):
    keys = [k for k in keys if k in d]
    return Table(rows=[[d[k] if d[k] is not None else "" for k in keys]], names=keys) \
        if keys else Table()


def _trend_table(trend):
    t = trend.to_table()
    keep = ["branch", "k", "k_err", "log10_afrho_1au_cm", "scatter_dex", "chi2", "dof",
            "n_nights", "n_frames", "r_h_min", "r_h_max", "time_first", "time_last", "flags"]
    return t[keep]


def _nights_table(trend, outburst_nights):
    n = trend.nights
    t = QTable()
    t["night (UTC)"] = n["time"]
    t["branch"] = n["branch"]
    t["r_h"] = n["r_h"]
    t["frames"] = n["n_frames"]
    t["Afρ"] = n["afrho"]
    t["Afρ error"] = n["afrho_err"]
    t["trend"] = n["afrho_trend"]
    t["Δm from trend"] = -2.5 * np.asarray(n["residual_dex"]) * u.mag
    t["σ above trend"] = n["significance"]
    t["in fit"] = n["used"]
    t["outburst"] = outburst_nights
    return t


def _outburst_table(outbursts):
    keep = ["onset_after", "onset_before", "r_h", "delta_mag", "delta_mag_err", "significance",
            "jump_significance", "false_alarm", "peak_delta_mag", "n_nights", "branch", "flags"]
    return outbursts[keep]


def _analyse(measurements, settings, notes):
    from photpipe.activity import analyse_activity

    column = settings["column"]
    err_column = column.replace("_cm", "_err_cm")
    for name in ("mjd_utc_mid", "r_h_au", "rho_km", column, err_column):
        if name not in measurements.colnames:
            msg = f"the measurements table has no column {name!r}"
            raise ValueError(msg)
    flagged = _flag_mask(measurements, settings["exclude_flags"])
    if np.any(flagged):
        notes.append(f"{np.count_nonzero(flagged)} measurement rows flagged "
                     f"{', '.join(settings['exclude_flags'])} were left out of the trend.")
    rows = measurements[~flagged]
    time = Time(_col(rows, "mjd_utc_mid", u.day).value, format="mjd", scale="utc")
    perihelion = settings["perihelion_time"]
    if perihelion is None:
        rh = _col(rows, "r_h_au", u.au).value
        perihelion = time[int(np.nanargmin(rh))]
        notes.append("No perihelion time was configured: the time of the smallest observed r_h "
                     f"({perihelion.utc.iso[:16]} UTC) splits the two branches.")
    else:
        notes.append(f"Perihelion {perihelion.utc.iso[:16]} UTC "
                     f"(from {settings['perihelion_source']}) splits the two branches.")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        analysis = analyse_activity(
            time, _col(rows, "r_h_au", u.au), _col(rows, column, u.cm),
            _col(rows, err_column, u.cm), perihelion_time=perihelion,
            rho=_col(rows, "rho_km", u.km), aperture=settings["aperture"],
            sigma=settings["sigma"], jump_sigma=settings["jump_sigma"],
            quiet_sigma=settings["quiet_sigma"], max_false_alarm=settings["max_false_alarm"],
            method=settings["method"], night_gap=settings["night_gap"])
    for w in caught:
        text = f"{w.category.__name__}: {w.message}"
        if text not in notes:
            notes.append(text)
    return analysis


def _summary(config, measurements, nucleus, analysis, extra, settings):
    s = {"campaign": config["campaign"].get("name", "unnamed campaign")}
    if measurements is not None and len(measurements):
        mjd = _col(measurements, "mjd_utc_mid", u.day).value
        frames = np.unique(np.asarray(measurements["frame"]).astype(str))
        s["frames measured"] = int(frames.size)
        s["measurement rows"] = len(measurements)
        s["first frame (UTC)"] = Time(np.nanmin(mjd), format="mjd").utc.iso[:16]
        s["last frame (UTC)"] = Time(np.nanmax(mjd), format="mjd").utc.iso[:16]
        rh = _col(measurements, "r_h_au", u.au).value
        s["r_h covered"] = f"{np.nanmin(rh):.3f} – {np.nanmax(rh):.3f} au"
        if "elong_deg" in measurements.colnames:
            s["smallest solar elongation"] = \
                f"{np.nanmin(_col(measurements, 'elong_deg', u.deg).value):.1f}°"
    if nucleus is not None:
        s["nucleus fits"] = len(nucleus)
    if analysis is not None:
        trend = analysis.trend
        s["nights"] = len(trend.nights)
        if trend.rho is not None:
            s["aperture used"] = f"ρ = {trend.rho.to_value(u.km):g} km ({settings['column']})"
        for b in trend.branches:
            label = "before perihelion" if b.name == "pre" else "after perihelion"
            s[f"Afρ ∝ r_h^k {label}"] = (
                f"k = {b.k:.2f} ± {b.k_err:.2f} ({b.n_nights} nights, r_h "
                f"{b.r_h_min.to_value(u.au):.2f}–{b.r_h_max.to_value(u.au):.2f} au)")
        s["outbursts found"] = len(analysis.outbursts)
        for i, row in enumerate(analysis.outbursts):
            s[f"outburst {i + 1}"] = (
                f"Δm = {row['delta_mag'].to_value(u.mag):+.2f} ± "
                f"{row['delta_mag_err'].to_value(u.mag):.2f} mag, began between "
                f"{row['onset_after'].utc.iso[:16]} and {row['onset_before'].utc.iso[:16]} UTC")
    rot = extra.get("rotation")
    if rot and rot.get("period_h") is not None:
        err = rot.get("period_err_h")
        s["rotation period"] = (f"{rot['period_h']:.3f} h" if err is None
                                else f"{rot['period_h']:.3f} ± {err:.3f} h")
    size = extra.get("size")
    if size and size.get("radius_km") is not None:
        s["nucleus radius"] = (f"{size['radius_km']:.2f} km (albedo {size.get('albedo')}, "
                               f"range {size.get('radius_lo_km')}–{size.get('radius_hi_km')} km)")
    return s


def _figures(measurements, nucleus, analysis, settings, notes):
    from photpipe.campaign import figures as F

    peri = analysis.trend.perihelion_time if analysis is not None else None
    jobs = {}
    if analysis is not None:
        jobs["activity_time"] = ("Afρ against time: frames, night means and the power-law "
                                 "trend; outburst onset brackets shaded.",
                                 lambda: F.afrho_time_figure(
                                     measurements, trend=analysis.trend,
                                     outbursts=analysis.outbursts, column=settings["column"]))
        jobs["activity_rh"] = ("Afρ against r_h on log axes with the fitted index k of each "
                               "branch (A'Hearn et al. 1995 power-law description).",
                               lambda: F.afrho_rh_figure(measurements, trend=analysis.trend,
                                                         column=settings["column"]))
        jobs["outbursts"] = ("Night departures from the trend in magnitudes and the detection "
                             "level.", lambda: F.outburst_figure(
                                 analysis.trend, analysis.outbursts, sigma=settings["sigma"]))
    if nucleus is not None and len(nucleus):
        jobs["nucleus"] = ("Nucleus magnitude per frame from the nucleus + coma fit.",
                           lambda: F.nucleus_lightcurve_figure(nucleus, perihelion_time=peri))
    if measurements is not None and len(measurements):
        jobs["coma_slope"] = ("Coma profile slope per frame; -1 is a steady-state coma.",
                              lambda: F.coma_slope_figure(measurements, perihelion_time=peri))
        jobs["quality"] = ("Zero point, reference stars and FWHM per frame (data-quality "
                           "check).", lambda: F.quality_figure(measurements, nucleus))
    figures, captions = {}, {}
    for name, (caption, build) in jobs.items():
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # a figure's drawing warnings are not results
                figures[name] = build()
            captions[name] = caption
        except Exception as exc:  # noqa: BLE001 - one figure failing keeps the page
            notes.append(f"Figure {name!r} could not be drawn: {type(exc).__name__}: {exc}")
    return figures, captions


def run_report_stage(config, measurements, nucleus=None, extra=None, out_dir=None, *,
                     report_path=None):
    """Fit the activity, draw the figures and write ``report.html`` (and ``activity.json``).

    Parameters
    ----------
    config : dict
        A loaded configuration (`photpipe.cli.config.load_config`).
    measurements : `~astropy.table.Table` or campaign store
        The campaign's measurement rows. A campaign store (an object with ``export_table``)
        is also accepted, as ``run_report_stage(config, store, out_dir)``: the tables are
        exported from it and ``rotation.json`` / ``size.json`` are read from ``out_dir``.
    nucleus : `~astropy.table.Table`, optional
    extra : dict, optional
        ``rotation`` and ``size`` result dicts, when available.
    out_dir : str or path-like, optional
        Folder to write into (default ``[campaign] results``).
    report_path : str or path-like, optional
        The HTML file (default ``<out_dir>/report.html``).

    Returns
    -------
    path : `pathlib.Path`
        The report written.
    """
    from photpipe.campaign.report import write_report

    if hasattr(measurements, "export_table"):
        store = measurements
        if out_dir is None and nucleus is not None and not isinstance(nucleus, Table):
            out_dir, nucleus = nucleus, None
        measurements, nucleus = _from_store(store)
        extra = extra or {}
        folder = Path(out_dir or config["campaign"]["results"])
        for name in ("rotation", "size"):
            value = _read_json(folder / f"{name}.json")
            if value is not None:
                extra.setdefault(name, value)
        extra.setdefault("sources", [f"campaign store {getattr(store, 'path', '')}"])
    extra = dict(extra or {})
    out = Path(out_dir or config["campaign"]["results"])
    out.mkdir(parents=True, exist_ok=True)
    settings = activity_settings(config)
    notes = []
    analysis = None
    if measurements is None or len(measurements) == 0:
        notes.append("No measurements were found, so there is no activity trend yet.")
    else:
        try:
            analysis = _analyse(measurements, settings, notes)
        except (ValueError, TypeError) as exc:
            notes.append(f"The activity trend could not be fitted: {exc}")
    if analysis is not None:
        notes.append(
            f"Trend: log10 Afρ against log10 r_h, one value per night, fitted with method "
            f"'{settings['method']}' on each side of perihelion; outbursts are nights more than "
            f"{settings['sigma']:g} σ above the trend with a sudden rise (> "
            f"{settings['jump_sigma']:g} σ) from the night before and a campaign-wide false-alarm "
            f"chance below {settings['max_false_alarm']:g}. Δm = -2.5 log10(Afρ/Afρ_trend) is "
            "the brightening of the dust in the aperture.")
        payload = analysis.to_dict()
        payload["settings"] = {k: (str(v) if not isinstance(v, (int, float, str, type(None)))
                                   else v) for k, v in settings.items()}
        _atomic_text(out / "activity.json", json.dumps(payload, indent=2, default=str) + "\n")
    for src in extra.get("sources", []):
        notes.append(f"Input: {src}")
    figures, captions = _figures(measurements, nucleus, analysis, settings, notes)
    tables = {}
    if analysis is not None:
        tables["Activity trend"] = _trend_table(analysis.trend)
        tables["Outbursts"] = _outburst_table(analysis.outbursts)
        tables["Nights"] = _nights_table(analysis.trend, analysis.outburst_nights)
    if extra.get("rotation"):
        tables["Rotation"] = _one_row(extra["rotation"], [
            "period_h", "period_err_h", "amplitude_mag", "amplitude_err_mag", "axial_ratio_min",
            "n_points", "method"])
    if extra.get("size"):
        tables["Nucleus size and mass"] = _one_row(extra["size"], [
            "H_mag", "H_err_mag", "band", "albedo", "radius_km", "radius_lo_km", "radius_hi_km",
            "mass_kg_lo", "mass_kg_hi", "mass_bound_kg", "active_fraction"])
    summary = _summary(config, measurements, nucleus, analysis, extra, settings)
    elong = None
    if measurements is not None and len(measurements) and "elong_deg" in measurements.colnames:
        elong = _col(measurements, "elong_deg", u.deg)
    target = Path(report_path) if report_path is not None else out / "report.html"
    path = write_report(target, campaign_name=summary["campaign"], summary=summary,
                        tables=tables, figures=figures, notes=notes, elongations=elong,
                        caution_elongation=settings["caution_elongation"], captions=captions)
    return path


def execute(args):
    """Write the report; print its path; return the exit code.

    Returns 0 when the page was written, 2 for a configuration problem, 3 for a damaged
    campaign store, 4 when there are no measurements to report on.
    """
    from photpipe.campaign.store import StoreError

    try:
        config = load_config(args.config)
        settings_check = activity_settings(config)  # fail early on a bad [activity]
        del settings_check
        measurements, nucleus, extra = read_inputs(config, from_tables=args.from_tables)
    except ConfigError as exc:
        print(f"photpipe report: configuration problem: {exc}", file=sys.stderr)
        return CONFIG_PROBLEM
    except StoreError as exc:
        print(f"photpipe report: campaign store problem: {exc}", file=sys.stderr)
        return STORE_PROBLEM
    except ValueError as exc:
        print(f"photpipe report: {exc}", file=sys.stderr)
        return NO_DATA
    if measurements is None:
        results = config["campaign"]["results"]
        print(f"photpipe report: no measurements under {results} (no measurements.ecsv and no "
              "campaign store); run 'photpipe run' first", file=sys.stderr)
        return NO_DATA
    try:
        path = run_report_stage(config, measurements, nucleus, extra, report_path=args.output)
    except OSError as exc:
        print(f"photpipe report: cannot write the report: {exc}", file=sys.stderr)
        return CONFIG_PROBLEM
    print(path)
    return OK
