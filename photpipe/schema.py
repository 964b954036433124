"""The schema: every result table, its columns, their units and labels (the one source).

One registry describes every table. The stages take their column lists from it
(`photpipe.photometry.MEASUREMENT_COLUMNS`, `photpipe.nucleus.NUCLEUS_COLUMNS`), the frame task
its renaming of stage columns (`stage_names`), the campaign store its SQL
(`photpipe.campaign._schema.schema_sql`) and the exports the units they put back on the values,
so the stages, the database and the ECSV files cannot drift apart. Values are stored as plain
numbers in the unit named here (the unit is also in the column name where the data contracts of
``DEVELOPERS.md`` put it there); a column without a unit holds plain numbers, or a time as MJD
in days (``mjd_utc_mid``). This module imports nothing else of photpipe, so every stage may use
it.
"""

from dataclasses import dataclass, replace

from astropy import units as u

__all__ = ["SCHEMA_VERSION", "Column", "TABLES", "RESULT_TABLES", "column_unit", "LABELS",
           "column_label", "NAMING_RULE", "MEASUREMENT_COLUMNS", "NUCLEUS_COLUMNS",
           "ZERO_POINT_COLUMNS", "STAR_COLUMNS", "GEOMETRY_COLUMNS", "ASTROMETRY_COLUMNS",
           "PROFILE_COLUMNS", "column_names",
           "stage_names", "table_unit"]

#: How every column of every result file is named (also in the README, "Column names").
NAMING_RULE = ("lower-case snake_case; a quantity with a unit ends in that unit: _au, _km, _deg, "
               "_arcsec, _mag, _cm, _h, _s, _pix, _e_s (electron/s); its error is the same name "
               "with _err before the unit (afrho_err_cm, zp_err_mag)")

#: Version of the layout below; stored in the ``schema_version`` table of every store.
SCHEMA_VERSION = 3


@dataclass(frozen=True)
class Column:
    """One stored column.

    Attributes
    ----------
    name : str
        Column name, shared by the database and the exported tables.
    sql : str
        SQLite type (``REAL``, ``INTEGER`` or ``TEXT``).
    unit : `~astropy.units.UnitBase` or None
        Unit of the stored numbers; exports attach it.
    description : str
        One line for the ECSV header.
    stage : str
        The stage whose result table holds the column under this name (``"photometry"``,
        ``"nucleus"``), or ``""`` when the campaign's frame task makes it.
    source : str
        The column's name in the stage's own table when the frame task renames it
        (``r_h`` -> ``r_h_au``), else ``""``.
    """

    name: str
    sql: str
    unit: object = None
    description: str = ""
    stage: str = ""
    source: str = ""


def _c(name, sql="REAL", unit=None, description="", stage="", source=""):
    return Column(name, sql, None if unit is None else u.Unit(unit), description, stage, source)



_MAG = u.mag
_FLAGS = _c("flags", "TEXT", None, "comma-separated quality flags, empty when all is well")

