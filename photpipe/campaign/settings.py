"""Configuration sections turned into the keyword values the frame stages take.

The stages never read the configuration; the batch run translates ``[photometry]`` and
``[nucleus]`` here, once, into plain values with units, and names the file and the key when a
value cannot be used. Keys this module does not know are returned so the run can say they were
ignored.
"""

import numpy as np
from astropy import units as u

from .config import ConfigError

__all__ = ["photometry_options", "nucleus_options"]

#: [photometry] key -> (keyword of measure_comet_frame, converter).
_PHOTOMETRY = {
    "band": ("band", str),
    "colour": ("colour", str),
    "fit_colour_term": ("fit_colour_term", bool),
    "comet_colour": ("comet_colour", float),
    "mag_system": ("mag_system", str),
    "apertures_km": ("apertures_km", lambda v: np.atleast_1d(np.asarray(v, float)) * u.km),
    "apertures_arcsec": ("apertures_arcsec",
                         lambda v: np.atleast_1d(np.asarray(v, float)) * u.arcsec),
    "annulus_km": ("annulus", lambda v: tuple(float(x) * u.km for x in v)),
    "annulus_arcsec": ("annulus", lambda v: tuple(float(x) * u.arcsec for x in v)),
    "sky_method": ("sky_method", str),
    "dust_phase_function": ("dust_phase_function", str),
    "phase_coefficient_mag_per_deg": ("phase_coefficient", lambda v: float(v) * u.mag / u.deg),
    "profile_slope_range_km": ("profile_slope_range_km",
                               lambda v: np.asarray(v, float) * u.km),
    "min_stars": ("min_stars", int),
    "detect_threshold": ("detect_threshold", float),
    "coma_correction": ("coma_correction", bool),
    "airmass_formula": ("airmass_formula", str),
}

#: Keys of [photometry] used elsewhere in the run (not keyword options).
_PHOTOMETRY_ELSEWHERE = ("reference_stars", "reference_store", "phase_function_table")

_NUCLEUS = {
    "gamma": ("gamma", lambda v: v if v == "free" else float(v)),
    "cutout_pix": ("cutout", int),
    "bootstrap": ("bootstrap", int),
    "modulation": ("modulation", int),
    "max_shift_pix": ("max_shift", float),
    "detection_sigma": ("detection_sigma", float),
    "profile": ("profile", bool),
}

_PSF = {
    "psf_cutout_pix": ("cutout", int),
    "psf_min_stars": ("min_stars", int),
    "psf_methods": ("methods", lambda v: tuple(str(x) for x in v)),
    "psf_epsf": ("epsf", str),
}


def _convert(config, section, key, value, converter):
    try:
        return converter(value)
    except (TypeError, ValueError) as exc:
        msg = (f"{config.get('_file', 'configuration')}: [{section}] {key} = {value!r} "
               f"cannot be used: {exc}")
        raise ConfigError(msg) from exc


def photometry_options(config):
    """Keyword options of :func:`photpipe.photometry.measure_comet_frame` from ``[photometry]``.

    Parameters
    ----------
    config : dict
        A loaded configuration.

    Returns
    -------
    options : dict
    ignored : list of str
        Keys of the section that are not understood.

    Raises
    ------
    ConfigError
        For a value of the wrong kind (the message names the file and key).

    Examples
    --------
    >>> opts, ignored = photometry_options({"photometry": {"apertures_km": [5000.0],
    ...                                                     "min_stars": 4, "colur": "B-V"}})
    >>> opts["apertures_km"], opts["min_stars"], ignored
    (<Quantity [5000.] km>, 4, ['colur'])
    """
    section = config.get("photometry", {})
    options, ignored = {}, []
    for key, value in section.items():
        if key in _PHOTOMETRY:
            name, converter = _PHOTOMETRY[key]
            options[name] = _convert(config, "photometry", key, value, converter)
        elif key not in _PHOTOMETRY_ELSEWHERE:
            ignored.append(key)
    table = section.get("phase_function_table")
    if table:
        options["phase_function_table"] = _phase_table(config, table)
    return options, ignored


def _phase_table(config, path):
    from astropy.table import Table

    try:
        t = Table.read(path)
    except Exception as exc:  # noqa: BLE001 - astropy raises many kinds for an unreadable table
        msg = (f"{config.get('_file', 'configuration')}: [photometry] phase_function_table "
               f"{path}: cannot be read ({exc})")
        raise ConfigError(msg) from exc
    cols = t.colnames
    if len(cols) < 2:
        msg = f"{path}: a phase-function table needs two columns (phase in deg, value)"
        raise ConfigError(msg)
    return (np.asarray(t[cols[0]], float), np.asarray(t[cols[1]], float))


def nucleus_options(config):
    """Keyword options of :func:`photpipe.nucleus.fit_nucleus` from ``[nucleus]``.

    The PSF options (``psf_cutout_pix``, ``psf_min_stars``, ``psf_methods``, ``psf_epsf``) go
    under the key ``"psf"`` for :func:`photpipe.nucleus.measure_psf`.

    Examples
    --------
    >>> opts, _ = nucleus_options({"nucleus": {"gamma": "free", "cutout_pix": 101}})
    >>> opts
    {'gamma': 'free', 'cutout': 101, 'psf': {}}
    """
    section = config.get("nucleus", {})
    options, psf, ignored = {}, {}, []
    for key, value in section.items():
        if key in _NUCLEUS:
            name, converter = _NUCLEUS[key]
            options[name] = _convert(config, "nucleus", key, value, converter)
        elif key in _PSF:
            name, converter = _PSF[key]
            psf[name] = _convert(config, "nucleus", key, value, converter)
        else:
            ignored.append(key)
    options["psf"] = psf
    return options, ignored
