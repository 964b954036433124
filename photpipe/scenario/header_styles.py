"""Rewrite a rendered night the way other acquisition programs write frames.

`render_night` writes one clean style (WCS, GAIN, RDNOISE, SATURATE, DATE-OBS with the time,
EXPTIME). Real small observatories write others: no WCS but the pointing as sexagesimal
strings, EXPOSURE instead of EXPTIME, the date and the time in two keywords, no detector
values, an overscan strip beside the image, ``.fit`` or ``.fz`` files, a ``TRACKING`` card
on a night that followed the comet. `restyle_night` copies a rendered night into such a style,
pixel for pixel the same exposure, so the reductions of both can be compared number for number.
"""

import gzip
import os
import shutil
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.io import fits
from astropy.wcs import WCS

from photpipe._files import replacing

__all__ = ["HeaderStyle", "HEADER_STYLES", "restyle_night"]

_WCS_PREFIXES = ("CTYPE", "CRVAL", "CRPIX", "CD1_", "CD2_", "CDELT", "PC1_", "PC2_", "CUNIT",
                 "WCSAXES", "RADESYS", "EQUINOX", "LONPOLE", "LATPOLE", "MJDREF", "WCSNAME")


@dataclass(frozen=True)
class HeaderStyle:
    """How a style writes a frame.

    Attributes
    ----------
    name : str
    drop_wcs : bool
        Leave the celestial WCS out.
    pointing : tuple of str or None
        Keyword pair for the telescope pointing (e.g. ``("OBJCTRA", "OBJCTDEC")``), written as
        sexagesimal strings (RA in hours), when the WCS is dropped.
    pointing_error_arcmin : float
        How far the written pointing is from the true frame centre (a direction drawn per
        frame).
    renames : tuple of (str, str)
        Keywords written under another name (``("EXPTIME", "EXPOSURE")``).
    drop : tuple of str
        Keywords left out.
    split_date : bool
        Write DATE-OBS as the date only and the time in TIME-OBS.
    kind_values : tuple of (str, str)
        IMAGETYP value per kind.
    overscan_columns : int
        Width of an overscan strip added on the right (with BIASSEC/TRIMSEC), 0 for none.
    ending : str
        File ending: ``.fits``, ``.fit``, ``.fts``, ``.fits.fz`` (tile-compressed),
        ``.fit.gz`` (gzip).
    extra : tuple of (str, object)
        More cards.
    wcs_error_pix : tuple of float
        Shift (x, y) of the header WCS's reference pixel: a header WCS that is wrong.
    """

    name: str
    drop_wcs: bool = False
    pointing: tuple | None = None
    pointing_error_arcmin: float = 0.0
    renames: tuple = ()
    drop: tuple = ()
    split_date: bool = False
    kind_values: tuple = ()
    overscan_columns: int = 0
    ending: str = ".fits"
    extra: tuple = field(default=())
    wcs_error_pix: tuple = (0.0, 0.0)


#: Styles the tests and the demo use, by name.
HEADER_STYLES = {
    "clean": HeaderStyle(name="clean"),
    "small-observatory": HeaderStyle(
        name="small-observatory", drop_wcs=True, pointing=("OBJCTRA", "OBJCTDEC"),
        pointing_error_arcmin=6.0, renames=(("EXPTIME", "EXPOSURE"),),
        drop=("GAIN", "RDNOISE", "SATURATE", "MJD-OBS"), split_date=True,
        kind_values=(("bias", "Bias Frame"), ("dark", "Dark Frame"), ("flat", "Flat Field"),
                     ("science", "Light Frame")),
        ending=".fit"),
    "overscan": HeaderStyle(name="overscan", overscan_columns=16, ending=".fits.fz"),
    "pointing-degrees": HeaderStyle(
        name="pointing-degrees", drop_wcs=True, pointing=("RA", "DEC"),
        pointing_error_arcmin=12.0, ending=".fts"),
    # a night rendered with ScienceExposure(tracking="comet"): the observatory says so in
    # every header, or (the unmarked variant) says nothing and the stars must tell
    "comet-tracked": HeaderStyle(name="comet-tracked", extra=(("TRACKING", "NON-SIDEREAL"),)),
    "comet-tracked-unmarked": HeaderStyle(name="comet-tracked-unmarked", drop=("TRACKING",)),
}

_KIND_OF = {"bias frame": "bias", "dark frame": "dark", "flat field": "flat",
            "light frame": "science", "bias": "bias", "dark": "dark", "flat": "flat",
            "light": "science", "object": "science", "science": "science"}


def _read(path):
    with fits.open(path) as hdul:
        for hdu in hdul:
            if hdu.data is not None and hdu.header.get("NAXIS", 0) == 2:
                header = hdul[0].header.copy() if hdu is not hdul[0] else fits.Header()
                for card in hdu.header.cards:
                    if card.keyword not in ("XTENSION", "PCOUNT", "GCOUNT", "EXTNAME") \
                            and not card.keyword.startswith("Z"):
                        header[card.keyword] = (card.value, card.comment)
                return np.asarray(hdu.data), header
    msg = f"{path}: no 2-D image to restyle"
    raise ValueError(msg)