#: Columns of the ``measurements.ecsv`` contract (after ``frame``), one row per aperture.
MEASUREMENT_COLUMNS = (
    _c("mjd_utc_mid", stage="photometry", description="mid-exposure time, MJD (UTC)"),
    _c("filter", "TEXT", stage="photometry"),
    _c("exptime_s", stage="photometry", unit=u.s),
    _c("airmass", stage="photometry"),
    _c("zp_mag", stage="photometry", unit=_MAG,
       description="mag = zp_mag - 2.5 log10(flux in electron/s)"),
    _c("zp_err_mag", stage="photometry", unit=_MAG),
    _c("n_stars", "INTEGER", stage="photometry"),
    _c("x_pix", stage="photometry", unit=u.pix),
    _c("y_pix", stage="photometry", unit=u.pix),
    _c("ra_deg", stage="photometry", unit=u.deg),
    _c("dec_deg", stage="photometry", unit=u.deg),
    _c("r_h_au", stage="photometry", unit=u.au),
    _c("delta_au", stage="photometry", unit=u.au),
    _c("phase_deg", stage="photometry", unit=u.deg),
    _c("elong_deg", stage="photometry", unit=u.deg),
    _c("rho_km", stage="photometry", unit=u.km, description="aperture radius at the comet"),
    _c("rho_arcsec", stage="photometry", unit=u.arcsec),
    _c("mag", stage="photometry", unit=_MAG),
    _c("mag_err", stage="photometry", unit=_MAG),
    _c("afrho_cm", stage="photometry", unit=u.cm),
    _c("afrho_err_cm", stage="photometry", unit=u.cm),
    _c("a0frho_cm", stage="photometry", unit=u.cm, description="Afrho corrected to 0 deg phase"),
    _c("a0frho_err_cm", stage="photometry", unit=u.cm),
    _c("coma_slope", stage="photometry"),
    _c("coma_slope_err", description="1-sigma error of coma_slope from the profile fit"),
    _c("coma_apcorr_mag", stage="photometry", unit=_MAG,
       description="aperture correction of the PSF-blurred coma applied to the sum"),
    _c("nucleus_share", stage="nucleus",
       description="share of the aperture's light from the fitted nucleus"),
    _c("afrho_coma_cm", stage="nucleus", unit=u.cm,
       description="Afrho of the coma, the fitted nucleus removed"),
    _c("afrho_coma_err_cm", stage="nucleus", unit=u.cm),
    _c("a0frho_coma_cm", stage="nucleus", unit=u.cm,
       description="Afrho of the coma at 0 deg phase, the fitted nucleus removed"),
    _c("a0frho_coma_err_cm", stage="nucleus", unit=u.cm),
    replace(_FLAGS, stage="photometry"),
)

#: Columns of the ``nucleus.ecsv`` contract (after ``frame``), one row per frame.
NUCLEUS_COLUMNS = (
    _c("mjd_utc_mid", stage="nucleus", description="mid-exposure time, MJD (UTC)"),
    _c("nucleus_mag", stage="nucleus", unit=_MAG),
    _c("nucleus_mag_err", stage="nucleus", unit=_MAG),
    _c("nucleus_flux_e_s", stage="nucleus", unit=u.electron / u.s),
    _c("coma_k", stage="nucleus", unit=u.electron / u.s,
       description="K of the coma surface brightness K rho^-gamma, rho in pixels"),
    _c("coma_gamma", stage="nucleus"),
    _c("fwhm_arcsec", stage="nucleus", unit=u.arcsec,
       description="FWHM of the PSF model fitted to the field stars and used in the nucleus fit"),
    _c("nucleus_fraction", stage="nucleus"),
    _c("chi2_red", stage="nucleus"),
    _c("method", "TEXT", stage="nucleus"),
    replace(_FLAGS, stage="nucleus"),
)

#: Per-frame zero point (one row per frame).
ZERO_POINT_COLUMNS = (
    _c("zp_mag", unit=_MAG, description="mag = zp_mag - 2.5 log10(flux in electron/s)"),
    _c("zp_err_mag", unit=_MAG),
    _c("colour_term"),
    _c("colour_term_err"),
    _c("n_stars", "INTEGER", description="stars kept in the fit"),
    _c("n_rejected", "INTEGER"),
    _c("rms_mag", unit=_MAG),
    _c("chi2_red"),
    _c("band", "TEXT"),
    _c("aperture_correction"),
    _c("gauss_fwhm_arcsec", unit=u.arcsec,
       description="median FWHM of Gaussian fits to the cores of field stars: the quick "
                   "estimate that sizes the star apertures (wider than the PSF model's FWHM "
                   "for stars with Moffat wings)"),
    _c("airmass"),
    replace(_FLAGS, stage="nucleus"),
)

