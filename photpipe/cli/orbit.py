"""``photpipe orbit``: fit an orbit, with non-gravitational terms, to ADES astrometry files.

Prints the elements with errors, A1-A3 or the limit on the acceleration, the rms per site and
the observations that could not be used; writes ``orbit.json``, ``orbit_residuals.ecsv`` and
``orbit_residuals.png`` into the output folder.
"""

import json
import tomllib
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.cli._errors import FAILED, NO_DATA, OK, Failures, Problem, say
from photpipe.geometry.observer import site_location

__all__ = ["HELP", "add_arguments", "execute", "format_solution"]

HELP = "fit an orbit (with A1-A3 or a limit on them) to ADES astrometry files"


def add_arguments(parser):
    """Add the command's arguments to ``parser``."""
    parser.add_argument("files", nargs="+", metavar="ADES", help="ADES files (PSV or XML)")
    parser.add_argument("--sites", metavar="TOML", default=None,
                        help="TOML with [sites.CODE] longitude_deg, latitude_deg, height_m "
                             "(a campaign configuration will do)")
    parser.add_argument("--law", choices=("water", "inverse-square"), default="water",
                        help="g(r) of the non-gravitational acceleration (default water)")
    parser.add_argument("--terms", default="1,2,3",
                        help="which of A1,A2,A3 to fit, e.g. 1,2; 'none' for gravity only")
    parser.add_argument("--at", type=float, default=1.0, metavar="AU",
                        help="heliocentric distance of the acceleration limit (default 1)")
    parser.add_argument("--default-rms", type=float, default=None, metavar="ARCSEC",
                        help="uncertainty for records without rmsRA/rmsDec (default: skip them)")
    parser.add_argument("--epoch", default=None, help="epoch of the state, ISO TDB")
    parser.add_argument("--out", default=".", help="folder for the result files (default .)")


def _read_sites(path):
    if path is None:
        return {}
    with open(path, "rb") as fh:
        sections = tomllib.load(fh).get("sites", {})
    out = {}
    for code, sec in sections.items():
        try:
            out[code] = site_location(float(sec["longitude_deg"]) * u.deg,
                                      float(sec["latitude_deg"]) * u.deg,
                                      float(sec.get("height_m", 0.0)) * u.m, name=code)
        except (KeyError, TypeError, ValueError) as exc:
            msg = f"{path}: [sites.{code}]: {exc}"
            raise ValueError(msg) from exc
    return out


def _terms(text):
    if text.strip().lower() == "none":
        return ()
    terms = tuple(sorted({int(t) for t in text.split(",") if t.strip()}))
    if not terms or any(t not in (1, 2, 3) for t in terms):
        msg = f"--terms must list 1, 2 and/or 3 (or 'none'), got {text!r}"
        raise ValueError(msg)
    return terms


def format_solution(sol):
    """The printed summary of an `~photpipe.orbit.result.OrbitSolution`."""
    lines = [f"orbit at {sol.epoch.tdb.isot[:19]} TDB ({sol.adopted} fit adopted), "
             f"chi2 {sol.chi2:.1f} for {sol.dof} degrees of freedom"]
    units = {"q": "AU", "e": "", "i": "deg", "node": "deg", "peri": "deg", "tp": "TDB JD"}
    for name, (value, err) in sol.elements.items():
        lines.append(f"  {name:<5s} {value:.10g} ± {err:.3g} {units[name]}")
    lines.append(_nongrav_lines(sol.nongrav))
    lines.append("  site     n  used  rms RA cosδ  rms Dec  error scale")
    for row in sol.sites:
        lines.append(f"  {row['stn']:<6s} {row['n_obs']:3d}  {row['n_used']:4d}  "
                     f"{row['rms_ra_arcsec']:8.3f}\"  {row['rms_dec_arcsec']:7.3f}\"  "
                     f"{row['site_factor']:5.2f}")
    return "\n".join(lines)


def _nongrav_lines(ng):
    head = f"non-gravitational ({ng['law']} law): {ng['status']}"
    if ng["status"] == "not formed":
        return f"{head}: {ng['reason']}"
    parts = [head + ("" if not ng.get("reason") else f" ({ng['reason']})")]
    for name, a, e in zip(ng["fitted"], ng["a_au_d2"], ng["a_err_au_d2"]):
        parts.append(f"  {name} = {a:.3e} ± {e:.2e} AU/d²")
    parts.append(f"  Δχ² = {ng['delta_chi2']:.2f} for {ng['dof']} terms, p = {ng['p_value']:.3g}")
    parts.append(f"  |a| at {ng['reference_distance_au']:g} AU below {ng['limit_au_d2']:.3e} "
                 f"AU/d² = {ng['limit_m_s2']:.3e} m/s² ({100 * ng['confidence']:.0f} % "
                 f"confidence)")
    return "\n".join(parts)


def _write(sol, out):
    from photpipe.campaign.result_files import write_atomic, write_text
    from photpipe.orbit.figures import residual_figure

    out.mkdir(parents=True, exist_ok=True)
    write_text(out / "orbit.json", json.dumps(sol.to_dict(), indent=2, default=_plain) + "\n")
    table = sol.residuals.copy()
    table["time"] = table["time"].utc.isot
    write_atomic(out / "orbit_residuals.ecsv",
                 lambda p: table.write(p, format="ascii.ecsv", overwrite=True))
    fig = residual_figure(sol)
    write_atomic(out / "orbit_residuals.png", lambda p: fig.savefig(p, dpi=110, format="png"))


def _plain(value):
    if isinstance(value, np.generic):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    raise TypeError(type(value).__name__)


def execute(args):
    """Run the command; return the exit code.

    Returns 0 when an orbit was fitted and written, 4 when no usable observation was read,
    1 when the fit could not be made (the reason is printed).
    """
    from photpipe.orbit import OrbitFitError, OrbitFitOptions, fit_orbit, read_ades

    with Failures("orbit", Problem((ValueError, OSError), FAILED)) as outcome:
        sites = _read_sites(args.sites)
        options = OrbitFitOptions(nongrav=_terms(args.terms), g_law=args.law,
                                  reference_distance_au=args.at)
        epoch = None if args.epoch is None else Time(args.epoch, scale="tdb")
        reading = read_ades(args.files, default_rms_arcsec=args.default_rms)
    if outcome.code is not None:
        return outcome.code
    for line in reading.problems:
        say("orbit", line)
    if len(reading.table) == 0:
        say("orbit", "no usable observations")
        return NO_DATA
    with Failures("orbit", Problem((OrbitFitError, ValueError, OSError), FAILED)) as outcome:
        sol = fit_orbit(reading.table, sites=sites, epoch=epoch, options=options)
        _write(sol, Path(args.out))
    if outcome.code is not None:
        return outcome.code
    for line in sol.problems:
        say("orbit", line)
    print(format_solution(sol))
    print(f"written: {Path(args.out) / 'orbit.json'}, orbit_residuals.ecsv, orbit_residuals.png")
    return OK
