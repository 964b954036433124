"""Read what a night's frame headers say and take stock of the night.

`read_frame_info` reads one header into a `FrameInfo`; `scan_night` reads a folder (or a list
of files), keeps the frames it can use and records one line for each file it cannot.
"""

import glob
import math
import os
import warnings
from collections import Counter
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import TimeDelta

from photpipe._records import Skipped

from ._fitsfile import merged_header, open_image, trimmed_shape
from ._headers import first_present, integer, keyword_errors, number, parse_time
from .errors import FrameError
from .instruments import DEFAULT_PROFILE, choose_profile, pixel_scale_from_header
from .kinds import KindMap
from .sites import site_from_header
from .types import FrameInfo

__all__ = ["read_frame_info", "scan_night", "NightInventory", "FITS_SUFFIXES"]

#: File-name endings taken as FITS when a folder is scanned (case-insensitive).
FITS_SUFFIXES = (".fits", ".fit", ".fts", ".fits.fz", ".fit.fz", ".fts.fz", ".fz", ".fits.gz",
                 ".fit.gz", ".fts.gz")

_UNITS = {"gain": u.electron / u.adu, "read_noise": u.electron, "saturation": u.adu}
_LIMITS = {"gain": (1e-3, 1e3), "read_noise": (0.0, 1e3), "saturation": (1.0, 1e9)}
#: Longest exposure taken as plausible (a day; longer values are header faults).
MAX_EXPTIME_S = 86400.0


def _binning(path, header, profile):
    kx, bx = first_present(header, profile.keys("xbinning"))
    ky, by = first_present(header, profile.keys("ybinning"))
    if kx is not None or ky is not None:
        return (1 if kx is None else integer(path, kx, bx, high=64),
                1 if ky is None else integer(path, ky, by, high=64))
    kc, ccdsum = first_present(header, profile.keys("ccdsum"))
    if kc is None:
        return (1, 1)
    parts = str(ccdsum).split()
    if len(parts) != 2:
        raise FrameError(path, f"{kc} = {ccdsum!r} is not two integers")
    return (integer(path, kc, parts[0], high=64), integer(path, kc, parts[1], high=64))


def _raw_full_scale(path, header):
    bitpix = header.get("BITPIX", -32)
    if not isinstance(bitpix, int) or bitpix < 0:
        return math.inf
    bzero = number(path, "BZERO", header.get("BZERO", 0))
    top = 2 ** (bitpix - 1) - 1 if bitpix > 8 else 255
    return float(top + bzero)


def _detector_value(path, header, name, profile, defaults, conflicts):
    """A detector value: configured, or from the header, or a default; conflicts noted."""
    low, high = _LIMITS[name]
    key, raw = first_present(header, profile.keys(name))
    from_header = None if key is None else number(path, key, raw, low=low, high=high)
    configured = getattr(profile, name)
    if configured is not None:
        if from_header is not None and not math.isclose(from_header, configured, rel_tol=1e-3):
            if name in profile.trust_header:
                return from_header * _UNITS[name]
            conflicts.append(f"{name}: header {key} = {from_header:g}, instrument "
                             f"{profile.name!r} says {configured:g} (used)")
        return configured * _UNITS[name]
    if from_header is not None:
        return from_header * _UNITS[name]
    if name in defaults:
        return u.Quantity(defaults[name]).to(_UNITS[name])
    if name == "saturation":
        return _raw_full_scale(path, header) * u.adu
    names = " or ".join(profile.keys(name))
    raise FrameError(path, f"header has no {names} (and no {name} is configured for "
                           f"instrument {profile.name!r})")


def _frame_kind(path, header, kind_map):
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
    return kind


def _mid_time(path, header, profile, exptime):
    t, key = parse_time(path, header, date_keys=profile.keys("date_obs"),
                        clock_keys=profile.keys("time_obs"), mjd_keys=profile.keys("mjd_obs"),
                        jd_keys=profile.keys("jd"))
    with keyword_errors(path, key, str(t)):
        if profile.time_reference == "middle":
            return t.utc
        return (t + TimeDelta(exptime / 2.0, format="sec")).utc


def _pixel_scale(path, header, profile, binning):
    if profile.pixel_scale is not None:
        return profile.pixel_scale * math.sqrt(binning[0] * binning[1]) * u.arcsec
    with keyword_errors(path, "PIXSCALE/XPIXSZ/FOCALLEN", "pixel scale"):
        return pixel_scale_from_header(header)


