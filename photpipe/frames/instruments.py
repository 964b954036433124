"""What a camera's headers mean: keyword names, detector values, frame types, time reference.

Acquisition programs name the same facts differently (EXPTIME or EXPOSURE, DATE-OBS with or
without the time, MJD-OBS or JD, start or middle of the exposure) and often leave out the gain
or read noise. An `InstrumentProfile` says, for one camera, which keywords to read, which values
to assume, and where the header's own value may override the configured one. A frame finds its
profile by a header value (``INSTRUME = 'Cam A'``) or, failing that, by its night.
"""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u

from ._headers import _SECTION
from .kinds import DEFAULT_KIND_MAP, KindMap

__all__ = ["InstrumentProfile", "DEFAULT_PROFILE", "DEFAULT_KEYWORDS", "DETECTOR_VALUES",
           "choose_profile", "profile_from_mapping", "pixel_scale_from_header"]

#: Header keywords tried for each fact, in order (an instrument may replace any list).
DEFAULT_KEYWORDS = {
    "exptime": ("EXPTIME", "EXPOSURE", "EXP_TIME", "ITIME"),
    "date_obs": ("DATE-OBS", "DATE_OBS", "DATE-BEG"),
    "time_obs": ("TIME-OBS", "UT", "UTSTART", "UT-START", "TIME_OBS"),
    "mjd_obs": ("MJD-OBS", "MJD_OBS", "MJD-BEG"),
    "jd": ("JD", "JD-OBS", "JD_OBS"),
    "gain": ("GAIN", "EGAIN"),
    "read_noise": ("RDNOISE", "READNOIS", "RON", "RDNOIS"),
    "saturation": ("SATURATE", "SATLEVEL", "DATAMAX"),
    "filter": ("FILTER", "FILTNAME", "FILTER1", "FLTNAME"),
    "object": ("OBJECT",),
    "xbinning": ("XBINNING", "BINX", "XBIN"),
    "ybinning": ("YBINNING", "BINY", "YBIN"),
    "ccdsum": ("CCDSUM",),
}

#: Detector values a profile can give: name -> (unit text, plausible low, plausible high).
DETECTOR_VALUES = {"gain": ("electron/adu", 1e-3, 1e3), "read_noise": ("electron", 0.0, 1e3),
                   "saturation": ("adu", 1.0, 1e9)}


@dataclass(frozen=True)
class InstrumentProfile:
    """How to read one camera's frames.

    Attributes
    ----------
    name : str
        The profile's name (a configuration section name).
    match_keyword : str
        Header keyword that names the camera (``INSTRUME``).
    match_values : tuple of str
        Values of ``match_keyword`` that mean this camera (compared without case or blanks).
    gain, read_noise, saturation : float or None
        Configured detector values (electron/adu, electron, adu); None: from the header.
    pixel_scale : float or None
        Arcseconds per unbinned pixel (used for plate solving); None: from the header.
    trust_header : tuple of str
        Detector values for which a header value wins over the configured one.
    time_reference : {"start", "middle"}
        Whether the time keywords give the start or the middle of the exposure.
    keywords : tuple of (str, tuple of str)
        Replacements for entries of `DEFAULT_KEYWORDS`.
    kind_map : `KindMap`
        Frame-type keyword and its values.
    sections : tuple of (str or None, str or None)
        The image area and the overscan strip as FITS sections, where the camera's headers
        do not say them (TRIMSEC/DATASEC, BIASSEC); None: the header's.

    Examples
    --------
    >>> p = InstrumentProfile(name="cam", keywords=(("exptime", ("EXPOSURE",)),))
    >>> p.keys("exptime"), p.keys("gain")
    (('EXPOSURE',), ('GAIN', 'EGAIN'))
    """

    name: str = "default"
    match_keyword: str = "INSTRUME"
    match_values: tuple = ()
    gain: float | None = None
    read_noise: float | None = None
    saturation: float | None = None
    pixel_scale: float | None = None
    trust_header: tuple = ()
    time_reference: str = "start"
    keywords: tuple = ()
    kind_map: KindMap = field(default=DEFAULT_KIND_MAP)
    sections: tuple = (None, None)

    def __post_init__(self):
        if self.time_reference not in ("start", "middle"):
            msg = (f"instrument {self.name!r}: time_reference must be 'start' or 'middle', "
                   f"got {self.time_reference!r}")
            raise ValueError(msg)
        unknown = [k for k, _ in self.keywords if k not in DEFAULT_KEYWORDS]
        unknown += [k for k in self.trust_header if k not in DETECTOR_VALUES]
        if unknown:
            msg = (f"instrument {self.name!r}: unknown name(s) {', '.join(map(repr, unknown))}; "
                   f"known: {', '.join(DEFAULT_KEYWORDS)}")
            raise ValueError(msg)
        for label, text in zip(("trim_section", "overscan_section"), self.sections, strict=True):
            if text is not None and not _SECTION.match(str(text)):
                msg = (f"instrument {self.name!r}: {label} must be a FITS section "
                       f"'[x1:x2,y1:y2]', got {text!r}")
                raise ValueError(msg)
        for name, (unit, low, high) in DETECTOR_VALUES.items():
            value = getattr(self, name)
            if value is not None and not (isinstance(value, (int, float))
                                          and not isinstance(value, bool)
                                          and low <= value <= high):
                msg = (f"instrument {self.name!r}: {name} must be a number from {low:g} to "
                       f"{high:g} {unit}, got {value!r}")
                raise ValueError(msg)

    def keys(self, fact):
        """The header keywords read for ``fact`` (a key of `DEFAULT_KEYWORDS`)."""
        return dict(self.keywords).get(fact, DEFAULT_KEYWORDS[fact])

    def matches(self, header):
        """True when the header names this camera."""
        if not self.match_values:
            return False
        value = header.get(self.match_keyword)
        if value is None:
            return False
        norm = " ".join(str(value).split()).casefold()
        return norm in {" ".join(v.split()).casefold() for v in self.match_values}


