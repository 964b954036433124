"""Plain data types that carry frames between the stages.

These are the contract between :mod:`photpipe.frames` (which makes them) and the measuring stages
(which read them). They hold arrays and astropy objects only; no stage below the CLI and the
campaign store reads files.
"""

from dataclasses import dataclass, field
from enum import IntFlag

import numpy as np
from astropy import units as u
from astropy.io import fits
from astropy.time import Time
from astropy.wcs import WCS

__all__ = ["Quality", "FrameInfo", "CalibratedFrame", "FRAME_KINDS"]

#: The kinds of frame a night holds.
FRAME_KINDS = ("bias", "dark", "flat", "science")


class Quality(IntFlag):
    """Bits of the data-quality plane (0 means a good pixel).

    The plane is stored as ``uint16``; a pixel can carry several bits.
    """

    GOOD = 0
    BAD = 1  #: dead or otherwise unusable in the master calibrations
    HOT = 2  #: hot pixel (dark current far above the frame's)
    SATURATED = 4  #: raw value at or above the saturation level
    COSMIC_RAY = 8  #: cosmic-ray hit found by L.A.Cosmic
    NONFINITE = 16  #: NaN or infinite in the raw data or a master
    LOW_FLAT = 32  #: flat response below the usable threshold
    EDGE = 64  #: outside the illuminated / usable area


@dataclass(frozen=True)
class FrameInfo:
    """What the header of one frame says, read once at ingest.

    Attributes
    ----------
    path : str
        The file the frame was read from.
    kind : str
        One of ``FRAME_KINDS``.
    time_mid : `~astropy.time.Time`
        Mid-exposure time (UTC).
    exptime : `~astropy.units.Quantity` ['time']
        Exposure time.
    filter : str or None
        Filter name as written in the header (None for bias and dark).
    gain : `~astropy.units.Quantity` [electron / adu]
        Detector gain.
    read_noise : `~astropy.units.Quantity` [electron]
        Read noise per pixel.
    saturation : `~astropy.units.Quantity` [adu]
        Raw level at or above which a pixel is saturated.
    binning : tuple of int
        (x, y) binning.
    shape : tuple of int
        (ny, nx) of the data array.
    object_name : str
        The OBJECT keyword, or "".
    header : `~astropy.io.fits.Header`
        The full primary header (not used for comparisons).
    instrument : str
        Name of the instrument profile the frame was read with (``"default"`` when none).
    pixel_scale : `~astropy.units.Quantity` ['angle'] or None
        Pixel scale of the (binned) frame from the instrument profile or the header.
    site : `~astropy.coordinates.EarthLocation` or None
        Observing site from the header; None: the night's site applies.
    conflicts : tuple of str
        Header values that differ from the configured ones (the configured value was used).
    sections : tuple of (str or None, str or None)
        The camera's configured image area and overscan strip (FITS sections), where they
        replace the header's TRIMSEC/DATASEC and BIASSEC; (None, None): the header's.
    """

    path: str
    kind: str
    time_mid: Time
    exptime: u.Quantity
    filter: str | None
    gain: u.Quantity
    read_noise: u.Quantity
    saturation: u.Quantity
    binning: tuple
    shape: tuple
    object_name: str = ""
    header: fits.Header = field(default_factory=fits.Header, compare=False, repr=False)
    instrument: str = "default"
    pixel_scale: u.Quantity | None = field(default=None, compare=False)
    site: object = field(default=None, compare=False, repr=False)
    conflicts: tuple = field(default=(), compare=False, repr=False)
    sections: tuple = field(default=(None, None), compare=False, repr=False)

    @property
    def name(self):
        """The file name without folders and FITS extensions, used to name the frame."""
        base = self.path.replace("\\", "/").rsplit("/", 1)[-1]
        for ext in (".fz", ".gz", ".fits", ".fit", ".fts"):
            if base.lower().endswith(ext):
                base = base[: -len(ext)]
        return base


@dataclass
class CalibratedFrame:
    """A calibrated science frame with its variance and quality planes.

    Attributes
    ----------
    info : FrameInfo
        Header facts of the raw frame.
    data : ndarray, shape (ny, nx)
        Calibrated signal in electrons accumulated over the exposure (not per second),
        sky not subtracted.
    variance : ndarray, shape (ny, nx)
        Variance of ``data`` in electron**2.
    quality : ndarray of uint16, shape (ny, nx)
        `Quality` bits; 0 is good.
    wcs : `~astropy.wcs.WCS` or None
        Celestial WCS from the header, if any.
    history : list of str
        Calibration steps applied, in order.
    flags : tuple of str
        Short words for calibrations that were not ideal (``no_dark``, ``dark_scaled``), empty
        when all is well.
    """

    info: FrameInfo
    data: np.ndarray
    variance: np.ndarray
    quality: np.ndarray
    wcs: WCS | None = None
    history: list = field(default_factory=list)
    flags: tuple = ()

    def __post_init__(self):
        shapes = {self.data.shape, self.variance.shape, self.quality.shape}
        if len(shapes) != 1:
            msg = (f"frame {self.info.path!r}: data, variance and quality planes differ in shape: "
                   f"{self.data.shape}, {self.variance.shape}, {self.quality.shape}")
            raise ValueError(msg)

    @property
    def name(self):
        """Short name of the frame (file name without extension)."""
        return self.info.name

    @property
    def good(self):
        """Boolean mask of pixels with no quality bit set and finite data."""
        return (self.quality == 0) & np.isfinite(self.data)