#: Field stars measured in a frame (one row per star).
STAR_COLUMNS = (
    _c("star_id", "TEXT", stage="photometry", source="id",
       description="reference-catalogue identifier"),
    _c("ra_deg", stage="photometry", source="ra", unit=u.deg),
    _c("dec_deg", stage="photometry", source="dec", unit=u.deg),
    _c("x_pix", stage="photometry", source="x", unit=u.pix),
    _c("y_pix", stage="photometry", source="y", unit=u.pix),
    _c("flux_e_s", stage="photometry", source="flux", unit=u.electron / u.s),
    _c("flux_err_e_s", stage="photometry", source="flux_err", unit=u.electron / u.s),
    _c("mag_inst", stage="photometry", source="inst_mag", unit=_MAG,
       description="-2.5 log10(flux in electron/s)"),
    _c("mag_inst_err", stage="photometry", source="inst_mag_err", unit=_MAG),
    _c("mag_ref", stage="photometry", source="cat_mag", unit=_MAG,
       description="reference-catalogue magnitude"),
    _c("mag_ref_err", stage="photometry", source="cat_mag_err", unit=_MAG),
    _c("colour_ref", stage="photometry", source="colour", unit=_MAG,
       description="reference-catalogue colour"),
    _c("residual_mag", stage="photometry", source="residual", unit=_MAG,
       description="catalogue minus calibrated magnitude"),
    _c("used", "INTEGER", stage="photometry",
       description="1 if the star entered the zero-point fit"),
)

#: Observing geometry at each frame's mid-exposure time (one row per frame).
GEOMETRY_COLUMNS = (
    _c("r_h_au", stage="geometry", source="r_h", unit=u.au),
    _c("delta_au", stage="geometry", source="delta", unit=u.au),
    _c("phase_deg", stage="geometry", source="phase", unit=u.deg),
    _c("elong_deg", stage="geometry", source="elong", unit=u.deg),
    _c("ra_deg", stage="geometry", source="ra", unit=u.deg),
    _c("dec_deg", stage="geometry", source="dec", unit=u.deg),
    _c("light_time_s", stage="geometry", source="light_time", unit=u.s),
)

#: The comet's position on each frame (one row per frame): ``photpipe.orbit.comet_position_row``.
ASTROMETRY_COLUMNS = (
    _c("mjd_utc_mid", description="mid-exposure time, MJD (UTC)"),
    _c("x_pix", unit=u.pix, description="centre of light, 0-based"),
    _c("y_pix", unit=u.pix),
    _c("x_err_pix", unit=u.pix, description="centroid error from the pixel noise, field stars "
                                            "and masking"),
    _c("y_err_pix", unit=u.pix),
    _c("ra_deg", unit=u.deg, description="through the refined WCS"),
    _c("dec_deg", unit=u.deg),
    _c("ra_err_arcsec", unit=u.arcsec, description="1-sigma error of RA cos(Dec): centroid and "
                                                   "plate solution in quadrature"),
    _c("dec_err_arcsec", unit=u.arcsec),
    _c("radec_corr", description="correlation of the RA and Dec errors"),
    _c("centroid_err_arcsec", unit=u.arcsec, description="per-axis centroid error"),
    _c("plate_err_arcsec", unit=u.arcsec, description="per-axis error of the refined WCS at "
                                                      "the comet"),
    _c("star_rms_arcsec", unit=u.arcsec, description="per-axis rms of the reference stars "
                                                     "about the refined WCS"),
    _c("n_ref_stars", "INTEGER", description="stars in the WCS fit"),
    _c("stn", "TEXT", description="station (the site's name)"),
    _c("object", "TEXT"),
    _c("ast_cat", "TEXT", description="reference catalogue"),
    _c("lon_deg", unit=u.deg, description="site east longitude (WGS84)"),
    _c("lat_deg", unit=u.deg),
    _c("height_m", unit=u.m),
)

_SB = u.electron / (u.s * u.arcsec**2)