def read_frame_info(path, *, kind_map=None, defaults=None, profile=None, profiles=None,
                    night_profile=None):
    """Read one frame's header into a `FrameInfo`.

    Parameters
    ----------
    path : str or path-like
        A FITS file; plain, tile-compressed (``.fits.fz``) or gzipped (``.fits.gz``). The first
        HDU that holds a 2-D image is used, and keywords missing from it are looked up in the
        primary header.
    kind_map : KindMap, optional
        Header keyword and values that say what the frame is (default: the profile's).
    defaults : dict, optional
        Values to assume when the header lacks them: ``gain`` (electron/adu), ``read_noise``
        (electron), ``saturation`` (adu), as Quantities.
    profile : InstrumentProfile, optional
        The camera's keyword mapping and values; by default chosen from ``profiles`` by the
        header (`choose_profile`), else `DEFAULT_PROFILE`.
    profiles : list of InstrumentProfile, optional
        Configured cameras.
    night_profile : str, optional
        Name of the profile for frames whose header names no configured camera.

    Returns
    -------
    FrameInfo

    Raises
    ------
    FrameError
        If the file cannot be read, or a required keyword (frame type, time, exposure time,
        gain, read noise) is missing or holds an unusable value; the message names the keyword.
        Nothing else escapes: any other failure while reading the header becomes a
        `FrameError` too.

    Notes
    -----
    The mid-exposure time is the start (DATE-OBS, else MJD-OBS, else JD, in the scale TIMESYS,
    UTC if absent) plus EXPTIME/2, returned in UTC; a profile with ``time_reference="middle"``
    takes the time as the middle. A DATE-OBS holding only a date is completed from TIME-OBS,
    UT or UTSTART; with none of them it is an error (never midnight). Keywords tried for each
    fact are in `~photpipe.frames.instruments.DEFAULT_KEYWORDS`. Without a saturation keyword
    the full scale of the raw integer type is used (65535 adu for unsigned 16-bit data).
    Binning comes from XBINNING/YBINNING or CCDSUM (``"2 2"``) and is (1, 1) when neither is
    present. Bias and dark frames get ``filter=None`` whatever the header says.

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
    if kind_map is not None and not isinstance(kind_map, KindMap):
        msg = f"'kind_map' must be a KindMap, got {type(kind_map).__name__}"
        raise TypeError(msg)
    with warnings.catch_warnings():
        # astropy's notes on cards it fixes, ERFA's on odd dates: the checks below say it once
        warnings.simplefilter("ignore")
        try:
            with open_image(path) as (hdul, index):
                header = merged_header(hdul, index)
                shape = tuple(int(n) for n in hdul[index].shape[-2:])
            return _frame_info(path, header, shape, kind_map=kind_map, defaults=defaults,
                               profile=profile, profiles=profiles, night_profile=night_profile)
        except FrameError:
            raise
        except Exception as exc:  # noqa: BLE001 - one bad header must never stop the night
            msg = f"header cannot be read ({type(exc).__name__}: {exc})"
            raise FrameError(path, msg) from exc


def _frame_info(path, header, shape, *, kind_map, defaults, profile, profiles, night_profile):
    if profile is None:
        try:
            profile = choose_profile(header, profiles, night_profile=night_profile)
        except ValueError as exc:
            raise FrameError(path, str(exc)) from exc
    # a configured camera's own frame types; else the ones given, else the defaults
    own = profile.name != DEFAULT_PROFILE.name
    kind = _frame_kind(path, header, profile.kind_map if own else kind_map or profile.kind_map)
    for key in ("BSCALE", "BZERO"):
        if key in header:
            number(path, key, header[key])
    key, exptime = first_present(header, profile.keys("exptime"))
    if key is None:
        names = " or ".join(profile.keys("exptime"))
        raise FrameError(path, f"header has no {names} (exposure time)")
    exptime = number(path, key, exptime, low=0.0, high=MAX_EXPTIME_S)
    time_mid = _mid_time(path, header, profile, exptime)

    defaults = dict(defaults or {})
    conflicts = []
    gain = _detector_value(path, header, "gain", profile, defaults, conflicts)
    read_noise = _detector_value(path, header, "read_noise", profile, defaults, conflicts)
    saturation = _detector_value(path, header, "saturation", profile, defaults, conflicts)
    binning = _binning(path, header, profile)
    shape = trimmed_shape(path, header, shape)

    _, filt = first_present(header, profile.keys("filter"))
    filt = None if kind in ("bias", "dark") or filt is None else str(filt).strip()
    _, obj = first_present(header, profile.keys("object"))
    return FrameInfo(path=path, kind=kind, time_mid=time_mid, exptime=exptime * u.s,
                     filter=filt or None, gain=gain, read_noise=read_noise,
                     saturation=saturation, binning=binning, shape=shape,
                     object_name="" if obj is None else str(obj).strip(), header=header,
                     instrument=profile.name,
                     pixel_scale=_pixel_scale(path, header, profile, binning),
                     site=site_from_header(path, header), conflicts=tuple(conflicts))


@dataclass(frozen=True)
class NightInventory:
    """The frames of one night that could be read, and the files that could not.

    Attributes
    ----------
    frames : list of FrameInfo
        Readable frames, in file-name order.
    skipped : list of `~photpipe._records.Skipped`
        One record per file that could not be used (stage ``"ingest"``).
    notes : list of str
        Things to tell the user once per night: header values that differ from the configured
        instrument's (each distinct conflict once, with the number of frames).
    """

    frames: list = field(default_factory=list)
    skipped: list = field(default_factory=list)
    notes: list = field(default_factory=list)

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


def scan_night(paths, *, kind_map=None, defaults=None, profiles=None, night_profile=None):
    """Read the headers of a night's frames.

    Parameters
    ----------
    paths : str, path-like, or iterable of them
        A folder (its files with a FITS ending are read, see `FITS_SUFFIXES`), a glob pattern,
        or a list of files (every one is read, whatever its name).
    kind_map : KindMap, optional
        Frame-type mapping (default: each frame's instrument profile's).
    defaults : dict, optional
        Passed to `read_frame_info`.
    profiles : list of InstrumentProfile, optional
        Configured cameras; each frame finds its own by its header.
    night_profile : str, optional
        The profile of frames whose header names no configured camera.

    Returns
    -------
    NightInventory
        Each file that raises `FrameError` is recorded in ``skipped`` with its reason; the scan
        goes on with the rest. Conflicts between header and configuration go to ``notes``, each
        once.

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
            frames.append(read_frame_info(path, kind_map=kind_map, defaults=defaults,
                                          profiles=profiles, night_profile=night_profile))
        except FrameError as exc:
            skipped.append(Skipped(path, "ingest", exc.problem))
    return NightInventory(frames=frames, skipped=skipped, notes=_conflict_notes(frames))


def _conflict_notes(frames):
    counts = Counter(c for f in frames for c in f.conflicts)
    return [f"{text} in {n} frame{'s' if n > 1 else ''}" for text, n in counts.items()]