#: The profile used when none is configured: standard keywords, values from the header.
DEFAULT_PROFILE = InstrumentProfile()


def choose_profile(header, profiles, *, night_profile=None):
    """The profile a frame belongs to: by header value, else the night's, else the default.

    Examples
    --------
    >>> a = InstrumentProfile(name="a", match_values=("Cam A",))
    >>> choose_profile({"INSTRUME": "cam a"}, [a]).name
    'a'
    >>> choose_profile({"INSTRUME": "other"}, [a], night_profile="a").name
    'a'
    >>> choose_profile({}, [a]).name
    'default'
    """
    profiles = list(profiles or ())
    for p in profiles:
        if p.matches(header):
            return p
    if night_profile is not None:
        for p in profiles:
            if p.name == night_profile:
                return p
        msg = f"night names instrument {night_profile!r}, which is not configured"
        raise ValueError(msg)
    return DEFAULT_PROFILE


_FIELDS = {"match_keyword", "match_values", "gain", "read_noise", "saturation", "pixel_scale",
           "trust_header", "time_reference", "keywords", "frame_types", "sections"}


def profile_from_mapping(name, section):
    """Build a profile from one ``[instruments.NAME]`` table of the configuration.

    ``keywords`` is a table of fact -> list of header keywords; ``frame_types`` is a table
    like ``[frames]`` (``type_keyword`` and per-kind value lists).

    Examples
    --------
    >>> p = profile_from_mapping("cam", {"gain": 1.4, "keywords": {"exptime": ["EXPOSURE"]},
    ...                                  "frame_types": {"science": ["Light Frame"]}})
    >>> p.gain, p.keys("exptime"), p.kind_map.classify("light frame")
    (1.4, ('EXPOSURE',), 'science')
    """
    from .kinds import kind_map_from_mapping

    section = dict(section or {})
    unknown = sorted(set(section) - _FIELDS)
    if unknown:
        msg = (f"[instruments.{name}] has unknown key(s) {', '.join(map(repr, unknown))}; "
               f"expected one of {', '.join(sorted(_FIELDS))}")
        raise ValueError(msg)
    keywords = section.pop("keywords", {}) or {}
    if not isinstance(keywords, dict):
        msg = f"[instruments.{name}] keywords must be a table of name = [keywords]"
        raise TypeError(msg)
    kw = tuple((fact, tuple(str(k).strip().upper() for k in
                            ([keys] if isinstance(keys, str) else keys)))
               for fact, keys in keywords.items())
    kinds = kind_map_from_mapping(section.pop("frame_types", None))
    values = section.pop("match_values", ())
    values = (values,) if isinstance(values, str) else tuple(values)
    trust = tuple(section.pop("trust_header", ()))
    sections = tuple(section.pop("sections", (None, None)))
    return InstrumentProfile(name=name, keywords=kw, kind_map=kinds, match_values=values,
                             trust_header=trust, sections=sections, **section)


def pixel_scale_from_header(header):
    """Pixel scale a header states, or None.

    Read from ``PIXSCALE`` or ``SECPIX`` (arcsec per pixel), else from the pixel size
    ``XPIXSZ`` (µm, binned or not, with ``XBINNING``) and ``FOCALLEN`` (mm):
    scale = 206.265 × pixel size / focal length (small-angle optics, common practice).

    Examples
    --------
    >>> round(float(pixel_scale_from_header({"XPIXSZ": 9.0, "FOCALLEN": 1500.0}).value), 4)
    1.2376
    >>> pixel_scale_from_header({}) is None
    True
    """
    for key in ("PIXSCALE", "SECPIX", "SCALE"):
        value = header.get(key)
        if isinstance(value, (int, float)) and not isinstance(value, bool) \
                and np.isfinite(value) and value > 0:
            return float(value) * u.arcsec
    size, focal = header.get("XPIXSZ"), header.get("FOCALLEN")
    try:
        size, focal = float(size), float(focal)
    except (TypeError, ValueError):
        return None
    if not (np.isfinite(size) and np.isfinite(focal) and size > 0 and focal > 0):
        return None
    return 206.265 * size / focal * u.arcsec