#: The coma's surface-brightness profile of each frame (a row per annulus).
PROFILE_COLUMNS = (
    _c("rho_km", unit=u.km, description="mean radius of the annulus at the comet"),
    _c("rho_arcsec", unit=u.arcsec),
    _c("sb_e_s_arcsec2", unit=_SB, description="mean surface brightness, all azimuths"),
    _c("sb_err_e_s_arcsec2", unit=_SB),
    _c("sb_sun_e_s_arcsec2", unit=_SB, description="sunward sector"),
    _c("sb_sun_err_e_s_arcsec2", unit=_SB),
    _c("sb_tail_e_s_arcsec2", unit=_SB, description="tailward sector"),
    _c("sb_tail_err_e_s_arcsec2", unit=_SB),
    _c("n_pix", "INTEGER"),
)

#: Table name -> (columns after the frame key, one row per frame?). These hold a frame's results
#: and are replaced as a whole when the frame is measured again.
RESULT_TABLES = {
    "geometry": (GEOMETRY_COLUMNS, True),
    "zero_points": (ZERO_POINT_COLUMNS, True),
    "stars": (STAR_COLUMNS, False),
    "measurements": (MEASUREMENT_COLUMNS, False),
    "nucleus": (NUCLEUS_COLUMNS, True),
    "astrometry": (ASTROMETRY_COLUMNS, True),
    "profiles": (PROFILE_COLUMNS, False),
}

#: Bookkeeping tables with their columns (in export order).
TABLES = {
    "runs": (
        _c("run", "INTEGER"), _c("started", "TEXT"), _c("ended", "TEXT"), _c("status", "TEXT"),
        _c("config_hash", "TEXT"), _c("software_version", "TEXT"), _c("host", "TEXT"),
        _c("config_text", "TEXT"),
    ),
    "frames": (
        _c("night", "TEXT"), _c("frame", "TEXT"), _c("path", "TEXT"),
        _c("content_hash", "TEXT", description="sha256 of the file's bytes"), _c("kind", "TEXT"),
        _c("mjd_utc_mid", description="mid-exposure time, MJD (UTC)"), _c("filter", "TEXT"),
        _c("exptime_s", unit=u.s), _c("site", "TEXT"),
    ),
    "calibrations": (
        _c("night", "TEXT"), _c("kind", "TEXT"), _c("filter", "TEXT"),
        _c("exptime_s", unit=u.s), _c("n_inputs", "INTEGER"), _c("path", "TEXT"),
        _c("content_hash", "TEXT"),
    ),
    "skipped": (
        _c("night", "TEXT"), _c("item", "TEXT"), _c("stage", "TEXT"), _c("reason", "TEXT"),
        _c("run", "INTEGER"),
    ),
}


#: Column name -> human label (the unit is added from the column's unit).
LABELS = {
    "frame": "frame", "night": "night", "mjd_utc_mid": "mid-exposure time (MJD, UTC)",
    "filter": "filter", "exptime_s": "exposure time", "airmass": "airmass",
    "zp_mag": "zero point", "zp_err_mag": "zero-point error", "n_stars": "reference stars",
    "x_pix": "comet x", "y_pix": "comet y", "ra_deg": "right ascension",
    "dec_deg": "declination", "r_h_au": "heliocentric distance r_h",
    "delta_au": "geocentric distance Δ", "phase_deg": "phase angle",
    "elong_deg": "solar elongation", "rho_km": "aperture radius ρ",
    "rho_arcsec": "aperture radius on the sky", "mag": "magnitude in the aperture",
    "mag_err": "magnitude error", "afrho_cm": "Afρ", "afrho_err_cm": "Afρ error",
    "a0frho_cm": "A(0°)fρ", "a0frho_err_cm": "A(0°)fρ error",
    "coma_slope": "coma slope d ln Σ / d ln ρ",
    "coma_slope_err": "coma slope error", "coma_apcorr_mag": "coma aperture correction",
    "nucleus_share": "nucleus share of the aperture", "afrho_coma_cm": "Afρ of the coma",
    "afrho_coma_err_cm": "Afρ of the coma, error", "a0frho_coma_cm": "A(0°)fρ of the coma",
    "a0frho_coma_err_cm": "A(0°)fρ of the coma, error", "flags": "flags",
    "nucleus_mag": "nucleus magnitude", "nucleus_mag_err": "nucleus magnitude error",
    "nucleus_flux_e_s": "nucleus flux", "coma_k": "coma brightness K", "coma_gamma":
    "coma index γ", "fwhm_arcsec": "PSF FWHM (nucleus fit)",
    "gauss_fwhm_arcsec": "star FWHM (Gaussian core)", "nucleus_fraction": "nucleus fraction",
    "chi2_red": "reduced χ²", "method": "method", "colour_term": "colour term",
    "colour_term_err": "colour-term error", "n_rejected": "stars rejected",
    "rms_mag": "star residual rms", "band": "band", "aperture_correction":
    "aperture correction", "light_time_s": "light time",
    "x_err_pix": "comet x error", "y_err_pix": "comet y error",
    "ra_err_arcsec": "RA cos(Dec) error", "dec_err_arcsec": "declination error",
    "radec_corr": "RA-Dec error correlation", "centroid_err_arcsec": "centroid error",
    "plate_err_arcsec": "plate-solution error at the comet",
    "star_rms_arcsec": "reference-star rms about the WCS", "n_ref_stars": "stars in the WCS fit",
    "stn": "station", "object": "object", "ast_cat": "reference catalogue",
    "sb_e_s_arcsec2": "surface brightness Σ", "sb_sun_e_s_arcsec2": "Σ, sunward sector",
    "sb_tail_e_s_arcsec2": "Σ, tailward sector",
}


