"""The invented camera of a synthetic scenario, and its fixed patterns.

A camera has a bias with structure, dark current with hot pixels, and a flat-field response with
vignetting and pixel-to-pixel variation. The patterns are drawn once from the instrument's own
seed, so every frame of a night shares them, as with a real detector.
"""

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value

__all__ = ["Instrument", "DetectorPatterns"]


@dataclass(frozen=True)
class Instrument:
    """A CCD camera on a telescope, as the scenario generator renders it.

    Parameters
    ----------
    shape : tuple of int
        (ny, nx) of the detector.
    pixel_scale : `~astropy.units.Quantity` ['angle']
        Angular size of one pixel.
    gain : `~astropy.units.Quantity` [electron / adu]
        Electrons per ADU.
    read_noise : `~astropy.units.Quantity` [electron]
        Read noise per pixel.
    bias_level : `~astropy.units.Quantity` [adu]
        Mean bias level.
    saturation : `~astropy.units.Quantity` [adu]
        Raw level at which pixels saturate (the ADC ceiling).
    dark_rate : `~astropy.units.Quantity` [electron / s]
        Mean dark current per pixel.
    hot_pixel_fraction : float
        Fraction of pixels that are hot.
    dead_pixel_fraction : float
        Fraction of pixels with very low response (flagged by the flat).
    vignetting : float
        Fractional loss of response at the detector corners.
    pattern_seed : int
        Seed of the fixed patterns (bias structure, hot pixels, flat).
    name : str
        Instrument name written to the header.
    """

    shape: tuple = (512, 512)
    pixel_scale: u.Quantity = 1.2 * u.arcsec
    gain: u.Quantity = 1.6 * u.electron / u.adu
    read_noise: u.Quantity = 8.0 * u.electron
    bias_level: u.Quantity = 1050.0 * u.adu
    saturation: u.Quantity = 60000.0 * u.adu
    dark_rate: u.Quantity = 0.02 * u.electron / u.s
    hot_pixel_fraction: float = 5e-4
    dead_pixel_fraction: float = 2e-4
    vignetting: float = 0.15
    pattern_seed: int = 7
    name: str = "invented 0.6 m f/4 CCD camera"

    def __post_init__(self):
        if len(self.shape) != 2 or min(self.shape) < 16:
            msg = f"'shape' must be (ny, nx) with both at least 16, got {self.shape}"
            raise ValueError(msg)
        for field_name, unit in (("pixel_scale", u.arcsec), ("gain", u.electron / u.adu),
                                 ("read_noise", u.electron), ("saturation", u.adu)):
            as_positive_value(getattr(self, field_name), unit, field_name)
        as_value(self.bias_level, u.adu, "bias_level")
        as_value(self.dark_rate, u.electron / u.s, "dark_rate")

    @property
    def patterns(self):
        """The detector's fixed patterns (computed once per instrument and cached)."""
        return _patterns(self)


@dataclass(frozen=True)
class DetectorPatterns:
    """Fixed patterns of a detector.

    Attributes
    ----------
    bias : ndarray, shape (ny, nx)
        Bias in ADU (level plus column structure and a gradient).
    dark_rate : ndarray, shape (ny, nx)
        Dark current in electron/s, with hot pixels.
    flat : ndarray, shape (ny, nx)
        Relative response (mean 1 over the detector): vignetting times pixel response.
    hot : ndarray of bool
        The hot pixels.
    dead : ndarray of bool
        Pixels of very low response.
    """

    bias: np.ndarray
    dark_rate: np.ndarray
    flat: np.ndarray
    hot: np.ndarray
    dead: np.ndarray


@lru_cache(maxsize=8)
def _patterns(inst):
    rng = np.random.default_rng(inst.pattern_seed)
    ny, nx = inst.shape
    y, x = np.mgrid[0:ny, 0:nx].astype(float)
    level = inst.bias_level.to_value(u.adu)
    columns = rng.normal(0.0, 2.0, nx)
    bias = (level + columns[np.newaxis, :] + 4.0 * (y / ny) + 1.5 * np.sin(2 * np.pi * x / nx))

    dark = np.full(inst.shape, inst.dark_rate.to_value(u.electron / u.s))
    hot = rng.random(inst.shape) < inst.hot_pixel_fraction
    dark[hot] = rng.uniform(2.0, 40.0, hot.sum())

    r2 = ((x - nx / 2) / (nx / 2)) ** 2 + ((y - ny / 2) / (ny / 2)) ** 2
    vignette = 1.0 - inst.vignetting * r2 / 2.0
    response = rng.normal(1.0, 0.01, inst.shape)
    dead = rng.random(inst.shape) < inst.dead_pixel_fraction
    response[dead] = rng.uniform(0.0, 0.2, dead.sum())
    flat = vignette * response
    flat /= flat.mean()
    return DetectorPatterns(bias=bias, dark_rate=dark, flat=flat, hot=hot, dead=dead)
