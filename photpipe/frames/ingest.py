"""Read what a night's frame headers say and take stock of the night.

`read_frame_info` reads one header into a `FrameInfo`; `scan_night` reads a folder (or a list
of files), keeps the frames it can use and records one line for each file it cannot.
"""

import glob
import math
import os
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time, TimeDelta

from photpipe._records import Skipped

from ._fitsfile import merged_header, open_image
from .errors import FrameError
from .kinds import DEFAULT_KIND_MAP, KindMap
from .types import FrameInfo

__all__ = ["read_frame_info", "scan_night", "NightInventory", "FITS_SUFFIXES"]

#: File-name endings taken as FITS when a folder is scanned (case-insensitive).
FITS_SUFFIXES = (".fits", ".fit", ".fts", ".fits.fz", ".fit.fz", ".fz", ".fits.gz", ".fit.gz")

_ALIASES = {
    "exptime": ("EXPTIME", "EXPOSURE"),
    "gain": ("GAIN", "EGAIN"),
    "read_noise": ("RDNOISE", "READNOIS", "RON"),
    "saturation": ("SATURATE", "SATLEVEL"),
    "filter": ("FILTER", "FILTNAME", "FILTER1"),
    "object": ("OBJECT",),
}
_UNITS = {"gain": u.electron / u.adu, "read_noise": u.electron, "saturation": u.adu}
_TIMESCALES = {"UTC": "utc", "UT": "utc", "TT": "tt", "TAI": "tai", "GPS": "tai", "TDB": "tdb"}


def _first(header, name):
    for key in _ALIASES[name]:
        value = header.get(key)
        if value is not None and not (isinstance(value, str) and not value.strip()):
            return key, value
    return None, None


def _number(path, key, value):
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = math.nan
    if not math.isfinite(number):
        raise FrameError(path, f"{key} = {value!r} is not a finite number")
    return number


def _start_time(path, header):
    scale = _TIMESCALES.get(str(header.get("TIMESYS", "UTC")).strip().upper())
    if scale is None:
        raise FrameError(path, f"TIMESYS = {header['TIMESYS']!r} is not a time scale photpipe "
                               f"knows ({', '.join(_TIMESCALES)})")
    date = header.get("DATE-OBS")
    if isinstance(date, str) and date.strip():
        text = date.strip()
        if "T" not in text:
            # older headers split the date and the start time (common practice)
            clock = header.get("TIME-OBS") or header.get("UT") or header.get("UTSTART")
            if clock:
                text = f"{text}T{str(clock).strip()}"
        try:
            return Time(text, format="isot", scale=scale)
        except ValueError as exc:
            raise FrameError(path, f"DATE-OBS = {date!r} is not an ISO date and time") from exc
    mjd = header.get("MJD-OBS")
    if mjd is not None:
        return Time(_number(path, "MJD-OBS", mjd), format="mjd", scale=scale)
    raise FrameError(path, "header has no DATE-OBS or MJD-OBS (start of exposure)")


def _binning(path, header):
    if "XBINNING" in header or "YBINNING" in header:
        bx, by = header.get("XBINNING", 1), header.get("YBINNING", 1)
    elif "CCDSUM" in header:
        parts = str(header["CCDSUM"]).split()
        if len(parts) != 2:
            raise FrameError(path, f"CCDSUM = {header['CCDSUM']!r} is not two integers")
        bx, by = parts
    else:
        return (1, 1)
    try:
        bx, by = int(float(bx)), int(float(by))
    except ValueError as exc:
        raise FrameError(path, f"binning ({bx!r}, {by!r}) is not two integers") from exc
    if bx < 1 or by < 1:
        raise FrameError(path, f"binning ({bx}, {by}) must be positive")
    return (bx, by)


def _raw_full_scale(header):
    bitpix = header.get("BITPIX", -32)
    if bitpix < 0:
        return math.inf
    bzero = header.get("BZERO", 0)
    top = 2 ** (bitpix - 1) - 1 if bitpix > 8 else 255
    return float(top + bzero)


