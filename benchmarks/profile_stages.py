"""Per-stage profile of one science frame, measured the way a frame task runs it.

    python benchmarks/profile_stages.py                  # 2048x2048, 3 frames, 3 repeats
    python benchmarks/profile_stages.py --size 1024 --frames 2 --repeats 2

Renders a small night of the invented demo comet (photpipe.scenario, the same night as
benchmarks/campaign.py), builds its masters, the geometry and the reference-star store, then
times every stage of a frame task on each frame, in turn with the floor: reading the raw frame
and calibrating it with bare numpy, ``(raw - bias - dark) / flat``. Prints each stage's best
time over the repeats (the minimum: the machine is shared, and other work only adds time), its
share of the frame and its ratio to the floor measured in the same run. The photometry stage is
further split by the labelled laps it records (``details["timings_s"]``). The first frame of the
process is timed apart ("first call"), since one-time set-ups (imports, caches) land there.
"""

import argparse
import importlib.util
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.io import fits

from photpipe.campaign.refstars import campaign_reference_store
from photpipe.campaign.tasks import _seed, frame_reference_stars
from photpipe.config import geometry_at_location, location_for_night, read_nucleus, read_photometry
from photpipe.frames import (
    build_masters,
    calibrate_frame,
    find_cosmic_rays,
    load_master,
    plan_calibrations,
    scan_night,
    write_calibrated,
)
from photpipe.nucleus import fit_nucleus, measure_psf
from photpipe.photometry import measure_comet_frame

HERE = Path(__file__).resolve().parent


