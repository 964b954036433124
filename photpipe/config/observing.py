"""Readers of the sections that describe how the observatories write their data.

``[instruments.NAME]`` (each camera's header keywords and detector values), ``[filters.NAME]``
(FILTER header values -> catalogue bands and solar bands) and ``[catalogue]`` (the reference
catalogue's column names). Each returns the plain objects the stages take.
"""

from ._errors import ConfigError
from .settings import section_values

__all__ = ["read_instruments", "read_filters", "read_catalogue_columns"]

#: [instruments.NAME] *_keywords key -> fact of `~photpipe.frames.instruments.DEFAULT_KEYWORDS`.
_KEYWORD_KEYS = {"exptime_keywords": "exptime", "date_keywords": "date_obs",
                 "time_keywords": "time_obs", "mjd_keywords": "mjd_obs", "jd_keywords": "jd",
                 "filter_keywords": "filter"}


def _file(config):
    return config.get("_file", "configuration")


def _profile(config, name, table, frame_types):
    from photpipe.frames import InstrumentProfile, kind_map_from_mapping

    label = f"[instruments.{name}]"
    v = section_values(config, "instruments", table, label=label)
    keywords = [(fact, tuple(k.strip().upper() for k in v[key]))
                for key, fact in _KEYWORD_KEYS.items() if v[key]]
    if v["binning_keywords"]:
        if len(v["binning_keywords"]) != 2:
            msg = f"{_file(config)}: {label} binning_keywords: must name two keywords (x, y)"
            raise ConfigError(msg)
        keywords += [("xbinning", (v["binning_keywords"][0].upper(),)),
                     ("ybinning", (v["binning_keywords"][1].upper(),))]
    types = dict(frame_types)
    if v["type_keyword"]:
        types["type_keyword"] = v["type_keyword"]
    types.update({k: list(v[k]) for k in ("bias", "dark", "flat", "science") if v[k]})
    try:
        return InstrumentProfile(
            name=name, match_keyword=v["match_keyword"].strip().upper(),
            match_values=tuple(v["match_values"] or ()), gain=v["gain"],
            read_noise=v["read_noise"], saturation=v["saturation"],
            pixel_scale=v["pixel_scale_arcsec"], trust_header=tuple(v["trust_header"]),
            time_reference=v["time_reference"], keywords=tuple(keywords),
            sections=(v["trim_section"], v["overscan_section"]),
            kind_map=kind_map_from_mapping(types))
    except (TypeError, ValueError) as exc:
        msg = f"{_file(config)}: {label}: {exc}"
        raise ConfigError(msg) from exc


def read_instruments(config):
    """Read every ``[instruments.NAME]`` into `~photpipe.frames.InstrumentProfile` objects.

    Frame-type values a camera does not list come from ``[frames]``.

    Examples
    --------
    >>> cams = read_instruments({"instruments": {"cam": {"gain": 1.4,
    ...                                                   "exptime_keywords": ["EXPOSURE"]}}})
    >>> cams[0].name, cams[0].gain, cams[0].keys("exptime")
    ('cam', 1.4, ('EXPOSURE',))
    """
    frames = section_values(config, "frames")
    frame_types = {"type_keyword": frames["type_keyword"]}
    frame_types.update({k: list(frames[k]) for k in ("bias", "dark", "flat", "science")
                        if frames[k] is not None})
    return [_profile(config, name, table, frame_types)
            for name, table in (config.get("instruments") or {}).items()]


def read_filters(config):
    """Read ``[filters.NAME]`` into a `~photpipe.photometry.FilterMap` (empty: none given).

    Examples
    --------
    >>> fm = read_filters({"filters": {"Rc": {"band": "R"}, "V": {"band": "V"}}})
    >>> fm.lookup("rc").band
    'R'
    """
    from photpipe.photometry import FilterBand, FilterMap

    entries = []
    for name, table in (config.get("filters") or {}).items():
        label = f"[filters.{name}]"
        v = section_values(config, "filters", table, label=label)
        if not v["band"]:
            msg = f"{_file(config)}: {label} band: missing (the catalogue band of this filter)"
            raise ConfigError(msg)
        entries.append(FilterBand(filter=name, band=v["band"], solar_band=v["solar_band"] or ""))
    return FilterMap(tuple(entries))


def read_catalogue_columns(config):
    """Read ``[catalogue]`` into photpipe name -> the catalogue's column name.

    Examples
    --------
    >>> cols = read_catalogue_columns({"catalogue": {"ra": "RAJ2000", "dec": "DEJ2000",
    ...     "magnitudes": {"V": "Vmag"}, "errors": {"V": "e_Vmag"}}})
    >>> sorted(cols.items())
    [('V', 'Vmag'), ('V_err', 'e_Vmag'), ('dec', 'DEJ2000'), ('ra', 'RAJ2000')]
    """
    v = section_values(config, "catalogue")
    columns = {"ra": v["ra"], "dec": v["dec"]}
    if v["id"]:
        columns["id"] = v["id"]
    columns.update(v["magnitudes"] or {})
    columns.update({f"{band}_err": col for band, col in (v["errors"] or {}).items()})
    if v["colour_column"]:
        colour = section_values(config, "photometry")["colour"]
        columns[colour] = v["colour_column"]
    return {k: c for k, c in columns.items() if k != c}
