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

Every variant and night has a seed of its own (``variant_seed``); ``--nights K`` renders K nights
per variant and pools their frames (the median of 16 honest pulls still scatters by ±0.31).

Run: ``python benchmarks/hard_nights.py [--frames 20] [--nights 3] [--variants nominal,...]``.
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
    """One night's raw figures (lists per frame, counts, step status) against the truth."""
    night = results / "night_2026-12-01"
    zp = _by_frame(Table.read(night / "zero_points.ecsv"))
    nuc = _by_frame(Table.read(night / "nucleus.ecsv")) if (night / "nucleus.ecsv").exists() \
        else {}
    meas = Table.read(night / "measurements.ecsv")
    raw = {"n": len(truth), "measured": len(zp), "zp_d": [], "pulls": [], "bias": [],
           "ul_wrong": 0, "n_ul": 0, "n_det": 0, "afrho_ratio": [], "afrho_pull": []}
    for row in truth:
        name = str(row["frame"])
        if name in zp:
            raw["zp_d"].append(_plain(zp[name]["zp_mag"]) - float(row["zp_mag"]))
        if name not in nuc:
            continue
        fit = nuc[name]
        m, e = _plain(fit["nucleus_mag"]), _plain(fit["nucleus_mag_err"])
        m_true = _plain(row["nucleus_mag"])
        if "upper_limit" in str(fit["flags"]).split(","):
            raw["n_ul"] += 1
            raw["ul_wrong"] += int(np.isfinite(m) and m > m_true)
            continue
        if not np.isfinite(m):
            continue
        raw["n_det"] += 1
        if np.isfinite(m_true):
            raw["bias"].append(m - m_true)
            raw["pulls"].append((m - m_true) / e)
        else:
            raw["pulls"].append(np.inf)  # a nucleus claimed where there is none
    rho = _column(meas, "rho_km")
    small = meas[np.isclose(rho, RHO_KM)]
    truth_afrho = {str(r["frame"]): float(r["afrho_cm"]) for r in truth}
    for r in small:
        t = truth_afrho.get(str(r["frame"]), np.nan)
        a, ae = _plain(r["afrho_coma_cm"]), _plain(r["afrho_coma_err_cm"])
        if np.isfinite(t) and t > 0 and np.isfinite(a):
            raw["afrho_ratio"].append(a / t)
            raw["afrho_pull"].append((a - t) / ae)
        elif not (np.isfinite(t) and t > 0) and np.isfinite(a):
            raw["afrho_ratio"].append(np.nan)
            raw["afrho_pull"].append(a / ae)  # no coma: the pull is against zero
    for step in ("rotation", "size"):
        path = results / f"{step}.json"
        raw[step] = json.loads(path.read_text()).get("status", "?") if path.exists() else "-"
    return raw


def summarise(raws):
    """Figures of a variant from the raw figures of its nights (pooled frame by frame)."""
    pooled = {k: [v for raw in raws for v in raw[k]] for k in
              ("zp_d", "pulls", "bias", "afrho_ratio", "afrho_pull")}
    out = {k: sum(raw[k] for raw in raws) for k in ("n", "measured", "ul_wrong", "n_ul", "n_det")}
    finite = [p for p in pooled["pulls"] if np.isfinite(p)]
    ratio = pooled["afrho_ratio"]
    out.update(zp_bias=float(np.median(pooled["zp_d"])) if pooled["zp_d"] else np.nan,
               zp_scatter=_robust_sigma(pooled["zp_d"]),
               nuc_bias=float(np.median(pooled["bias"])) if pooled["bias"] else np.nan,
               pull_sigma=_robust_sigma(finite),
               pull_median=float(np.median(pooled["pulls"])) if pooled["pulls"] else np.nan,
               false_nucleus=int(np.sum(np.isinf(pooled["pulls"]))),
               afrho_ratio=float(np.nanmedian(ratio)) if np.any(np.isfinite(ratio)) else np.nan,
               afrho_pull_sigma=_robust_sigma(pooled["afrho_pull"]),
               afrho_pull_median=float(np.median(pooled["afrho_pull"]))
               if pooled["afrho_pull"] else np.nan)
    for step in ("rotation", "size"):
        out[step] = "/".join(sorted({raw[step] for raw in raws}))
    return out


def _column(table, name):
    return np.asarray(getattr(table[name], "value", table[name]), float)


def variant_seed(seed, name, night):
    """Seed of one night of a variant: every variant and night draws noise of its own.

    With one seed for all, every variant saw the same noise and seeing draws, so their pull
    medians moved together: eight medians that were one draw.
    """
    return seed + 1000 * list(VARIANTS).index(name) + night


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
        raw = compare(Path(tmp) / "results", truth)
        raw["seconds"] = seconds
        return raw


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=20)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--nights", type=int, default=1,
                    help="nights per variant, each with its own seed; figures are pooled")
    ap.add_argument("--variants", default=",".join(VARIANTS))
    args = ap.parse_args(argv)
    head = (f"{'variant':<15}{'meas':>6}{'zp bias':>8}{'zp sd':>7}{'det':>5}{'UL':>4}"
            f"{'UL bad':>7}{'no-nuc':>7}{'bias':>7}{'pull σ':>7}{'pull md':>8}{'Afρ/tr':>7}"
            f"{'Afρ σ':>6}{'rotation':>11}{'size':>13}{'s/fr':>6}")
    print(head)
    for name in [v for v in args.variants.split(",") if v]:
        raws = [run_variant(name, args.frames, variant_seed(args.seed, name, k))
                for k in range(args.nights)]
        f = summarise(raws)
        f["s_per_frame"] = sum(raw["seconds"] for raw in raws) / (args.frames * args.nights)
        print(f"{name:<15}{f['measured']:>3}/{f['n']:<2}{f['zp_bias']:>+8.3f}"
              f"{f['zp_scatter']:>7.3f}{f['n_det']:>5}{f['n_ul']:>4}{f['ul_wrong']:>7}"
              f"{f['false_nucleus']:>7}{f['nuc_bias']:>+7.3f}{f['pull_sigma']:>7.2f}"
              f"{f['pull_median']:>+8.2f}{f['afrho_ratio']:>7.3f}{f['afrho_pull_sigma']:>6.2f}"
              f"{f['rotation']:>11}{f['size']:>13}{f['s_per_frame']:>6.1f}", flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
