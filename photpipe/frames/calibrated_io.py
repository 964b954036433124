"""Calibrated frames on disk: one multi-extension FITS file per frame.

Layout: a primary HDU whose header keeps the raw frame's keywords, the facts of its
`FrameInfo` (``PP*`` keywords) and the calibration history (``HISTORY`` cards starting with
``photpipe:``); then ``DATA`` (float32 electrons, with the WCS), ``VARIANCE`` (float32
electron**2) and ``QUALITY`` (uint16 `Quality` bits).
"""

import os
import textwrap
import warnings
from urllib.parse import quote, unquote

import numpy as np
from astropy import units as u
from astropy.io import fits
from astropy.time import Time
from astropy.wcs import WCS, FITSFixedWarning

from ._fitsfile import open_image, write_atomic
from .errors import FrameError
from .types import CalibratedFrame, FrameInfo, Quality

__all__ = ["write_calibrated", "read_calibrated", "card_text", "text_from_card"]

_DROP = {"SIMPLE", "EXTEND", "BITPIX", "NAXIS", "NAXIS1", "NAXIS2", "NAXIS3", "BZERO", "BSCALE",
         "XTENSION", "PCOUNT", "GCOUNT", "EXTNAME", "CHECKSUM", "DATASUM", "BLANK"}
_PREFIX, _CONT = "photpipe: ", "... "


#: Printable ASCII left as it is in card text; everything else (and "%") is percent-encoded.
_CARD_SAFE = "".join(chr(c) for c in range(32, 127) if chr(c) != "%")


def card_text(text):
    """An ASCII form of ``text`` that a FITS card can hold, undone by `text_from_card`.

    FITS header values and HISTORY text are printable ASCII only (FITS Standard 4.0, Pearson
    et al. 2016, sect. 4.2.1), while folders may be named in any script. Every other character,
    and ``%`` itself, becomes the percent-encoding of its UTF-8 bytes (RFC 3986, sect. 2.1), so
    ASCII text without ``%`` is unchanged.

    Examples
    --------
    >>> card_text("nights/2026-12-01 Lyon-Été/sci_0001.fits")
    'nights/2026-12-01 Lyon-%C3%89t%C3%A9/sci_0001.fits'
    >>> text_from_card(card_text("Kometen/Nacht 3/100%.fits"))
    'Kometen/Nacht 3/100%.fits'
    """
    return quote(str(text), safe=_CARD_SAFE)


def text_from_card(text):
    """The text given to `card_text`, back from its card."""
    return unquote(str(text))


def _history_cards(header, history):
    for entry in history:
        lines = textwrap.wrap(card_text(entry), 60) or [""]
        header.add_history(_PREFIX + lines[0])
        for line in lines[1:]:
            header.add_history(_CONT + line)


def _history_from(header):
    out = []
    for text in header.get("HISTORY", []):
        text = str(text)
        if text.startswith(_PREFIX):
            out.append(text[len(_PREFIX):])
        elif text.startswith(_CONT) and out:
            out[-1] += " " + text[len(_CONT):]
    return [text_from_card(entry) for entry in out]


