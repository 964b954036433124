"""Benchmark of the photometry stage on one calibrated 2048 x 2048 frame.

Prints the median wall time of ``measure_comet_frame`` (detection, matching and WCS refinement,
star photometry and zero point, comet apertures, profile, Afρ) and the floor measured in the same
run: reading the raw frame with astropy.io.fits and calibrating it with bare numpy
((raw - bias - dark) / flat). Run as ``python benchmarks/photometry.py``; numbers vary with the
load of the machine.
"""

import os
import statistics
import tempfile
import time
import warnings

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.time import Time
from astropy.wcs import WCS

from photpipe.frames.types import CalibratedFrame, FrameInfo, Quality
from photpipe.photometry import MoffatGrowth, coma_aperture_correction, measure_comet_frame
from photpipe.scenario import (
    CometSpec,
    DetectorSpec,
    HeaderSpec,
    Instrument,
    SceneSpec,
    make_star_field,
    render_frame,
)

SHAPE = (2048, 2048)
REPEATS = 7


def build(rng):
    inst = Instrument(shape=SHAPE, pixel_scale=1.0 * u.arcsec)
    pointing = SkyCoord(52.0 * u.deg, 18.0 * u.deg)
    stars = make_star_field(pointing, 0.45 * u.deg, n_stars=900, mag_range=(12.0, 19.0), rng=rng)
    comet = CometSpec(ra=pointing.ra, dec=pointing.dec, nucleus_mag=17.0 * u.mag,
                      afrho=200 * u.cm, r_h=1.5 * u.au, delta=1.0 * u.au, m_sun=-27.15)
    time_mid = Time("2026-11-30T04:00:00")
    scene = SceneSpec(pointing=pointing, stars=stars, comet=comet, filter="R", zero_point=25.0)
    hdul, truth = render_frame("science", inst, time=time_mid, exptime=60 * u.s, scene=scene,
                               detector=DetectorSpec(cosmic_rays=False),
                               header=HeaderSpec(wcs_offset_pix=(2.5, -1.5)), rng=rng)
    pat = inst.patterns
    gain = inst.gain.to_value(u.electron / u.adu)
    rn = inst.read_noise.to_value(u.electron)
    var = truth.signal + rn**2
    data = (truth.signal + rng.normal(0.0, 1.0, SHAPE) * np.sqrt(var)).astype(np.float32)
    quality = np.where(truth.saturated, Quality.SATURATED, 0).astype(np.uint16)
    info = FrameInfo(path="bench/sci_0001.fits", kind="science", time_mid=time_mid,
                     exptime=60 * u.s, filter="R", gain=inst.gain, read_noise=inst.read_noise,
                     saturation=inst.saturation, binning=(1, 1), shape=SHAPE,
                     header=hdul[0].header)
    frame = CalibratedFrame(info=info, data=data, variance=var.astype(np.float32),
                            quality=quality, wcs=WCS(hdul[0].header))
    geometry = {"r_h": 1.5 * u.au, "delta": 1.0 * u.au, "phase": 30 * u.deg,
                "elong": 95 * u.deg, "ra": pointing.ra, "dec": pointing.dec,
                "pa_sun": 250 * u.deg, "pa_neg_velocity": 120 * u.deg}
    masters = {"bias": pat.bias.astype(np.float32),
               "dark": (pat.dark_rate * 60.0 / gain).astype(np.float32),
               "flat": pat.flat.astype(np.float32)}
    return hdul, frame, stars, geometry, masters


def floor_once(path, masters):
    t0 = time.perf_counter()
    with fits.open(path) as hdul:
        raw = hdul[0].data.astype(np.float32)
    _ = (raw - masters["bias"] - masters["dark"]) / masters["flat"]
    return time.perf_counter() - t0


def main():
    rng = np.random.default_rng(2026)
    hdul, frame, stars, geometry, masters = build(rng)
    folder = tempfile.mkdtemp()
    path = os.path.join(folder, "sci_0001.fits")
    hdul.writeto(path)
    floor = [floor_once(path, masters) for _ in range(REPEATS)]
    stage = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = measure_comet_frame(frame, stars, geometry)  # warm-up (imports, caches)
        for _ in range(REPEATS):
            t0 = time.perf_counter()
            result = measure_comet_frame(frame, stars, geometry)
            stage.append(time.perf_counter() - t0)
    f_med, s_med = statistics.median(floor), statistics.median(stage)
    print(f"frame {SHAPE[1]}x{SHAPE[0]}, {result.details['n_detected']} detections, "
          f"{result.details['n_matched']} matched, {result.details['n_measured']} measured, "
          f"{result.zero_point.n_stars} in the zero point")
    print(f"photometry (measure_comet_frame): median {s_med:.3f} s over {REPEATS} runs")
    print(f"floor (FITS read + numpy calibration): median {f_med:.3f} s")
    print(f"ratio photometry / floor: {s_med / f_med:.1f}")
    steps = ", ".join(f"{k} {v:.3f}" for k, v in result.details["timings_s"].items())
    print(f"last run by step (s): {steps}")
    moffat = result.details["psf_moffat"]
    psf = MoffatGrowth(moffat["alpha_pix"], moffat["beta"])
    fwhm = result.details["fwhm_pix"]
    radii = result.details["radii_pix"]
    coma = []
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        coma_aperture_correction(radii, psf, reference_radius=4.0 * fwhm,
                                 annulus=(5.0 * fwhm, 8.0 * fwhm))
        coma.append(time.perf_counter() - t0)
    c_med = statistics.median(coma)
    print(f"of which the coma aperture correction ({len(radii)} apertures up to "
          f"{max(radii) / fwhm:.0f} FWHM): median {c_med:.3f} s ({c_med / f_med:.2f} of the floor)")
    os.remove(path)
    os.rmdir(folder)


if __name__ == "__main__":
    main()