def _campaign_bench():
    """benchmarks/campaign.py as a module (its night and configuration are reused)."""
    spec = importlib.util.spec_from_file_location("campaign_bench", HERE / "campaign.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _floor(info, masters):
    """Read the raw frame and calibrate it with bare numpy."""
    with fits.open(info.path) as hdul:
        hdu = hdul[1] if len(hdul) > 1 else hdul[0]
        raw = hdu.data.astype(np.float32)
    return (raw - masters["bias"] - masters["dark"]) / masters["flat"]


def _plain_masters(masters, info):
    bias, dark, flat, _ = masters.choose(info)
    exptime = info.exptime.to_value(u.s)
    return {"bias": load_master(bias.path).value,
            "dark": load_master(dark.path).value * np.float32(exptime),
            "flat": load_master(flat.path).value}


def _one_frame(info, masters, geometry_row, context, folder):
    """Every stage of a frame task on one frame: seconds by stage, and photometry laps."""
    t = {}
    clock = time.perf_counter()

    def lap(name):
        nonlocal clock
        now = time.perf_counter()
        t[name] = t.get(name, 0.0) + now - clock
        clock = now
    frame = calibrate_frame(info, masters, detect_cosmics=False)
    lap("calibration")
    ignore = frame.quality != 0
    saturated = (frame.quality & 4) > 0
    rn = info.read_noise.to_value(u.electron)
    hits = find_cosmic_rays(frame.data, frame.variance, ignore, read_noise=rn,
                            saturated=saturated)
    frame.quality[hits] |= np.uint16(8)
    lap("cosmic rays")
    write_calibrated(frame, folder / f"{info.name}.fits")
    lap("write calibrated")
    stars = frame_reference_stars(frame, context["store"])
    lap("reference stars")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        phot = measure_comet_frame(frame, stars, geometry_row[0], site=context["site"],
                                   **context["photometry"])
        lap("photometry")
        x0 = float(u.Quantity(phot.comet["x_pix"][0]).value)
        y0 = float(u.Quantity(phot.comet["y_pix"][0]).value)
        star_xy = np.column_stack([u.Quantity(phot.stars["x"]).value,
                                   u.Quantity(phot.stars["y"]).value])
        options = dict(context["nucleus"])
        psf_options = dict(context["psf"])
        psf_options.setdefault("fallback_fwhm", float(phot.details["fwhm_pix"]))
        psf = measure_psf(frame, star_xy, exclude_xy=(x0, y0), **psf_options)
        lap("PSF")
        fit_nucleus(frame, x0, y0, psf, pixel_scale=context["pixel_scale"],
                    zero_point=phot.zero_point.zp, zero_point_err=phot.zero_point.zp_err,
                    star_xy=star_xy, rng=np.random.default_rng(_seed(info.name)), **options)
        lap("nucleus fit")
    return t, dict(phot.details["timings_s"]), int(hits.sum())


def _memory_child(info, masters, geometry_row, context, folder, queue):
    """In a fresh process: peak resident memory before and after one frame task (MB)."""
    import photpipe.nucleus  # noqa: F401
    import photpipe.photometry  # noqa: F401
    from photpipe._memory import peak_resident_mb

    before = peak_resident_mb()
    _one_frame(info, masters, geometry_row, context, folder)
    queue.put((before, peak_resident_mb()))


def _frame_memory(info, masters, geometry_row, context, folder):
    """Peak memory of one frame task in a fresh process, as a worker runs it."""
    import multiprocessing as mp

    ctx = mp.get_context("spawn")
    queue = ctx.Queue()
    child = ctx.Process(target=_memory_child,
                        args=(info, masters, geometry_row, context, folder, queue))
    child.start()
    result = queue.get()
    child.join()
    return result


def _table(best, floor, title):
    total = sum(best.values())
    print(f"\n{title}")
    print(f"  {'stage':<26}{'best s':>9}{'share':>8}{'/ floor':>9}")
    for name, seconds in best.items():
        print(f"  {name:<26}{seconds:9.3f}{seconds / total:8.1%}{seconds / floor:9.2f}")
    print(f"  {'total':<26}{total:9.3f}{1:8.0%}{total / floor:9.2f}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--size", type=int, default=2048, help="frame side in pixels")
    parser.add_argument("--frames", type=int, default=3, help="science frames in the night")
    parser.add_argument("--repeats", type=int, default=3, help="passes over the frames")
    args = parser.parse_args(argv)
    bench = _campaign_bench()
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        raw = tmp / "raw"
        raw.mkdir()
        t0 = time.perf_counter()
        bench.render(raw, args.frames, args.size)
        print(f"photpipe per-stage profile: {args.frames} frames of {args.size}x{args.size} "
              f"rendered in {time.perf_counter() - t0:.0f} s (shared machine: best of "
              f"{args.repeats} passes)")
        config = bench.write_config(tmp, raw)
        night = config["night"][0]
        plan = plan_calibrations(scan_night(night["path"]))
        t0 = time.perf_counter()
        masters = build_masters(plan, tmp / "masters")
        masters_s = time.perf_counter() - t0
        site = location_for_night(config, night)
        times = [info.time_mid for info in plan.science]
        from astropy.time import Time
        geometry = geometry_at_location(config, site, Time(times))
        phot = read_photometry(config)
        nucleus = read_nucleus(config)
        store = campaign_reference_store(phot.reference_stars, tmp / "store.npz",
                                         band=phot.band, colour=phot.colour)
        pixel_scale = 1.5 * u.arcsec / u.pix
        context = {"store": store.store_path, "site": site, "photometry": phot.options(),
                   "nucleus": nucleus.fit_options(), "psf": nucleus.psf_options(),
                   "pixel_scale": pixel_scale}
        out = tmp / "calibrated"
        out.mkdir()
        plain = _plain_masters(masters, plan.science[0])
        t0 = time.perf_counter()
        first, first_laps, _ = _one_frame(plan.science[0], masters, geometry[0:1], context, out)
        first_s = time.perf_counter() - t0
        best, laps, floor, hits = {}, {}, np.inf, []
        for _ in range(args.repeats):
            for i, info in enumerate(plan.science):
                t0 = time.perf_counter()
                _floor(info, plain)
                floor = min(floor, time.perf_counter() - t0)
                stages, phot_laps, n_hits = _one_frame(info, masters, geometry[i:i + 1],
                                                       context, out)
                hits.append(n_hits)
                for name, s in stages.items():
                    best[name] = min(best.get(name, np.inf), s)
                for name, s in phot_laps.items():
                    laps[name] = min(laps.get(name, np.inf), s)
        print(f"masters built in {masters_s:.1f} s; floor (read raw + (raw-bias-dark)/flat): "
              f"{floor:.3f} s/frame; cosmic-ray pixels flagged per frame: {min(hits)}-{max(hits)}")
        _table(best, floor, "frame task by stage (best over frames and passes):")
        _table(laps, floor, "photometry stage by lap (best over frames and passes):")
        extra = {k: first[k] - best[k] for k in best if first[k] - best[k] > 0.05}
        print(f"\nfirst call in the process: {first_s:.2f} s; beyond the best, by stage: "
              + (", ".join(f"{k} +{v:.2f} s" for k, v in extra.items()) or "none over 0.05 s"))
        slow = {k: first_laps[k] - laps[k] for k in laps if first_laps[k] - laps[k] > 0.05}
        if slow:
            print("   of which photometry laps: "
                  + ", ".join(f"{k} +{v:.2f} s" for k, v in slow.items()))
        before, peak = _frame_memory(plan.science[0], masters, geometry[0:1], context, out)
        print(f"peak memory of a fresh process running one frame task: {peak:.0f} MB "
              f"({before:.0f} MB with the stages imported; goal for a worker: < 600)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