def _detector_value(path, header, name, defaults):
    key, value = _first(header, name)
    if key is not None:
        return _number(path, key, value) * _UNITS[name]
    if name in defaults:
        return u.Quantity(defaults[name]).to(_UNITS[name])
    if name == "saturation":
        return _raw_full_scale(header) * u.adu
    names = " or ".join(_ALIASES[name])
    raise FrameError(path, f"header has no {names} (and no default {name!r} was given)")


def read_frame_info(path, *, kind_map=None, defaults=None):
    """Read one frame's header into a `FrameInfo`.

    Parameters
    ----------
    path : str or path-like
        A FITS file; plain or tile-compressed (``.fits.fz``). The first HDU that holds a 2-D
        image is used, and keywords missing from it are looked up in the primary header.
    kind_map : KindMap, optional
        Header keyword and values that say what the frame is (default `DEFAULT_KIND_MAP`).
    defaults : dict, optional
        Values to assume when the header lacks them: ``gain`` (electron/adu), ``read_noise``
        (electron), ``saturation`` (adu), as Quantities.

    Returns
    -------
    FrameInfo

    Raises
    ------
    FrameError
        If the file cannot be read, or a required keyword (frame type, DATE-OBS or MJD-OBS,
        EXPTIME, GAIN, RDNOISE) is missing or not a valid value.

    Notes
    -----
    The mid-exposure time is the start (DATE-OBS, or MJD-OBS, in the scale TIMESYS, UTC if
    absent) plus EXPTIME/2, returned in UTC. A DATE-OBS holding only a date is completed from
    TIME-OBS, UT or UTSTART. Aliases accepted: EXPOSURE for EXPTIME, EGAIN for GAIN, READNOIS or
    RON for RDNOISE, SATLEVEL for SATURATE. Without a saturation keyword the full scale of the
    raw integer type is used (65535 adu for unsigned 16-bit data). Binning comes from
    XBINNING/YBINNING or CCDSUM (``"2 2"``) and is (1, 1) when neither is present. Bias and dark
    frames get ``filter=None`` whatever the header says.

    Examples
    --------
    >>> import numpy as np, tempfile, os
    >>> from astropy.io import fits
    >>> hdr = fits.Header({"IMAGETYP": "Light", "DATE-OBS": "2026-12-01T03:00:00",
    ...                    "EXPTIME": 120.0, "GAIN": 1.5, "RDNOISE": 6.0, "FILTER": "R"})
    >>> path = os.path.join(tempfile.mkdtemp(), "sci.fits")
    >>> fits.PrimaryHDU(np.zeros((4, 6), np.uint16), hdr).writeto(path)
    >>> info = read_frame_info(path)
    >>> info.kind, info.time_mid.isot, info.exptime, info.shape, info.saturation
    ('science', '2026-12-01T03:01:00.000', <Quantity 120. s>, (4, 6), <Quantity 65535. adu>)
    """
    path = os.fspath(path)
    kind_map = DEFAULT_KIND_MAP if kind_map is None else kind_map
    if not isinstance(kind_map, KindMap):
        msg = f"'kind_map' must be a KindMap, got {type(kind_map).__name__}"
        raise TypeError(msg)
    defaults = dict(defaults or {})
    with open_image(path) as (hdul, index):
        header = merged_header(hdul, index)
        shape = tuple(int(n) for n in hdul[index].shape[-2:])

    if "PPKIND" in header or "PPMASTER" in header:
        what = "master calibration" if "PPMASTER" in header else f"{header['PPKIND']} frame"
        raise FrameError(path, f"is a photpipe {what}, not a raw frame")
    type_value = header.get(kind_map.keyword)
    if type_value is None:
        raise FrameError(path, f"header has no {kind_map.keyword} (the frame-type keyword)")
    kind = kind_map.classify(type_value)
    if kind is None:
        raise FrameError(path, f"{kind_map.keyword} = {type_value!r} is not a known frame type "
                               f"({kind_map.describe()})")

    key, exptime = _first(header, "exptime")
    if key is None:
        raise FrameError(path, "header has no EXPTIME or EXPOSURE (exposure time)")
    exptime = _number(path, key, exptime)
    if exptime < 0:
        raise FrameError(path, f"{key} = {exptime} is negative")
    start = _start_time(path, header)
    time_mid = (start + TimeDelta(exptime / 2.0, format="sec")).utc

    gain = _detector_value(path, header, "gain", defaults)
    read_noise = _detector_value(path, header, "read_noise", defaults)
    saturation = _detector_value(path, header, "saturation", defaults)
    if not gain.value > 0:
        raise FrameError(path, f"gain {gain} must be positive")
    if not read_noise.value >= 0:
        raise FrameError(path, f"read noise {read_noise} must not be negative")

    _, filt = _first(header, "filter")
    filt = None if kind in ("bias", "dark") or filt is None else str(filt).strip()
    _, obj = _first(header, "object")
    return FrameInfo(path=path, kind=kind, time_mid=time_mid, exptime=exptime * u.s,
                     filter=filt or None, gain=gain, read_noise=read_noise,
                     saturation=saturation, binning=_binning(path, header), shape=shape,
                     object_name="" if obj is None else str(obj).strip(), header=header)


