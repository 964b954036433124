"""Take stock of a folder of frames before any configuration exists.

`survey_folder` reads only the headers of every FITS file below a folder and says what it
found: nights (folders), cameras, frame-type values, filters, which keywords hold the exposure
time and the time, detector values present or missing, pointing, WCS, pixel scale and site.
It never stops on a bad file: each unreadable one is listed with its reason.
"""

import os
from collections import Counter, defaultdict
from dataclasses import dataclass, field

from ._fitsfile import merged_header, open_image
from .errors import FrameError
from .ingest import FITS_SUFFIXES
from .instruments import DEFAULT_KEYWORDS, pixel_scale_from_header
from .kinds import DEFAULT_KIND_MAP
from .sites import site_from_header

__all__ = ["CameraSurvey", "FolderSurvey", "survey_folder"]

_POINTING = (("RA", "DEC"), ("OBJCTRA", "OBJCTDEC"), ("RA_OBJ", "DEC_OBJ"), ("TELRA", "TELDEC"))


@dataclass
class CameraSurvey:
    """What the headers of one camera's frames hold (counts of frames per finding)."""

    name: str
    frames: int = 0
    frame_types: Counter = field(default_factory=Counter)
    filters: Counter = field(default_factory=Counter)
    keywords: dict = field(default_factory=lambda: defaultdict(Counter))
    values: dict = field(default_factory=lambda: defaultdict(Counter))
    date_only: int = 0
    with_wcs: int = 0
    pointing: Counter = field(default_factory=Counter)
    pixel_scales: Counter = field(default_factory=Counter)

    def found(self, fact):
        """The keyword most frames use for ``fact``, or None."""
        counts = self.keywords.get(fact)
        return counts.most_common(1)[0][0] if counts else None


@dataclass
class FolderSurvey:
    """The result of `survey_folder`."""

    folder: str
    nights: dict = field(default_factory=dict)   # folder -> number of frames
    cameras: dict = field(default_factory=dict)  # INSTRUME value -> CameraSurvey
    sites: Counter = field(default_factory=Counter)  # (lat, lon, height) rounded -> frames
    unreadable: list = field(default_factory=list)   # (path, reason)
    night_cameras: dict = field(default_factory=lambda: defaultdict(Counter))


def _fits_files(folder):
    for root, dirs, names in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not d.startswith("."))
        for name in sorted(names):
            if not name.startswith(".") and name.lower().endswith(FITS_SUFFIXES):
                yield os.path.join(root, name)


def _note_header(cam, path, header):
    cam.frames += 1
    type_value = header.get(DEFAULT_KIND_MAP.keyword)
    if type_value is not None:
        cam.frame_types[" ".join(str(type_value).split())] += 1
    for fact, keys in DEFAULT_KEYWORDS.items():
        for key in keys:
            value = header.get(key)
            if value is not None and str(value).strip():
                cam.keywords[fact][key] += 1
                if fact in ("gain", "read_noise", "saturation"):
                    cam.values[fact][value] += 1
                if fact == "filter":
                    cam.filters[str(value).strip()] += 1
                break
    date = header.get("DATE-OBS")
    if isinstance(date, str) and date.strip() and "T" not in date:
        cam.date_only += 1
    if str(header.get("CTYPE1", "")).upper().startswith("RA"):
        cam.with_wcs += 1
    for pair in _POINTING:
        if all(k in header for k in pair):
            cam.pointing[pair] += 1
            break
    scale = pixel_scale_from_header(header)
    if scale is not None:
        cam.pixel_scales[round(float(scale.value), 3)] += 1


def survey_folder(folder):
    """Read the headers below ``folder`` and sum up what they hold.

    Parameters
    ----------
    folder : str or path-like

    Returns
    -------
    FolderSurvey

    Examples
    --------
    >>> import tempfile
    >>> survey_folder(tempfile.mkdtemp()).nights
    {}
    """
    folder = os.fspath(folder)
    survey = FolderSurvey(folder=folder)
    for path in _fits_files(folder):
        try:
            with open_image(path) as (hdul, index):
                header = merged_header(hdul, index)
            site = site_from_header(path, header)
        except FrameError as exc:
            survey.unreadable.append((path, exc.problem))
            continue
        night = os.path.dirname(path)
        survey.nights[night] = survey.nights.get(night, 0) + 1
        name = " ".join(str(header.get("INSTRUME", "")).split()) or "unnamed camera"
        cam = survey.cameras.setdefault(name, CameraSurvey(name=name))
        survey.night_cameras[night][name] += 1
        _note_header(cam, path, header)
        if site is not None:
            key = (round(float(site.lat.deg), 4), round(float(site.lon.deg), 4),
                   round(float(site.height.value)))
            survey.sites[key] += 1
    return survey
