"""Small raw frames with a known bias, dark, flat and sky, written as FITS (test helper).

A stand-in detector for the array-level and file-level tests of photpipe.frames; the
truth-recovery tests on realistic nights use photpipe.scenario.
"""

import os
from dataclasses import dataclass

import numpy as np
from astropy.io import fits
from astropy.time import Time, TimeDelta

GAIN = 1.6          # electron / adu
READ_NOISE = 5.5    # electron
SATURATE = 65535.0  # adu


@dataclass(frozen=True)
class Detector:
    """Truth of a small detector."""

    bias: np.ndarray       # adu
    dark_rate: np.ndarray  # electron / s
    flat: np.ndarray       # normalised response
    hot: np.ndarray        # bool

    @property
    def shape(self):
        return self.bias.shape


def make_detector(shape=(48, 64), *, seed=0, n_hot=6):
    rng = np.random.default_rng(seed)
    ny, nx = shape
    y, x = np.mgrid[0:ny, 0:nx]
    bias = 1000.0 + 4.0 * np.sin(x / 5.0) + 0.05 * y + rng.normal(0, 1.5, shape)
    dark = np.full(shape, 0.02)
    hot = np.zeros(shape, bool)
    idx = rng.choice(ny * nx, n_hot, replace=False)
    hot.flat[idx] = True
    dark[hot] = rng.uniform(20.0, 60.0, n_hot)
    r2 = ((x - nx / 2) / nx) ** 2 + ((y - ny / 2) / ny) ** 2
    flat = (1.0 - 0.5 * r2) * (1.0 + rng.normal(0, 0.01, shape))
    flat /= np.median(flat)
    return Detector(bias=bias, dark_rate=dark, flat=flat, hot=hot)


def expose(det, *, exptime, sky=0.0, signal=None, rng, light=True, rounding=True):
    """Raw adu of one exposure: bias + (Poisson(flat*(sky+signal) + dark*t) + read noise)/gain."""
    expected = det.dark_rate * exptime
    if light:
        src = sky if signal is None else sky + signal
        expected = expected + det.flat * src
    electrons = rng.poisson(expected).astype(float) + rng.normal(0, READ_NOISE, det.shape)
    raw = det.bias + electrons / GAIN
    if rounding:
        raw = np.round(raw)
    return np.clip(raw, 0, SATURATE)


def header(kind, *, exptime, start="2026-12-01T02:00:00", filt="R", **extra):
    hdr = fits.Header()
    hdr["IMAGETYP"] = {"bias": "Bias Frame", "dark": "Dark Frame", "flat": "Flat Field",
                       "science": "Light Frame"}[kind]
    hdr["DATE-OBS"] = start
    hdr["EXPTIME"] = float(exptime)
    hdr["GAIN"] = GAIN
    hdr["RDNOISE"] = READ_NOISE
    hdr["SATURATE"] = SATURATE
    if kind in ("flat", "science"):
        hdr["FILTER"] = filt
    hdr["XBINNING"] = 1
    hdr["YBINNING"] = 1
    hdr["OBJECT"] = "test field" if kind == "science" else ""
    for key, value in extra.items():
        hdr[key] = value
    return hdr


def write(path, raw, hdr, *, compress=False):
    data = np.asarray(raw).astype(np.uint16)
    if compress:
        hdul = fits.HDUList([fits.PrimaryHDU(header=hdr),
                             fits.CompImageHDU(data, compression_type="RICE_1")])
    else:
        hdul = fits.HDUList([fits.PrimaryHDU(data, header=hdr)])
    hdul.writeto(path, overwrite=True)
    return str(path)


def write_night(folder, det, *, seed=1, n_bias=7, n_dark=5, dark_exptime=60.0, n_flat=5,
                flat_level=20000.0, n_science=3, science_exptime=60.0, sky=200.0,
                filters=("R",), compress=False, signal=None):
    """Write a small night; returns the list of paths by kind."""
    rng = np.random.default_rng(seed)
    os.makedirs(folder, exist_ok=True)
    ext = ".fits.fz" if compress else ".fits"
    t0 = Time("2026-12-01T01:00:00", scale="utc")
    paths = {"bias": [], "dark": [], "flat": [], "science": []}
    k = 0

    def start():
        nonlocal k
        k += 1
        return (t0 + TimeDelta(120.0 * k, format="sec")).isot

    for i in range(n_bias):
        raw = expose(det, exptime=0.0, rng=rng, light=False)
        paths["bias"].append(write(os.path.join(folder, f"bias_{i:03d}{ext}"), raw,
                                   header("bias", exptime=0.0, start=start()),
                                   compress=compress))
    for i in range(n_dark):
        raw = expose(det, exptime=dark_exptime, rng=rng, light=False)
        paths["dark"].append(write(os.path.join(folder, f"dark_{i:03d}{ext}"), raw,
                                   header("dark", exptime=dark_exptime, start=start()),
                                   compress=compress))
    for filt in filters:
        for i in range(n_flat):
            raw = expose(det, exptime=5.0, sky=flat_level * (1 + 0.05 * i), rng=rng)
            paths["flat"].append(write(os.path.join(folder, f"flat_{filt}_{i:03d}{ext}"), raw,
                                       header("flat", exptime=5.0, start=start(), filt=filt),
                                       compress=compress))
    for filt in filters:
        for i in range(n_science):
            raw = expose(det, exptime=science_exptime, sky=sky, signal=signal, rng=rng)
            paths["science"].append(write(
                os.path.join(folder, f"sci_{filt}_{i:03d}{ext}"), raw,
                header("science", exptime=science_exptime, start=start(), filt=filt),
                compress=compress))
    return paths