def _pointing_cards(header, shape, style, rng):
    wcs = WCS(header, naxis=2)
    ny, nx = shape
    centre = wcs.celestial.pixel_to_world((nx - 1) / 2.0, (ny - 1) / 2.0)
    off = style.pointing_error_arcmin * np.sqrt(rng.uniform())
    guess = centre.directional_offset_by(rng.uniform(0, 360) * u.deg, off * u.arcmin)
    kra, kdec = style.pointing
    return {kra: guess.ra.to_string(u.hourangle, sep=" ", precision=2, pad=True),
            kdec: guess.dec.to_string(u.deg, sep=" ", precision=1, alwayssign=True, pad=True)}


def _restyle_header(header, shape, style, rng):
    out = fits.Header()
    kinds = dict(style.kind_values)
    renames = dict(style.renames)
    kind = _KIND_OF.get(str(header.get("IMAGETYP", "")).strip().lower())
    for card in header.cards:
        key = card.keyword
        if key in ("SIMPLE", "BITPIX", "NAXIS", "NAXIS1", "NAXIS2", "EXTEND", "BZERO", "BSCALE"):
            continue
        if key in style.drop or (style.drop_wcs and key.startswith(_WCS_PREFIXES)):
            continue
        value = card.value
        if key in ("CRPIX1", "CRPIX2"):
            value = float(value) + float(style.wcs_error_pix[int(key[-1]) - 1])
        if key == "IMAGETYP" and kind in kinds:
            value = kinds[kind]
        if key == "DATE-OBS" and style.split_date and "T" in str(value):
            date, clock = str(value).split("T", 1)
            out["DATE-OBS"] = (date, "UTC date of the exposure start")
            out["TIME-OBS"] = (clock, "UTC time of the exposure start")
            continue
        out[renames.get(key, key)] = (value, card.comment)
    if style.drop_wcs and style.pointing and kind == "science":
        for key, value in _pointing_cards(header, shape, style, rng).items():
            out[key] = value
    for key, value in style.extra:
        out[key] = value
    return out


def _with_overscan(data, header, width, rng):
    """Add ``width`` overscan columns: the frame's own bias level plus read noise, in adu."""
    ny, nx = data.shape
    gain = float(header.get("GAIN", 1.6))
    noise_adu = float(header.get("RDNOISE", 8.0)) / gain
    # the first and last columns of the image: the bias plus whatever light falls there;
    # the strip carries the bias level the frame was read with (a constant here)
    level = 1000.0
    strip = level + rng.normal(0.0, noise_adu, (ny, width))
    out = np.empty((ny, nx + width), dtype=np.float64)
    out[:, :nx] = data.astype(np.float64) + level
    out[:, nx:] = strip
    header["BIASSEC"] = f"[{nx + 1}:{nx + width},1:{ny}]"
    header["TRIMSEC"] = f"[1:{nx},1:{ny}]"
    return np.clip(np.round(out), 0, 65535).astype(np.uint16)


def _write(data, header, path, ending):
    if ending.endswith(".fz"):
        hdul = fits.HDUList([fits.PrimaryHDU(header=header),
                             fits.CompImageHDU(data, header=header, compression_type="RICE_1")])
    else:
        hdul = fits.HDUList([fits.PrimaryHDU(data, header=header, uint=True)])
    with replacing(path, fsync=False) as tmp:
        if ending.endswith(".gz"):
            plain = tmp + ".plain"
            hdul.writeto(plain, overwrite=True)
            with open(plain, "rb") as src, gzip.open(tmp, "wb") as dst:
                shutil.copyfileobj(src, dst)
            os.remove(plain)
        else:
            hdul.writeto(tmp, overwrite=True)
    return path


def restyle_night(truth, folder, style, *, rng=None):
    """Write the frames of a rendered night again, in another header style.

    Parameters
    ----------
    truth : `NightTruth`
        What `render_night` returned.
    folder : str or path-like
        Output folder (created).
    style : `HeaderStyle` or str
        A style, or a name in `HEADER_STYLES`.
    rng : `numpy.random.Generator` or int, optional
        Draws the pointing errors and the overscan noise.

    Returns
    -------
    paths : dict of str to str
        New path of each original file.

    Notes
    -----
    The pixels of the image area are those rendered; an overscan style adds a constant to
    the whole image (data and strip alike) and writes that constant, with read noise, into
    the strip, so the overscan-subtracted frame equals the original.
    """
    style = HEADER_STYLES[style] if isinstance(style, str) else style
    rng = np.random.default_rng(rng)
    os.makedirs(folder, exist_ok=True)
    paths = {}
    for kind_paths in truth.files.values():
        for path in kind_paths:
            data, header = _read(path)
            new_header = _restyle_header(header, data.shape, style, rng)
            if style.overscan_columns:
                data = _with_overscan(data, new_header, style.overscan_columns, rng)
            base = os.path.basename(path)
            for ext in (".fits.fz", ".fits", ".fz"):
                if base.endswith(ext):
                    base = base[: -len(ext)]
                    break
            paths[path] = _write(data, new_header, os.path.join(folder, base + style.ending),
                                 style.ending)
    return paths
