"""Whole hard nights, end to end: what `photpipe run` returns against the rendered truth.

Each variant is one night of the invented demo comet (orbit, site and camera of
``configs/demo.toml``) rendered by `photpipe.scenario.render_night` with calibration frames,
written to a temporary folder and reduced by the full pipeline in one process (``photpipe run
--workers 0``), as an observer would run it. The variants are the nights observers get: poor
seeing, a header WCS several arcseconds off, the telescope tracking the comet (stars trailed),
long exposures (the comet trailed), no coma, no nucleus, a nucleus that is a small share of the
light. Printed per variant, against the truth of every frame:

- frames measured of those rendered;
- zero point: median bias and robust scatter (mag);
- nucleus: detections and upper limits, median magnitude bias of the detections, robust σ and
  median of the pull (m_fit - m_true)/σ, and the number of upper limits fainter than the truth
  (a limit that excludes the truth);
- coma: median of the coma-only A(θ)fρ over its truth at ρ = 10,000 km, and the
  robust σ of its pull;
- the rotation and size steps' status (one night: the period is expected to be ambiguous or
  none).

The robust σ is 1.4826 × the median absolute deviation from the median. ``s/fr`` is the wall
time of the whole run per science frame, for orientation only (the speed benchmarks with their
floors are ``profile_stages.py`` and ``campaign.py``).

Run: ``python benchmarks/hard_nights.py [--frames 20] [--variants nominal,seeing_3.4]``.
"""

import argparse
import contextlib
import io
import json
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.table import Table
from astropy.time import Time

from photpipe.cli.main import main as photpipe_main
from photpipe.config import geometry_for_times, load_config
from photpipe.photometry import dust_phase
from photpipe.scenario import make_star_field, render_night
from photpipe.scenario.demo import DEMO_INSTRUMENT, demo_exposures, demo_truth_table

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.toml"
RHO_KM = 10000.0  # the demo's headline aperture (configs/demo.toml apertures_km)
SCALE = DEMO_INSTRUMENT.pixel_scale.to_value(u.arcsec)


def _seeing(fwhm_low, fwhm_high):
    def change(exposures, rng):
        return [replace(e, fwhm=rng.uniform(fwhm_low, fwhm_high) * u.arcsec) for e in exposures]
    return change


def _wcs_off(arcsec):
    def change(exposures, rng):
        out = []
        for e in exposures:
            angle = rng.uniform(0, 2 * np.pi)
            off = arcsec / SCALE * np.array([np.cos(angle), np.sin(angle)])
            out.append(replace(e, wcs_offset_pix=tuple(off)))
        return out
    return change


def _exposure(seconds, tracking="sidereal"):
    def change(exposures, rng):
        return [replace(e, exptime=seconds * u.s, tracking=tracking) for e in exposures]
    return change


def _comet(**fields):
    def change(exposures, rng):
        return [replace(e, comet=replace(e.comet, **{k: f(e.comet) for k, f in fields.items()}))
                for e in exposures]
    return change


#: name -> (what it is, change to the demo night's exposures)
VARIANTS = {
    "nominal": ("demo-like night, seeing 2.3-3.1\"", lambda exposures, rng: exposures),
    "seeing_3.4": ("seeing 3.2-3.6\"", _seeing(3.2, 3.6)),
    "wcs_off_5as": ("header WCS 5\" off in a random direction", _wcs_off(5.0)),
    "comet_tracked": ("telescope on the comet, 80 s: stars trailed 4.4 px",
                      _exposure(80.0, "comet")),
    "long_trail": ("120 s sidereal: comet trailed 6.6 px", _exposure(120.0)),
    "no_coma": ("bare nucleus", _comet(afrho=lambda c: None)),
    "no_nucleus": ("pure coma", _comet(nucleus_mag=lambda c: None)),
    "faint_nucleus": ("nucleus 2.5 mag fainter", _comet(nucleus_mag=lambda c: c.nucleus_mag
                                                        + 2.5 * u.mag)),
}


def render_variant(folder, name, n_frames, seed):
    """Render one variant's night and its reference stars; return (config path, truth table)."""
    config = load_config(DEMO)
    night = config["night"][0]
    rng = np.random.default_rng(seed)
    times = Time("2026-12-01T02:10:00", scale="utc") + np.linspace(0, 4.4, n_frames) * u.h
    geom = geometry_for_times(config, night, times)
    exposures = demo_exposures(times, geom, phase_function=dust_phase, rng=rng)
    exposures = VARIANTS[name][1](exposures, rng)
    mid = SkyCoord(np.mean(geom["ra"]), np.mean(geom["dec"]))
    half_track = SkyCoord(geom["ra"][0], geom["dec"][0]).separation(mid)
    stars = make_star_field(mid, half_track + 8 * u.arcmin, n_stars=2400,
                            mag_range=(19.5, 11.0), rng=rng)
    folder = Path(folder)
    stars.write(folder / "stars.ecsv", overwrite=True)
    site = config["sites"][night["site"]]
    extra = {"SITELAT": site["latitude_deg"], "SITELONG": site["longitude_deg"],
             "SITEELEV": site["height_m"]}
    truth = render_night(folder / "night_2026-12-01", DEMO_INSTRUMENT, exposures, stars=stars,
                         n_bias=5, n_dark=3, n_flat=3, object_name=config["target"]["name"],
                         header_extra=extra, rng=rng)
    text = DEMO.read_text()
    text = text.replace('results = "../results/demo"', f'results = "{folder / "results"}"')
    text = text.replace('path = "../sample_frames/night_2026-12-01"',
                        f'path = "{folder / "night_2026-12-01"}"')
    text = text.replace('reference_stars = "../sample_frames/reference_stars.ecsv"',
                        f'reference_stars = "{folder / "stars.ecsv"}"')
    path = folder / "campaign.toml"
    path.write_text(text)
    return path, demo_truth_table(exposures, truth)


