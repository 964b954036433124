"""Benchmark of the batch run: one synthetic night end to end, in one process and on workers.

    python benchmarks/campaign.py                 # 200-frame nights of 1024x1024 and 2048x2048
    python benchmarks/campaign.py --frames 16     # a quick run
    python benchmarks/campaign.py --sizes 1024    # one frame size

Renders a night of the invented demo comet with photpipe.scenario, then runs the whole pipeline
(masters, geometry, calibration, photometry, nucleus fit, store, exports, campaign stages) on it
in one process, and with one and two local Dask workers. Prints, for each: seconds per frame end
to end; the frame phase (first task handed out to last result stored) against its floor, the
frame tasks' own time divided by the workers; the parent's serial time by phase (inventories,
masters, geometry, waiting for the workers, night tables, campaign steps), which does not
shrink with workers; the share of a core each task got (CPU time / wall time in the worker:
below 1 means it waited for a core other work held); and the peak memory of each worker (goal:
a few frames, not the night). Then the speed-up end to end and of the frame phase (goal >= 1.8
on 2 cores), and the machine's own ceiling: the same runner, already started, on a pure-numpy
task. Numbers are noisy when other work shares the CPU.
"""

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.time import Time

from photpipe.campaign import TaskRunner
from photpipe.campaign.pipeline import run_campaign
from photpipe.config import geometry_for_times, load_config
from photpipe.scenario import Instrument, make_star_field, render_night
from photpipe.scenario.demo import demo_exposures

ROOT = Path(__file__).resolve().parents[1]
_SETTLE = 10   # frames after which a worker's memory should no longer grow


def burn(seed):
    """A fixed CPU-bound numpy task (FFTs), to measure what 2 processes can gain here."""
    rng = np.random.default_rng(seed)
    a = rng.normal(size=(512, 512))
    for _ in range(40):
        a = np.fft.irfft2(np.fft.rfft2(a), s=a.shape)
    return float(a[0, 0])


def imports_peak_mb(_):
    """Peak memory of a fresh worker once the frame stages are imported (before any frame)."""
    import photpipe.frames  # noqa: F401
    import photpipe.nucleus  # noqa: F401
    import photpipe.photometry  # noqa: F401
    from photpipe._memory import peak_resident_mb
    from photpipe.campaign import tasks  # noqa: F401

    return peak_resident_mb()


def machine_speedup(n_tasks=16, repeats=2):
    """Speed-up of 1 -> 2 workers on `burn` tasks, cluster start-up excluded (best of repeats)."""
    times = {}
    for workers in (1, 2):
        with TaskRunner(workers=workers, progress=False) as runner:
            list(runner.map(burn, range(2 * workers)))  # processes started and warm
            best = np.inf
            for _ in range(repeats):
                t0 = time.perf_counter()
                list(runner.map(burn, range(n_tasks)))
                best = min(best, time.perf_counter() - t0)
        times[workers] = best
    return times[1] / times[2], times


def render(folder, n_frames, size, seed=7):
    config = load_config(ROOT / "configs" / "demo.toml")
    rng = np.random.default_rng(seed)
    times = Time("2026-12-01T02:10:00", scale="utc") + np.arange(n_frames) * 75 * u.s
    geom = geometry_for_times(config, config["night"][0], times)
    exposures = demo_exposures(times, geom, phase_function=lambda phase: 1.0, rng=rng)
    center = SkyCoord(np.mean(geom["ra"]), np.mean(geom["dec"]))
    half = size * 1.5 / 3600 / 2 * u.deg
    stars = make_star_field(center, half * 1.6, n_stars=int(0.0006 * size * size),
                            mag_range=(19.0, 13.5), rng=rng)
    stars.write(folder / "stars.ecsv", overwrite=True)
    inst = Instrument(shape=(size, size), pixel_scale=1.5 * u.arcsec, pattern_seed=3,
                      name="invented benchmark camera")
    render_night(folder / "night", inst, exposures, stars=stars, n_bias=5, n_dark=3, n_flat=3,
                 rng=rng)


def write_config(folder, raw):
    demo = (ROOT / "configs" / "demo.toml").read_text()
    orbit = demo[demo.index("[target.orbit]"):demo.index("[geometry]")]
    text = f"""[campaign]
name = "benchmark (invented)"
results = "{folder / 'results'}"

[[night]]
path = "{raw / 'night'}"
site = "kettle_rock"

[sites.kettle_rock]
longitude_deg = -111.42
latitude_deg = 34.17
height_m = 1710.0

[target]
name = "Vesperine"

{orbit}
[photometry]
reference_stars = "{raw / 'stars.ecsv'}"
apertures_km = [5000.0, 10000.0]
apertures_arcsec = [5.0]

[nucleus]
cutout_pix = 61
"""
    path = folder / "bench.toml"
    path.write_text(text)
    return load_config(path)