@dataclass(frozen=True)
class NightInventory:
    """The frames of one night that could be read, and the files that could not.

    Attributes
    ----------
    frames : list of FrameInfo
        Readable frames, in file-name order.
    skipped : list of `~photpipe._records.Skipped`
        One record per file that could not be used (stage ``"ingest"``).
    """

    frames: list = field(default_factory=list)
    skipped: list = field(default_factory=list)

    def of_kind(self, kind):
        """The frames of one kind (``"bias"``, ``"dark"``, ``"flat"``, ``"science"``)."""
        return [f for f in self.frames if f.kind == kind]

    def counts(self):
        """Number of frames per kind, as a dict."""
        return {k: len(self.of_kind(k)) for k in ("bias", "dark", "flat", "science")}

    def to_table(self):
        """One row per readable frame: name, kind, filter, exposure, binning, shape, time."""
        rows = self.frames
        return QTable({
            "name": [f.name for f in rows],
            "kind": [f.kind for f in rows],
            "filter": [f.filter or "" for f in rows],
            "exptime": u.Quantity([f.exptime.to_value(u.s) for f in rows], u.s),
            "binning": [f"{f.binning[0]}x{f.binning[1]}" for f in rows],
            "shape": [f"{f.shape[0]}x{f.shape[1]}" for f in rows],
            "mjd_utc_mid": np.array([f.time_mid.utc.mjd for f in rows], dtype=float),
        })


def _expand(paths):
    if isinstance(paths, (str, os.PathLike)):
        text = os.fspath(paths)
        if os.path.isdir(text):
            names = sorted(os.listdir(text))
            return [os.path.join(text, n) for n in names
                    if not n.startswith(".") and n.lower().endswith(FITS_SUFFIXES)
                    and os.path.isfile(os.path.join(text, n))]
        if any(ch in text for ch in "*?["):
            return sorted(glob.glob(text))
        return [text]
    return [os.fspath(p) for p in paths]


def scan_night(paths, *, kind_map=None, defaults=None):
    """Read the headers of a night's frames.

    Parameters
    ----------
    paths : str, path-like, or iterable of them
        A folder (its files with a FITS ending are read, see `FITS_SUFFIXES`), a glob pattern,
        or a list of files (every one is read, whatever its name).
    kind_map : KindMap, optional
        Frame-type mapping (default `DEFAULT_KIND_MAP`).
    defaults : dict, optional
        Passed to `read_frame_info`.

    Returns
    -------
    NightInventory
        Each file that raises `FrameError` is recorded in ``skipped`` with its reason; the scan
        goes on with the rest.

    Examples
    --------
    >>> import tempfile, os
    >>> folder = tempfile.mkdtemp()
    >>> with open(os.path.join(folder, "notes.fits"), "w") as fh:
    ...     _ = fh.write("not a FITS file")
    >>> night = scan_night(folder)
    >>> len(night.frames), night.skipped[0].stage
    (0, 'ingest')
    """
    frames, skipped = [], []
    for path in _expand(paths):
        try:
            frames.append(read_frame_info(path, kind_map=kind_map, defaults=defaults))
        except FrameError as exc:
            skipped.append(Skipped(path, "ingest", exc.problem))
    return NightInventory(frames=frames, skipped=skipped)