def _robust_sigma(x):
    x = np.asarray(x, float)
    x = x[np.isfinite(x)]
    if len(x) < 3:
        return np.nan
    return 1.4826 * float(np.median(np.abs(x - np.median(x))))


def _by_frame(table):
    return {str(r["frame"]): r for r in table}


def _plain(value):
    return float(getattr(value, "value", value))


def compare(results, truth):
    """Per-variant figures from a run's result files and the truth table."""
    night = results / "night_2026-12-01"
    zp = _by_frame(Table.read(night / "zero_points.ecsv"))
    nuc = _by_frame(Table.read(night / "nucleus.ecsv")) if (night / "nucleus.ecsv").exists() \
        else {}
    meas = Table.read(night / "measurements.ecsv")
    out = {"n": len(truth), "measured": len(zp)}
    zp_d, pulls, bias, limits_wrong, n_ul, n_det = [], [], [], 0, 0, 0
    for row in truth:
        name = str(row["frame"])
        if name in zp:
            zp_d.append(_plain(zp[name]["zp_mag"]) - float(row["zp_mag"]))
        if name not in nuc:
            continue
        fit = nuc[name]
        m, e = _plain(fit["nucleus_mag"]), _plain(fit["nucleus_mag_err"])
        m_true = _plain(row["nucleus_mag"])
        if "upper_limit" in str(fit["flags"]).split(","):
            n_ul += 1
            limits_wrong += int(np.isfinite(m) and m > m_true)
            continue
        if not np.isfinite(m):
            continue
        n_det += 1
        if np.isfinite(m_true):
            bias.append(m - m_true)
            pulls.append((m - m_true) / e)
        else:
            pulls.append(np.inf)  # a nucleus claimed where there is none
    out.update(zp_bias=float(np.median(zp_d)) if zp_d else np.nan,
               zp_scatter=_robust_sigma(zp_d), n_det=n_det, n_ul=n_ul,
               ul_wrong=limits_wrong,
               nuc_bias=float(np.median(bias)) if bias else np.nan,
               pull_sigma=_robust_sigma([p for p in pulls if np.isfinite(p)]),
               pull_median=float(np.median(pulls)) if pulls else np.nan,
               false_nucleus=int(np.sum(np.isinf(pulls))))
    rho = _column(meas, "rho_km")
    small = meas[np.isclose(rho, RHO_KM)]
    truth_afrho = {str(r["frame"]): float(r["afrho_cm"]) for r in truth}
    ratio, apull = [], []
    for r in small:
        t = truth_afrho.get(str(r["frame"]), np.nan)
        a, ae = _plain(r["afrho_coma_cm"]), _plain(r["afrho_coma_err_cm"])
        if np.isfinite(t) and t > 0 and np.isfinite(a):
            ratio.append(a / t)
            apull.append((a - t) / ae)
        elif not (np.isfinite(t) and t > 0) and np.isfinite(a):
            ratio.append(np.nan)
            apull.append(a / ae)  # no coma: the pull is against zero
    out.update(afrho_ratio=float(np.nanmedian(ratio)) if np.any(np.isfinite(ratio)) else np.nan,
               afrho_pull_sigma=_robust_sigma(apull),
               afrho_pull_median=float(np.median(apull)) if apull else np.nan)
    for step in ("rotation", "size"):
        path = results / f"{step}.json"
        out[step] = json.loads(path.read_text()).get("status", "?") if path.exists() else "-"
    return out


def _column(table, name):
    return np.asarray(getattr(table[name], "value", table[name]), float)


def run_variant(name, n_frames, seed):
    with tempfile.TemporaryDirectory() as tmp:
        config, truth = render_variant(tmp, name, n_frames, seed)
        t0 = time.perf_counter()
        with contextlib.redirect_stdout(io.StringIO()), \
                contextlib.redirect_stderr(io.StringIO()) as err:
            code = photpipe_main(["run", str(config), "--workers", "0", "--no-progress"])
        seconds = time.perf_counter() - t0
        if code not in (0,):
            print(f"{name}: photpipe run exited {code}: {err.getvalue().strip()[-300:]}")
        figures = compare(Path(tmp) / "results", truth)
        figures["s_per_frame"] = seconds / n_frames
        return figures


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=20)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--variants", default=",".join(VARIANTS))
    args = ap.parse_args(argv)
    head = (f"{'variant':<15}{'meas':>6}{'zp bias':>8}{'zp sd':>7}{'det':>5}{'UL':>4}"
            f"{'UL bad':>7}{'no-nuc':>7}{'bias':>7}{'pull σ':>7}{'pull md':>8}{'Afρ/tr':>7}"
            f"{'Afρ σ':>6}{'rotation':>11}{'size':>13}{'s/fr':>6}")
    print(head)
    for name in [v for v in args.variants.split(",") if v]:
        f = run_variant(name, args.frames, args.seed)
        print(f"{name:<15}{f['measured']:>3}/{f['n']:<2}{f['zp_bias']:>+8.3f}"
              f"{f['zp_scatter']:>7.3f}{f['n_det']:>5}{f['n_ul']:>4}{f['ul_wrong']:>7}"
              f"{f['false_nucleus']:>7}{f['nuc_bias']:>+7.3f}{f['pull_sigma']:>7.2f}"
              f"{f['pull_median']:>+8.2f}{f['afrho_ratio']:>7.3f}{f['afrho_pull_sigma']:>6.2f}"
              f"{f['rotation']:>11}{f['size']:>13}{f['s_per_frame']:>6.1f}", flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
