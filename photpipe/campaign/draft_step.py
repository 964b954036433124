"""A first configuration drafted from what a folder of frames (and a catalogue) hold.

`draft_configuration` turns a `~photpipe.frames.FolderSurvey` into commented TOML: every value
the headers gave is filled in, and every value the user must still supply is marked
``TO SUPPLY`` with what it means. The result loads with `photpipe.config.load_config` once the
marked values are given.
"""

import os
import re

from photpipe.frames import DEFAULT_KEYWORDS, DEFAULT_KIND_MAP
from photpipe.photometry.solar import BAND_ALIASES

__all__ = ["draft_configuration", "catalogue_columns_guess"]

_RA = ("ra", "raj2000", "ra_icrs", "radeg", "_raj2000", "ra_deg")
_DEC = ("dec", "dej2000", "de_icrs", "dedeg", "_dej2000", "dec_deg", "decj2000")


def _toml_name(text):
    name = re.sub(r"[^A-Za-z0-9_-]+", "_", text.strip()).strip("_").lower()
    return name or "camera"


def _q(text):
    return '"' + str(text).replace("\\", "\\\\").replace('"', '\\"') + '"'


def catalogue_columns_guess(colnames):
    """Guess the catalogue's position, magnitude, error and colour columns from their names.

    Returns
    -------
    dict
        ``ra``, ``dec`` (column names or None), ``magnitudes`` and ``errors`` (band -> column),
        ``colours`` (list of colour columns).

    Examples
    --------
    >>> g = catalogue_columns_guess(["RAJ2000", "DEJ2000", "Vmag", "e_Vmag", "B-V", "e_B-V"])
    >>> g["ra"], g["dec"], g["magnitudes"], g["errors"], g["colours"]
    ('RAJ2000', 'DEJ2000', {'V': 'Vmag'}, {'V': 'e_Vmag'}, ['B-V'])
    """
    lower = {c.lower(): c for c in colnames}
    ra = next((lower[n] for n in _RA if n in lower), None)
    dec = next((lower[n] for n in _DEC if n in lower), None)
    mags, errs, colours = {}, {}, []
    for c in colnames:
        m = re.fullmatch(r"([A-Za-z]'?)(mag)?", c)
        if m and m.group(1) in BAND_ALIASES and (m.group(2) or len(colnames) > 2):
            if c.lower() not in _RA + _DEC:
                mags.setdefault(m.group(1), c)
        if re.fullmatch(r"[A-Za-z]-[A-Za-z]", c):
            colours.append(c)
    for band in mags:
        for c in colnames:
            if c.lower() in (f"e_{band}mag".lower(), f"{band}_err".lower(), f"e_{band}".lower(),
                             f"{band}magerr".lower()):
                errs[band] = c
    return {"ra": ra, "dec": dec, "magnitudes": mags, "errors": errs, "colours": colours}


def _night_lines(survey, cam_names, site_names):
    lines = []
    for night, n in sorted(survey.nights.items()):
        cam = survey.night_cameras[night].most_common(1)[0][0]
        lines += ["[[night]]", f"path = {_q(night)}   # {n} frames",
                  f"site = {_q(site_names[0] if site_names else 'my_site')}"
                  + ("" if site_names else "   # TO SUPPLY: define it under [sites.NAME]"),
                  f"instrument = {_q(cam_names[cam])}", ""]
    return lines


def _site_lines(survey):
    if not survey.sites:
        return ["[sites.my_site]                    # TO SUPPLY: no frame header names its site",
                "longitude_deg = 0.0                # TO SUPPLY: east positive",
                "latitude_deg = 0.0                 # TO SUPPLY: north positive",
                "height_m = 0.0                     # TO SUPPLY: above the WGS84 ellipsoid", ""], []
    lines, names = [], []
    for i, ((lat, lon, h), n) in enumerate(survey.sites.most_common()):
        name = f"site_{i + 1}"
        names.append(name)
        lines += [f"[sites.{name}]                    # from the headers of {n} frames",
                  f"longitude_deg = {lon}", f"latitude_deg = {lat}", f"height_m = {float(h)}",
                  ""]
    return lines, names


