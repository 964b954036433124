"""Which catalogue band (and which solar magnitude) a frame's FILTER calibrates on.

A campaign may use several filters; each frame's FILTER header value is looked up in a mapping
(``[filters]`` of the configuration) to the catalogue's magnitude column and to the band of the
Sun's magnitude used for Afρ. A frame whose filter has no mapping is skipped with that reason.
Without a mapping, one band serves every frame, and a filter that plainly names another band
(an ``R`` frame against ``V`` magnitudes) is refused rather than calibrated silently.
"""

from dataclasses import dataclass

from .solar import BAND_ALIASES

__all__ = ["FilterBand", "FilterMap", "filter_map_from_mapping", "band_for_frame"]


def _key(name):
    return "".join(str(name).split()).casefold()


@dataclass(frozen=True)
class FilterBand:
    """One filter's calibration.

    Attributes
    ----------
    filter : str
        The FILTER header value (compared without case or blanks).
    band : str
        Catalogue magnitude column the zero point uses.
    solar_band : str
        Band of the solar magnitude for Afρ (a name `~photpipe.photometry.solar_magnitude`
        knows; by default ``band``).
    """

    filter: str
    band: str
    solar_band: str = ""

    @property
    def sun(self):
        """The band name used for the solar magnitude."""
        return self.solar_band or self.band


@dataclass(frozen=True)
class FilterMap:
    """FILTER header values -> `FilterBand`.

    Examples
    --------
    >>> fm = filter_map_from_mapping({"R": "R", "Rc": "R", "V": {"band": "Vmag",
    ...                                                           "solar_band": "V"}})
    >>> fm.lookup("rc").band, fm.lookup("V").sun
    ('R', 'V')
    """

    entries: tuple = ()

    def lookup(self, filter_name):
        """The `FilterBand` of a header value, or None."""
        key = _key(filter_name)
        for entry in self.entries:
            if _key(entry.filter) == key:
                return entry
        return None

    def names(self):
        """The mapped filter names."""
        return [e.filter for e in self.entries]


def filter_map_from_mapping(section):
    """Build a `FilterMap` from ``[filters]``: ``NAME = "band"`` or ``NAME = {band, solar_band}``.

    Raises
    ------
    ValueError
        On an entry that is neither a band name nor a table with ``band``.
    """
    entries = []
    for name, value in dict(section or {}).items():
        if isinstance(value, str):
            entries.append(FilterBand(filter=name, band=value))
            continue
        if not isinstance(value, dict) or not isinstance(value.get("band"), str):
            msg = (f"[filters] {name!r} must be a band name or a table with 'band' (and "
                   f"optionally 'solar_band'), got {value!r}")
            raise ValueError(msg)
        unknown = sorted(set(value) - {"band", "solar_band"})
        if unknown:
            msg = f"[filters] {name!r} has unknown key(s) {', '.join(map(repr, unknown))}"
            raise ValueError(msg)
        entries.append(FilterBand(filter=name, band=value["band"],
                                  solar_band=str(value.get("solar_band", ""))))
    return FilterMap(tuple(entries))


def band_for_frame(filter_name, *, filter_map=None, default_band="R"):
    """The `FilterBand` a frame of filter ``filter_name`` is calibrated with.

    Parameters
    ----------
    filter_name : str or None
        The frame's FILTER value.
    filter_map : FilterMap, optional
        The campaign's mapping; when given (and not empty), a filter missing from it is an
        error.
    default_band : str, optional
        The one band used when there is no mapping.

    Raises
    ------
    ValueError
        ``"filter 'Ha' has no band mapping ..."``, or, without a mapping, a filter that names a
        band other than ``default_band`` (``R`` against ``V`` magnitudes).

    Examples
    --------
    >>> band_for_frame("R", default_band="R").band
    'R'
    >>> band_for_frame("Clear", default_band="R").band
    'R'
    >>> band_for_frame("R", default_band="V")
    Traceback (most recent call last):
    ...
    ValueError: filter 'R' is Cousins R, the catalogue band 'V' (Johnson V); map it in [filters]
    """
    if filter_map is not None and filter_map.entries:
        entry = filter_map.lookup(filter_name or "")
        if entry is None:
            msg = (f"filter {filter_name!r} has no band mapping ([filters] maps "
                   f"{', '.join(filter_map.names())})")
            raise ValueError(msg)
        return entry
    said = BAND_ALIASES.get(str(filter_name or "").strip())
    used = BAND_ALIASES.get(default_band.strip(), default_band.strip())
    if said is not None and said != used:
        msg = (f"filter {filter_name!r} is {said}, the catalogue band {default_band!r} "
               f"({used}); map it in [filters]")
        raise ValueError(msg)
    return FilterBand(filter=str(filter_name or ""), band=default_band)
