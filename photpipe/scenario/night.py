"""Render a whole synthetic night (calibrations and science frames) into a folder of FITS files."""

import os
from dataclasses import dataclass, field, replace

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.time import Time

from photpipe._files import replacing

from .comet import CometSpec
from .render import DetectorSpec, HeaderSpec, SceneSpec, Seeing, render_frame

__all__ = ["ScienceExposure", "NightTruth", "render_night", "write_frame"]


@dataclass(frozen=True)
class ScienceExposure:
    """One science exposure of a synthetic night.

    Parameters
    ----------
    time : `~astropy.time.Time`
        Mid-exposure time (UTC).
    exptime : `~astropy.units.Quantity` ['time']
    pointing : `~astropy.coordinates.SkyCoord`
        Detector centre.
    comet : `CometSpec` or None
    filter : str
    fwhm : `~astropy.units.Quantity` ['angle']
    sky_rate : `~astropy.units.Quantity` [electron / s]
    zero_point : float
        Magnitude giving 1 electron/s.
    wcs_offset_pix : tuple of float
        Error of the header WCS.
    tracking : {"sidereal", "comet"}
        What the telescope followed: the stars (the moving comet trails) or the comet (the
        stars trail).
    """

    time: Time
    exptime: u.Quantity
    pointing: SkyCoord
    comet: CometSpec | None = None
    filter: str = "R"
    fwhm: u.Quantity = 2.5 * u.arcsec
    sky_rate: u.Quantity = 5.0 * u.electron / u.s
    zero_point: float = 25.0
    wcs_offset_pix: tuple = (0.0, 0.0)
    tracking: str = "sidereal"

    def scene(self, stars=None):
        """The `SceneSpec` of this exposure, with ``stars`` in the field."""
        return SceneSpec(pointing=self.pointing, stars=stars, comet=self.comet,
                         filter=self.filter, zero_point=self.zero_point,
                         sky_rate=self.sky_rate, seeing=Seeing(fwhm=self.fwhm),
                         tracking=self.tracking)


@dataclass
class NightTruth:
    """What a rendered night holds.

    Attributes
    ----------
    folder : str
    files : dict of str to list of str
        Paths written, by kind.
    science : dict of str to `FrameTruth`
        Truth of each science frame, by path.
    """

    folder: str
    files: dict = field(default_factory=dict)
    science: dict = field(default_factory=dict)


def write_frame(hdul, path, *, compress=True):
    """Write a raw frame, tile-compressed (lossless Rice for integers) when ``compress``."""
    if compress:
        hdu = hdul[0]
        comp = fits.CompImageHDU(data=hdu.data, header=hdu.header, compression_type="RICE_1")
        out = fits.HDUList([fits.PrimaryHDU(), comp])
    else:
        out = hdul
    # the folder must exist (render_night makes it); no fsync: a synthetic night can be made again
    with replacing(path, fsync=False) as tmp:
        out.writeto(tmp, overwrite=True)
    return path


def render_night(folder, instrument, science, *, stars=None, n_bias=5, n_dark=5,
                 dark_exptime=None, n_flat=5, flat_exptime=3.0 * u.s, compress=True,
                 object_name="", header_extra=None, kind_values=None, rng=None):
    """Render and write one night: bias, dark and flat frames, then the science frames.

    Parameters
    ----------
    folder : str or path-like
        Output folder (created).
    instrument : `Instrument`
    science : list of `ScienceExposure`
    stars : `~astropy.table.QTable`, optional
        Reference stars rendered into the science frames.
    n_bias, n_dark, n_flat : int, optional
        Number of each calibration frame (flats per filter used by the science frames).
    dark_exptime : `~astropy.units.Quantity` ['time'], optional
        Dark exposure time (default: that of the first science frame).
    flat_exptime : `~astropy.units.Quantity` ['time'], optional
    compress : bool, optional
        Write ``.fits.fz`` tile-compressed files.
    object_name : str, optional
    header_extra : dict, optional
        Cards added to every frame (site, telescope, ...).
    kind_values : dict, optional
        IMAGETYP values per kind.
    rng : `numpy.random.Generator` or int, optional

    Returns
    -------
    truth : `NightTruth`
    """
    rng = np.random.default_rng(rng)
    os.makedirs(folder, exist_ok=True)
    ext = ".fits.fz" if compress else ".fits"
    truth = NightTruth(folder=str(folder))
    if not science:
        msg = "a night needs at least one science exposure"
        raise ValueError(msg)
    t0 = min(s.time for s in science) - 1 * u.h
    dark_t = dark_exptime if dark_exptime is not None else science[0].exptime
    filters = sorted({s.filter for s in science})
    calib_header = HeaderSpec(extra=header_extra, kind_values=kind_values)
    sci_header = HeaderSpec(object_name=object_name, extra=header_extra, kind_values=kind_values)

    def emit(kind, name, **kw):
        hdul, tr = render_frame(kind, instrument, rng=rng, **kw)
        path = write_frame(hdul, os.path.join(folder, name + ext), compress=compress)
        truth.files.setdefault(kind, []).append(path)
        return path, tr

    for i in range(n_bias):
        emit("bias", f"bias_{i + 1:03d}", time=t0 + i * 10 * u.s, exptime=0 * u.s,
             header=calib_header)
    dark_s = int(round(dark_t.to_value(u.s)))
    for i in range(n_dark):
        emit("dark", f"dark_{dark_s}s_{i + 1:03d}", time=t0 + (5 + i) * u.min, exptime=dark_t,
             header=calib_header)
    for f in filters:
        for i in range(n_flat):
            emit("flat", f"flat_{f}_{i + 1:03d}", time=t0 + (30 + i) * u.min,
                 exptime=flat_exptime, scene=SceneSpec(filter=f), header=calib_header)
    for i, s in enumerate(science):
        path, tr = emit("science", f"sci_{i + 1:04d}", time=s.time, exptime=s.exptime,
                        scene=s.scene(stars), detector=DetectorSpec(),
                        header=replace(sci_header, wcs_offset_pix=s.wcs_offset_pix))
        truth.science[path] = tr
    return truth