def report(summary, workers, frame_mb, raw):
    """Print one run's figures."""
    n = max(summary.measured, 1)
    frames = summary.phase_seconds.get("frames", np.nan)
    floor = sum(summary.task_seconds) / max(workers, 1)
    wall, cpu = sum(summary.task_seconds), sum(summary.task_cpu_seconds)
    where = "in one process" if workers == 0 else f"{workers} worker(s)"
    print(f"{where}: {summary.seconds:.1f} s for {summary.measured} frames = "
          f"{summary.seconds / n:.2f} s/frame end to end; frame phase {frames:.1f} s = "
          f"{frames / n:.2f} s/frame, floor (task time / workers) {floor:.1f} s, ratio to "
          f"floor {frames / max(floor, 1e-9):.2f}")
    parts = ", ".join(f"{k} {v:.1f}" for k, v in summary.phase_seconds.items()
                      if k not in ("frames", "workers start"))
    print(f"   serial part {summary.seconds - frames:.1f} s ({parts}; the workers' start "
          f"{summary.phase_seconds.get('workers start', 0.0):.1f} s runs beside the masters); "
          f"task {wall / n:.2f} s wall, {cpu / n:.2f} s CPU per frame (share of a core "
          f"{cpu / max(wall, 1e-9):.2f})")
    print(f"   sent to workers {summary.bytes_to_workers / n / 1024:.0f} kB per frame, back "
          f"{summary.bytes_from_workers / n / 1024:.0f} kB per frame (workers read and write "
          "the frames themselves)")
    peaks = ", ".join(f"{mb:.0f}" for mb in summary.worker_peak_mb.values())
    night_mb = sum(f.stat().st_size for f in (raw / "night").iterdir()) / 2**20
    print(f"   peak memory per worker: {peaks} MB (one calibrated frame is {frame_mb:.0f} MB; "
          f"the raw night is {night_mb:.0f} MB compressed)")
    for track in summary.worker_memory_track.values():
        early = min(_SETTLE, len(track)) - 1
        grown = track[-1] - track[early]
        per = grown / max(len(track) - 1 - early, 1) * 1024
        print(f"   a worker's peak after its frame {early + 1}: {track[early]:.0f} MB, after "
              f"its frame {len(track)}: {track[-1]:.0f} MB (growth {grown:+.1f} MB, "
              f"{per:+.0f} kB per frame; goal: flat)")
    skipped = [s for s in summary.all_skipped() if s.stage not in ("rotation", "size")]
    if skipped:
        print(f"   {len(skipped)} skip records, e.g. {skipped[0]}")


def one_size(args, size):
    """Render one night of ``size`` x ``size`` frames and run it with 1 and 2 workers."""
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        raw = tmp / "raw"
        raw.mkdir()
        t0 = time.perf_counter()
        render(raw, args.frames, size)
        print(f"\n=== {args.frames} frames of {size}x{size}, rendered in "
              f"{time.perf_counter() - t0:.1f} s")
        frame_mb = size * size * (4 + 4 + 2) / 2**20
        with TaskRunner(workers=1, progress=False) as runner:
            [(_, baseline)] = list(runner.map(imports_peak_mb, [0]))
        print(f"a worker with the stages imported, before any frame: {baseline:.0f} MB")
        results = {}
        for workers in (0, 1, 2):
            folder = tmp / f"w{workers}"
            folder.mkdir()
            config = write_config(folder, raw)
            summary = run_campaign(config, workers=workers, progress=False, echo=lambda s: None)
            results[workers] = summary
            report(summary, workers, frame_mb, raw)
        return results


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--frames", type=int, default=200,
                        help="science frames in the night (default 200, the issue's night)")
    parser.add_argument("--sizes", type=int, nargs="+", default=[1024, 2048],
                        help="frame sides in pixels (default 1024 2048)")
    args = parser.parse_args(argv)
    print("photpipe campaign benchmark (shared machine: timings are noisy)")
    by_size = {size: one_size(args, size) for size in args.sizes}
    ceiling, times = machine_speedup()
    print(f"\nmachine ceiling, same runner already started, pure-numpy task: {ceiling:.2f} "
          f"({times[1]:.1f} s -> {times[2]:.1f} s)")
    for size, results in by_size.items():
        n = max(results[1].measured, 1)
        speedup = results[1].seconds / results[2].seconds
        alone = results[0].seconds / n
        frames = {w: results[w].phase_seconds.get("frames", np.nan) for w in (1, 2)}
        frame_speedup = frames[1] / frames[2]
        serial = {w: results[w].seconds - frames[w] for w in (1, 2)}
        peaks = [mb for w in (1, 2) for mb in results[w].worker_peak_mb.values()]
        print(f"{size}x{size}: {alone:.2f} / {results[1].seconds / n:.2f} / "
              f"{results[2].seconds / n:.2f} s/frame end to end (one process / 1 / 2 workers; "
              f"2 workers {'not ' if results[2].seconds <= results[0].seconds else ''}slower "
              f"than one process), serial {serial[1]:.1f} / {serial[2]:.1f} s; "
              f"speed-up end to end {speedup:.2f}, frame phase {frame_speedup:.2f} = "
              f"{frame_speedup / ceiling:.2f} of the ceiling (goal >= 0.9); peak memory per "
              f"worker {max(peaks, default=np.nan):.0f} MB (goal < 600)")
        cpu = {w: sum(results[w].task_cpu_seconds) / w for w in (1, 2)}
        print(f"   frame-phase speed-up on CPU time alone: {cpu[1] / cpu[2]:.2f}; at 200 frames "
              f"these rates would give an end-to-end speed-up of "
              f"{(serial[1] + 200 * frames[1] / n) / (serial[2] + 200 * frames[2] / n):.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