def column_label(name):
    """Human label of a column with its unit, from the schema (the name itself if unknown).

    Examples
    --------
    >>> column_label("r_h_au")
    'heliocentric distance r_h (au)'
    >>> column_label("coma_gamma")
    'coma index γ'
    """
    label = LABELS.get(name, name)
    unit = None
    for columns, _ in RESULT_TABLES.values():
        for col in columns:
            if col.name == name and col.unit is not None:
                unit = col.unit
                break
        if unit is not None:
            break
    if unit is None:
        return label
    text = "au" if unit == u.au else unit.to_string()
    return f"{label} ({text})"


def column_unit(table, name):
    """Return the unit of column ``name`` of ``table`` (None when it has none).

    Examples
    --------
    >>> column_unit("measurements", "rho_km")
    Unit("km")
    """
    columns = RESULT_TABLES[table][0] if table in RESULT_TABLES else TABLES[table]
    for col in columns:
        if col.name == name:
            return col.unit
    msg = f"table {table!r} has no column {name!r}"
    raise KeyError(msg)


def column_names(columns, *, stage=None):
    """Names of ``columns`` in order, only those ``stage`` makes when it is given.

    Examples
    --------
    >>> column_names(NUCLEUS_COLUMNS)[:3]
    ('mjd_utc_mid', 'nucleus_mag', 'nucleus_mag_err')
    >>> column_names(MEASUREMENT_COLUMNS, stage="nucleus")[:2]
    ('nucleus_share', 'afrho_coma_cm')
    """
    return tuple(c.name for c in columns if stage is None or c.stage == stage)


def stage_names(table):
    """Stage column -> stored column, for the columns of ``table`` that the frame task renames.

    Examples
    --------
    >>> stage_names("geometry")["r_h"]
    'r_h_au'
    >>> stage_names("stars")["id"], stage_names("stars")["used"]
    ('star_id', 'used')
    """
    columns = RESULT_TABLES[table][0]
    return {c.source or c.name: c.name for c in columns}


def table_unit(column):
    """The unit a stage's table carries for ``column``: the schema's, or day for an MJD.

    The store keeps a time stamp as a plain MJD (no unit in the schema); in the stages' tables
    it is a Quantity in days. Text and plain numbers have None.

    Parameters
    ----------
    column : Column

    Examples
    --------
    >>> table_unit(NUCLEUS_COLUMNS[0]), table_unit(NUCLEUS_COLUMNS[1])
    (Unit("d"), Unit("mag"))
    """
    if column.name.startswith("mjd_"):
        return u.day
    return column.unit
