"""Benchmark of plate solving one calibrated 2048 x 2048 frame with no WCS.

Prints the median wall time of ``solve_frame`` (detection of the bright stars, triangle match
against the catalogue around a pointing 12 arcmin off, TAN fit, verification) and the floor
measured in the same run: bare numpy calibration of the same frame ((raw - bias - dark) / flat,
as in ``benchmarks/photometry.py``). Run as ``python benchmarks/platesolve.py``; numbers vary
with the load of the machine. The aim is at most 0.3 s per frame.
"""

import statistics
import time

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.time import Time

from photpipe.frames.types import CalibratedFrame, FrameInfo, Quality
from photpipe.photometry import solve_frame
from photpipe.scenario import DetectorSpec, Instrument, SceneSpec, make_star_field, render_frame

SHAPE = (2048, 2048)
REPEATS = 7


def build(rng):
    inst = Instrument(shape=SHAPE, pixel_scale=1.0 * u.arcsec)
    pointing = SkyCoord(52.0 * u.deg, 18.0 * u.deg)
    stars = make_star_field(pointing, 0.75 * u.deg, n_stars=2500, mag_range=(12.0, 19.0),
                            rng=rng)
    time_mid = Time("2026-11-30T04:00:00")
    scene = SceneSpec(pointing=pointing, stars=stars, filter="R", zero_point=25.0,
                      wcs_rotation=137 * u.deg)
    hdul, truth = render_frame("science", inst, time=time_mid, exptime=60 * u.s, scene=scene,
                               detector=DetectorSpec(cosmic_rays=False), rng=rng)
    rn = inst.read_noise.to_value(u.electron)
    var = truth.signal + rn**2
    data = (truth.signal + rng.normal(0.0, 1.0, SHAPE) * np.sqrt(var)).astype(np.float32)
    quality = np.where(truth.saturated, Quality.SATURATED, 0).astype(np.uint16)
    guess = pointing.directional_offset_by(70 * u.deg, 12 * u.arcmin)
    header = hdul[0].header.copy()
    for key in [k for k in header if k[:2] in ("CT", "CR", "CD", "PC", "RA", "EQ", "WC")]:
        del header[key]
    header["OBJCTRA"] = guess.ra.to_string(u.hourangle, sep=" ")
    header["OBJCTDEC"] = guess.dec.to_string(u.deg, sep=" ", alwayssign=True)
    info = FrameInfo(path="bench/sci_0001.fits", kind="science", time_mid=time_mid,
                     exptime=60 * u.s, filter="R", gain=inst.gain, read_noise=inst.read_noise,
                     saturation=inst.saturation, binning=(1, 1), shape=SHAPE, header=header)
    frame = CalibratedFrame(info=info, data=data, variance=var.astype(np.float32),
                            quality=quality, wcs=None)
    raw = rng.normal(1000, 10, SHAPE).astype(np.uint16)
    masters = [np.full(SHAPE, v, np.float32) for v in (1000.0, 1.0, 1.0)]
    return frame, stars, truth, raw, masters


def floor(raw, masters):
    bias, dark, flat = masters
    return (raw.astype(np.float32) - bias - dark) / flat


def main():
    rng = np.random.default_rng(1)
    frame, stars, truth, raw, masters = build(rng)
    t_solve, t_floor = [], []
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        solved, sol, _ = solve_frame(frame, stars, band="R", pixel_scale=1.0 * u.arcsec)
        t_solve.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        floor(raw, masters)
        t_floor.append(time.perf_counter() - t0)
    s, f = statistics.median(t_solve), statistics.median(t_floor)
    xx, yy = np.meshgrid(np.linspace(0, SHAPE[1] - 1, 5), np.linspace(0, SHAPE[0] - 1, 5))
    a = truth.wcs.pixel_to_world(xx.ravel(), yy.ravel())
    b = solved.wcs.pixel_to_world(xx.ravel(), yy.ravel())
    print(f"plate solve of a {SHAPE[1]}x{SHAPE[0]} frame, pointing 12 arcmin off, "
          f"rotation 137 deg: {sol.n_matched} stars, median residual "
          f"{sol.median_arcsec:.3f} arcsec, largest error vs truth "
          f"{np.max(a.separation(b).arcsec):.3f} arcsec")
    print(f"solve_frame: {s:.3f} s   floor (numpy calibration): {f:.3f} s   "
          f"ratio {s / f:.1f}")


if __name__ == "__main__":
    main()