def write_calibrated(frame, path):
    """Write a `CalibratedFrame` to ``path`` (temporary file, then rename).

    Parameters
    ----------
    frame : CalibratedFrame
    path : str or path-like

    Returns
    -------
    str
        The path written.

    Examples
    --------
    >>> import numpy as np, tempfile, os
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> from photpipe.frames import FrameInfo, CalibratedFrame
    >>> info = FrameInfo("sci_0001.fits", "science", Time("2026-12-01T03:00:00"), 60 * u.s,
    ...                  "R", 1.5 * u.electron / u.adu, 6 * u.electron, 65535 * u.adu,
    ...                  (1, 1), (2, 3))
    >>> frame = CalibratedFrame(info, np.ones((2, 3), np.float32),
    ...                         np.full((2, 3), 2.0, np.float32), np.zeros((2, 3), np.uint16),
    ...                         history=["bias: subtracted"])
    >>> out = write_calibrated(frame, os.path.join(tempfile.mkdtemp(), "sci_0001_cal.fits"))
    >>> back = read_calibrated(out)
    >>> back.name, back.history, float(back.variance[1, 2])
    ('sci_0001', ['bias: subtracted'], 2.0)
    """
    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    info = frame.info
    primary = fits.Header()
    for card in info.header.cards:
        if card.keyword not in _DROP and not card.keyword.startswith("PP") \
                and card.keyword != "HISTORY":
            primary.append(card)
    for text in info.header.get("HISTORY", []):
        if not str(text).startswith((_PREFIX, _CONT)):
            primary.add_history(str(text))
    primary["PPKIND"] = ("calibrated", "photpipe product")
    primary["PPRAW"] = (card_text(info.path), "raw frame")
    primary["PPTYPE"] = (info.kind, "frame kind")
    mid = info.time_mid.utc
    primary["PPTMID"] = (mid.isot, "mid-exposure time (UTC)")
    primary["PPJD1"] = (float(mid.jd1), "mid-exposure JD (UTC), first part, exact")
    primary["PPJD2"] = (float(mid.jd2), "mid-exposure JD (UTC), second part, exact")
    primary["EXPTIME"] = (info.exptime.to_value(u.s), "[s] exposure time")
    primary["FILTER"] = (info.filter or "", "filter")
    primary["GAIN"] = (info.gain.to_value(u.electron / u.adu), "[electron/adu] gain")
    primary["RDNOISE"] = (info.read_noise.to_value(u.electron), "[electron] read noise")
    sat = info.saturation.to_value(u.adu)
    primary["SATURATE"] = (sat if np.isfinite(sat) else -1.0, "[adu] raw saturation level")
    primary["XBINNING"], primary["YBINNING"] = (int(b) for b in info.binning)
    primary["OBJECT"] = card_text(info.object_name)
    primary["PPFLAGS"] = (",".join(frame.flags), "calibration flags")
    _history_cards(primary, frame.history)

    data_hdr = fits.Header()
    if frame.wcs is not None:
        data_hdr.update(frame.wcs.to_header(relax=True))
    data_hdr["BUNIT"] = "electron"
    qual_hdr = fits.Header()
    for bit in Quality:
        if bit.value:
            qual_hdr[f"QBIT{bit.value.bit_length() - 1}"] = (bit.name, f"value {bit.value}")
    hdul = fits.HDUList([
        fits.PrimaryHDU(header=primary),
        fits.ImageHDU(np.asarray(frame.data, np.float32), header=data_hdr, name="DATA"),
        fits.ImageHDU(np.asarray(frame.variance, np.float32), name="VARIANCE"),
        fits.ImageHDU(np.asarray(frame.quality, np.uint16), header=qual_hdr, name="QUALITY"),
    ])
    hdul["VARIANCE"].header["BUNIT"] = "electron2"
    path = os.fspath(path)
    write_atomic(hdul, path)
    return path


def read_calibrated(path):
    """Read a file written by `write_calibrated` back into a `CalibratedFrame`.

    Raises
    ------
    FrameError
        If the file is unreadable or is not a calibrated frame.
    """
    path = os.fspath(path)
    with open_image(path) as (hdul, _):
        primary = hdul[0].header.copy()
        if primary.get("PPKIND") != "calibrated":
            raise FrameError(path, "not a photpipe calibrated frame (no PPKIND = 'calibrated')")
        try:
            data = np.array(hdul["DATA"].data, dtype=np.float32)
            variance = np.array(hdul["VARIANCE"].data, dtype=np.float32)
            quality = np.array(hdul["QUALITY"].data, dtype=np.uint16)
            data_hdr = hdul["DATA"].header.copy()
        except (KeyError, OSError, ValueError, TypeError) as exc:
            raise FrameError(path, f"calibrated frame is damaged ({exc})") from exc
    sat = float(primary.get("SATURATE", -1.0))
    info = FrameInfo(
        path=text_from_card(primary["PPRAW"]), kind=primary.get("PPTYPE", "science"),
        time_mid=(Time(primary["PPJD1"], primary["PPJD2"], format="jd", scale="utc")
                  if "PPJD1" in primary else Time(primary["PPTMID"], format="isot", scale="utc")),
        exptime=float(primary["EXPTIME"]) * u.s, filter=primary.get("FILTER") or None,
        gain=float(primary["GAIN"]) * u.electron / u.adu,
        read_noise=float(primary["RDNOISE"]) * u.electron,
        saturation=(sat if sat >= 0 else np.inf) * u.adu,
        binning=(int(primary.get("XBINNING", 1)), int(primary.get("YBINNING", 1))),
        shape=tuple(data.shape), object_name=text_from_card(primary.get("OBJECT", "")),
        header=primary)
    wcs = None
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FITSFixedWarning)
        candidate = WCS(data_hdr, naxis=2)
    if candidate.has_celestial:
        wcs = candidate.celestial
    flags = tuple(f for f in str(primary.get("PPFLAGS", "")).split(",") if f)
    return CalibratedFrame(info=info, data=data, variance=variance, quality=quality, wcs=wcs,
                           history=_history_from(primary), flags=flags)