def _camera_lines(cam, name):
    lines = [f"[instruments.{name}]", f"match_values = [{_q(cam.name)}]   # INSTRUME of "
             f"{cam.frames} frames"]
    for fact, unit in (("gain", "electron/adu"), ("read_noise", "electron"),
                       ("saturation", "adu")):
        found = cam.values.get(fact)
        if found:
            value, n = found.most_common(1)[0]
            lines.append(f"# {fact} = {value}   # the headers say {value} {unit} ({n} frames); "
                         "give it here to override them")
        elif fact == "saturation":
            lines.append("# saturation = 65535.0   # adu; the headers have none: the integer "
                         "full scale is used")
        else:
            lines.append(f"{fact} = 1.0   # TO SUPPLY: {unit}; the headers have none")
    if cam.pixel_scales:
        lines.append(f"# pixel_scale_arcsec = {cam.pixel_scales.most_common(1)[0][0]}   "
                     "# read from the headers")
    else:
        lines.append("pixel_scale_arcsec = 1.0   # TO SUPPLY: arcsec per unbinned pixel "
                     "(needed to plate-solve)")
    exptime = cam.found("exptime")
    if exptime is None:
        lines.append('exptime_keywords = ["EXPTIME"]   # TO SUPPLY: no exposure-time keyword '
                     'was found')
    elif exptime != DEFAULT_KEYWORDS["exptime"][0]:
        lines.append(f"exptime_keywords = [{_q(exptime)}]")
    if cam.date_only and cam.found("time_obs") is None:
        lines.append('time_keywords = ["TIME-OBS"]   # TO SUPPLY: DATE-OBS holds a date only '
                     f'in {cam.date_only} frames and no time keyword was found')
    if not (cam.found("date_obs") or cam.found("mjd_obs") or cam.found("jd")):
        lines.append('date_keywords = ["DATE-OBS"]   # TO SUPPLY: no time keyword was found')
    unknown = [v for v in cam.frame_types if DEFAULT_KIND_MAP.classify(v) is None]
    for value in unknown:
        lines.append(f"# science = [{_q(value)}]   # TO SUPPLY: what is "
                     f"IMAGETYP = {_q(value)} ({cam.frame_types[value]} frames)?")
    return lines + [""]


def _filter_lines(survey):
    filters = sorted({f for cam in survey.cameras.values() for f in cam.filters})
    lines = []
    for f in filters:
        band = f.strip() if f.strip() in BAND_ALIASES else None
        if band:
            lines += [f"[filters.{_q(f)}]", f"band = {_q(band)}   # the catalogue band", ""]
        else:
            lines += [f"[filters.{_q(f)}]", f"band = {_q(f)}   # TO SUPPLY: the catalogue band "
                      "of this filter", ""]
    return lines


def _catalogue_lines(catalogue, colnames, filters=()):
    if catalogue is None:
        return ["[photometry]",
                'reference_stars = "stars.ecsv"   # TO SUPPLY: the reference-star catalogue',
                "", "[catalogue]", "# ra = \"ra\"   # give the catalogue's column names", ""]
    g = catalogue_columns_guess(colnames)
    lines = ["[photometry]", f"reference_stars = {_q(os.path.abspath(catalogue))}"]
    bands = list(g["magnitudes"])
    # the band of the filters observed first, so [photometry] band agrees with [filters]
    bands.sort(key=lambda b: b not in {BAND_ALIASES.get(f) and f for f in filters})
    if bands:
        lines.append(f"band = {_q(bands[0])}   # catalogue bands found: {', '.join(bands)}")
    if g["colours"]:
        lines.append(f"colour = {_q(g['colours'][0])}")
    lines += ['plate_solve = "always"   # every frame\'s WCS is solved from the catalogue',
              "", "[catalogue]   # the file's columns: " + ", ".join(colnames[:20])]
    for key in ("ra", "dec"):
        lines.append(f"{key} = {_q(g[key])}" if g[key] else
                     f"{key} = {_q(key)}   # TO SUPPLY: the column of the {key}")
    if g["magnitudes"]:
        inner = ", ".join(f"{b} = {_q(c)}" for b, c in g["magnitudes"].items())
        lines.append(f"magnitudes = {{ {inner} }}")
    if g["errors"]:
        inner = ", ".join(f"{b} = {_q(c)}" for b, c in g["errors"].items())
        lines.append(f"errors = {{ {inner} }}")
    return lines + [""]


def draft_configuration(survey, *, catalogue=None, catalogue_colnames=()):
    """Commented TOML for a campaign over the surveyed folder.

    Parameters
    ----------
    survey : `~photpipe.frames.FolderSurvey`
    catalogue : str, optional
        The reference-star file.
    catalogue_colnames : sequence of str, optional
        Its column names.

    Returns
    -------
    str
    """
    cam_names = {name: _toml_name(name) for name in survey.cameras}
    site_lines, site_names = _site_lines(survey)
    lines = ["# photpipe configuration drafted from the frames below " + survey.folder,
             "# Values read from the headers are filled in; lines marked TO SUPPLY need yours.",
             "", "[campaign]", 'name = "my campaign"', 'results = "results"', ""]
    lines += _night_lines(survey, cam_names, site_names)
    lines += site_lines
    for name, cam in survey.cameras.items():
        lines += _camera_lines(cam, cam_names[name])
    lines += _filter_lines(survey)
    filters = sorted({f for cam in survey.cameras.values() for f in cam.filters})
    lines += _catalogue_lines(catalogue, list(catalogue_colnames), filters)
    lines += ["[target]", 'name = "my comet"   # TO SUPPLY', "",
              "[target.orbit]   # TO SUPPLY: the osculating elements (or [target] "
              "ephemeris_table)",
              "# q_au = 1.0", "# e = 1.0", "# i_deg = 0.0", "# node_deg = 0.0",
              "# peri_deg = 0.0", '# perihelion_time = "2026-01-01T00:00:00"', ""]
    if survey.unreadable:
        lines.append(f"# {len(survey.unreadable)} files could not be read:")
        lines += [f"#   {p}: {why}" for p, why in survey.unreadable[:20]]
    return "\n".join(lines) + "\n"
