"""Every section and key a photpipe configuration may hold, with its default (written once here).

To add a key: add a `Key` to its section below, a field to the section's settings dataclass in
`photpipe.config.settings`, and a line in ``configs/demo.toml`` (a test checks all three agree).
To add a section: add a `Section` to `SECTIONS` and a reader beside the others.
"""

from dataclasses import dataclass

from ._keys import Key

__all__ = ["Section", "SECTIONS", "section_spec"]


@dataclass(frozen=True)
class Section:
    """One configuration section.

    Attributes
    ----------
    name : str
        As written in the file (``"photometry"``, ``"target.orbit"``, ``"sites"``).
    keys : tuple of Key
    doc : str
    named : bool
        The section is a table of named tables (``[sites.NAME]``); the keys are those of each.
    array : bool
        The section is an array of tables (``[[night]]``).
    """

    name: str
    keys: tuple
    doc: str = ""
    named: bool = False
    array: bool = False

    def key(self, name):
        """The `Key` called ``name`` (KeyError when unknown)."""
        for key in self.keys:
            if key.name == name:
                return key
        raise KeyError(name)

    @property
    def key_names(self):
        """Names of the keys, in order."""
        return tuple(k.name for k in self.keys)


_NUMBERS_KM = dict(kind="numbers", unit="km", low=0.0)

CAMPAIGN = Section("campaign", (
    Key("name", "text", "unnamed campaign", "the campaign's name, shown in the report"),
    Key("results", "path", "results", "folder every output goes below"),
    Key("store", "path", None, "the campaign store (default <results>/campaign.sqlite)"),
), "the campaign's name and where its results go")

NIGHT = Section("night", (
    Key("path", "path", None, "a folder of frames, or a glob such as raw/*.fits.fz"),
    Key("site", "text", None, "a [sites.NAME] key (default: no site, the Earth's centre)"),
    Key("name", "text", None, "the night's name (default: its folder's name)"),
    Key("instrument", "text", None, "an [instruments.NAME] key for frames whose header names "
        "no configured camera"),
), "one entry per night of frames", array=True)

SITES = Section("sites", (
    Key("longitude_deg", "number", None, "east positive", unit="deg", low=-180.0, high=360.0,
        low_open=False),
    Key("latitude_deg", "number", None, "north positive", unit="deg", low=-90.0, high=90.0,
        low_open=False),
    Key("height_m", "number", None, "above the WGS84 ellipsoid", unit="m", low=-500.0,
        high=9000.0, low_open=False),
), "observing sites, one [sites.NAME] table each", named=True)

FRAMES = Section("frames", (
    Key("type_keyword", "text", "IMAGETYP", "header keyword that says what a frame is"),
    Key("bias", "texts", None, "header values meaning a bias (default: the usual names)"),
    Key("dark", "texts", None, "header values meaning a dark (default: the usual names)"),
    Key("flat", "texts", None, "header values meaning a flat (default: the usual names)"),
    Key("science", "texts", None, "header values meaning a science frame (default: the usual "
        "names)"),
    Key("detect_cosmics", "boolean", True, "find and mask cosmic-ray hits"),
    Key("cosmic_method", "text", "lacosmic", "cosmic-ray finder", choices=("lacosmic", "none")),
    Key("max_saturated_fraction", "number", 0.5, "skip a frame with more saturated pixels than "
        "this fraction", low=0.0, high=1.0),
    Key("method", "text", "clipped_mean", "how calibration frames are combined",
        choices=("clipped_mean", "median")),
    Key("sigma", "number", 3.0, "clipping threshold of the combination", low=0.0),
    Key("maxiters", "integer", 5, "clipping passes of the combination", low=1, low_open=False),
    Key("require_dark", "boolean", False, "skip science frames that have no matching dark"),
), "frame types and calibration")

_KEYWORDS = "header keywords holding the {} (default: the usual names)"

INSTRUMENTS = Section("instruments", (
    Key("match_keyword", "text", "INSTRUME", "header keyword that names the camera"),
    Key("match_values", "texts", None, "values of match_keyword that mean this camera"),
    Key("gain", "number", None, "detector gain (default: the header's)", unit="electron/adu",
        low=0.0),
    Key("read_noise", "number", None, "read noise (default: the header's)", unit="electron",
        low=0.0, low_open=False),
    Key("saturation", "number", None, "raw saturation level (default: the header's, else the "
        "integer type's full scale)", unit="adu", low=0.0),
    Key("pixel_scale_arcsec", "number", None, "sky size of one unbinned pixel, for plate "
        "solving (default: the header's)", unit="arcsec", low=0.0),
    Key("trim_section", "text", None, "image area as a FITS section '[x1:x2,y1:y2]' (1-based, "
        "inclusive; default: the header's TRIMSEC, else DATASEC)"),
    Key("overscan_section", "text", None, "overscan strip as a FITS section, its median taken "
        "off each frame (default: the header's BIASSEC)"),
    Key("trust_header", "texts", (), "values where the header wins over the ones above",
        choices=("gain", "read_noise", "saturation")),
    Key("time_reference", "text", "start", "the time keywords give the exposure's start or "
        "middle", choices=("start", "middle")),
    Key("exptime_keywords", "texts", None, _KEYWORDS.format("exposure time")),
    Key("date_keywords", "texts", None, _KEYWORDS.format("date (and time)")),
    Key("time_keywords", "texts", None, _KEYWORDS.format("time of a date-only DATE-OBS")),
    Key("mjd_keywords", "texts", None, _KEYWORDS.format("MJD")),
    Key("jd_keywords", "texts", None, _KEYWORDS.format("JD")),
    Key("filter_keywords", "texts", None, _KEYWORDS.format("filter")),
    Key("binning_keywords", "texts", None, "header keywords of the x and y binning (default "
        "XBINNING, YBINNING)"),
    Key("type_keyword", "text", None, "frame-type keyword (default [frames] type_keyword)"),
    Key("bias", "texts", None, "frame-type values meaning a bias (default [frames])"),
    Key("dark", "texts", None, "frame-type values meaning a dark (default [frames])"),
    Key("flat", "texts", None, "frame-type values meaning a flat (default [frames])"),
    Key("science", "texts", None, "frame-type values meaning a science frame (default "
        "[frames])"),
), "cameras, one [instruments.NAME] table each", named=True)

FILTERS = Section("filters", (
    Key("band", "text", None, "catalogue magnitude column this filter calibrates on"),
    Key("solar_band", "text", None, "band of the Sun's magnitude for Afρ (default: band)"),
), "FILTER header values, one [filters.NAME] table each (none: every frame uses "
   "[photometry] band)", named=True)

CATALOGUE = Section("catalogue", (
    Key("ra", "text", "ra", "column of the right ascension (deg)"),
    Key("dec", "text", "dec", "column of the declination (deg)"),
    Key("id", "text", None, "column of the star names"),
    Key("magnitudes", "text_table", None, "band -> magnitude column (default: columns named "
        "after the bands)"),
    Key("errors", "text_table", None, "band -> magnitude error column (default <band>_err)"),
    Key("colour_column", "text", None, "column of the [photometry] colour (default: its name)"),
), "column names of the reference-star catalogue")

TARGET = Section("target", (
    Key("name", "text", "", "the target's name"),
    Key("ephemeris_table", "path", None, "an ephemeris table (ECSV or CSV) used instead of the "
        "orbit"),
), "the target")

ORBIT = Section("target.orbit", (
    Key("q_au", "number", None, "perihelion distance", unit="AU", low=0.0),
    Key("e", "number", None, "eccentricity (hyperbolic above 1)", low=0.0, low_open=False),
    Key("i_deg", "number", None, "inclination", unit="deg", low=0.0, high=180.0,
        low_open=False),
    Key("node_deg", "number", None, "longitude of the ascending node", unit="deg"),
    Key("peri_deg", "number", None, "argument of perihelion", unit="deg"),
    Key("perihelion_time", "time", None, "time of perihelion, TDB"),
    Key("a_au", "number", None, "semi-major axis (with mean_anomaly_deg and epoch, ellipses "
        "only)", unit="AU", low=0.0),
    Key("mean_anomaly_deg", "number", None, "mean anomaly at epoch", unit="deg"),
    Key("epoch", "time", None, "epoch of the mean anomaly, TDB"),
), "heliocentric ecliptic J2000 osculating elements")

GEOMETRY = Section("geometry", (
    Key("ephemeris", "text", "builtin", 'planet positions: "builtin" (astropy) or "de421"'),
    Key("caution_elongation_deg", "number", 20.0, "below this solar elongation, print the Sun "
        "caution", unit="deg", low=0.0, high=180.0, low_open=False),
), "observing geometry")

PHOTOMETRY = Section("photometry", (
    Key("reference_stars", "path", None, "reference-star catalogue (ECSV, CSV or FITS table)"),
    Key("reference_store", "path", None, "HEALPix index of the stars, built once (default "
        "<results>/reference_store.npz)"),
    Key("band", "text", "R", "catalogue magnitude column the zero point uses"),
    Key("colour", "text", "B-V", "catalogue colour column for the colour term"),
    Key("fit_colour_term", "boolean", False, "fit a colour term in the zero point"),
    Key("comet_colour", "number", None, "the comet's colour in `colour` (default: the Sun's)",
        unit="mag"),
    Key("mag_system", "text", "Vega", "system of the catalogue magnitudes",
        choices=("Vega", "AB")),
    Key("apertures_km", default=(5000.0, 10000.0, 20000.0),
        doc="aperture radii at the comet", **_NUMBERS_KM),
    Key("apertures_arcsec", "numbers", (5.0, 10.0), "aperture radii on the sky", unit="arcsec",
        low=0.0),
    Key("annulus_km", "pair", None, "sky annulus radii at the comet (default 4 and 8 times the "
        "largest aperture)", unit="km", low=0.0),
    Key("annulus_arcsec", "pair", None, "sky annulus radii on the sky (instead of annulus_km)",
        unit="arcsec", low=0.0),
    Key("sky_method", "text", "coma-fit", "sky estimator in the annulus",
        choices=("coma-fit", "median")),
    Key("dust_phase_function", "text", "schleicher-marcus", "phase function of A(0)fρ",
        choices=("schleicher-marcus", "linear", "table")),
    Key("phase_coefficient_mag_per_deg", "number", None, 'dust phase coefficient of the '
        '"linear" law (default: the law\'s own)', unit="mag/deg"),
    Key("phase_function_table", "path", None, 'table of the "table" law: phase (deg), value'),
    Key("profile_slope_range_km", "pair", (2000.0, 20000.0), "radii over which the coma "
        "profile slope is fitted", unit="km", low=0.0),
    Key("min_stars", "integer", 5, "fewest reference stars for a zero point", low=1,
        low_open=False),
    Key("detect_threshold", "number", 5.0, "star detection threshold (sigma)", low=0.0),
    Key("coma_correction", "boolean", True, "correct small apertures for coma light the seeing "
        "spreads out"),
    Key("airmass_formula", "text", "kasten-young", "airmass when the header has none",
        choices=("kasten-young", "pickering")),
    Key("plate_solve", "text", "always", 'plate-solve frames from the catalogue: "always" (a '
        'header WCS is checked and replaced), "missing" (only frames without a WCS), "never"',
        choices=("never", "missing", "always")),
    Key("plate_max_offset_arcmin", "number", 16.0, "largest pointing error the plate solution "
        "searches", unit="arcmin", low=0.0),
), "comet and star photometry")

NUCLEUS = Section("nucleus", (
    Key("gamma", "number_or_free", "free", 'coma power-law index: "free" or a number (1 = '
        'steady state)', low=0.0),
    Key("cutout_pix", "integer", 101, "side of the fitted cutout", unit="pix", low=5,
        low_open=False),
    Key("bootstrap", "integer", 0, "0: errors from the fit covariance; 30-50: bootstrap refits",
        low=0, low_open=False),
    Key("modulation", "integer", 0, "azimuthal harmonics of the coma model", low=0,
        low_open=False),
    Key("max_shift_pix", "number", 2.0, "largest nucleus shift from the photometric centroid",
        unit="pix", low=0.0),
    Key("detection_sigma", "number", 3.0, "a nucleus fainter than this many sigma is an upper "
        "limit", low=0.0),
    Key("profile", "boolean", True, "also fit the 1-D radial profile as a check"),
    Key("tracking", "text", "sidereal", '"sidereal": the comet trails; "comet": the stars '
        "trail (the orbit's rate times the exposure; the photometry measures them along it); "
        '"none": motion not modelled', choices=("sidereal", "comet", "none")),
    Key("tracking_check", "boolean", True, "let a TRACKING header value, else the field stars' "
        "shapes, override `tracking` frame by frame where they decide; the frames of a night "
        "then share the mode most of them give, unless a frame's own evidence is strong"),
    Key("psf_cutout_pix", "integer", 25, "side of the star stamps of the PSF", unit="pix",
        low=3, low_open=False),
    Key("psf_min_stars", "integer", 5, "fewest stars for a measured PSF", low=1,
        low_open=False),
    Key("psf_methods", "texts", ("moffat", "epsf"), "PSF models tried",
        choices=("moffat", "epsf")),
    Key("psf_epsf", "text", "needed", '"needed": ePSF only where the Moffat misfits; "always"',
        choices=("needed", "always")),
), "nucleus + coma fit")

ROTATION = Section("rotation", (
    Key("phase_law", "text", "linear", 'nucleus phase law: "linear" or "hg"'),
    Key("phase_coefficient_mag_per_deg", "number", 0.035, "linear nucleus phase coefficient "
        "(common practice)", unit="mag/deg"),
    Key("hg_slope", "number", 0.15, "G of the H,G law"),
    Key("min_period_h", "number", 2.0, "shortest period searched", unit="h", low=0.0),
    Key("max_period_h", "number", 60.0, "longest period searched", unit="h", low=0.0),
    Key("methods", "texts", ("lomb-scargle", "fourier", "pdm"), "period-search methods"),
    Key("n_bootstrap", "integer", 100, "bootstrap resamples for the period error", low=0,
        low_open=False),
    Key("seed", "integer", 0, "seed of the bootstrap draws"),
    Key("oversample", "integer", 10, "frequency-grid oversampling", low=1, low_open=False),
    Key("max_order", "integer", 4, "most Fourier harmonics", low=1, low_open=False),
    Key("order_criterion", "text", "bic", "how the Fourier order is chosen"),
    Key("lomb_scargle_nterms", "integer", 2, "Lomb-Scargle terms", low=1, low_open=False),
    Key("pdm_bins", "integer", 10, "phase bins of PDM", low=2, low_open=False),
    Key("pdm_covers", "integer", 2, "shifted bin covers of PDM", low=1, low_open=False),
    Key("prefer_double_peaked", "boolean", True, "take the double-peaked period when the data "
        "cannot tell"),
    Key("use_points", "text", "auto", "which points the search uses",
        choices=("auto", "coma-free", "all")),
    Key("coma_fraction", "number", None, "largest coma share of a usable point (default: the "
        "search's own)", low=0.0, high=1.0, low_open=False),
    Key("amplitude_phase_slope_per_deg", "number", 0.015, "amplitude growth with phase angle "
        "(Zappalà et al. 1990)", unit="1/deg", low=0.0, low_open=False),
    Key("alias_delta_chi2", "number", 10.0, "a rival period closer than this in chi2 makes the "
        "period ambiguous", low=0.0),
    Key("fap_limit", "number", 0.01, "above this false-alarm probability there is no period",
        low=0.0, high=1.0),
), "rotation-period search")

SIZE = Section("size", (
    Key("band", "text", None, "band of the magnitudes (default [photometry] band)"),
    Key("phase_coefficient_mag_per_deg", "number", None, "nucleus phase coefficient (default "
        "[rotation] phase_coefficient_mag_per_deg)", unit="mag/deg"),
    Key("albedo", "number", 0.04, "geometric albedo assumed for the nucleus (common practice)",
        low=0.0, high=1.0),
    Key("albedo_range", "pair", None, "albedo range drawn in the Monte Carlo (default: the "
        "albedo alone)", low=0.0, high=1.0),
    Key("albedo_prior", "text", "uniform", "albedo draws", choices=("uniform", "log-uniform")),
    Key("density_range_g_cm3", "pair", (0.3, 1.0), "bulk density range", unit="g/cm3",
        low=0.0),
    Key("mass_loss_kg_s", "number", None, "gas mass-loss rate", unit="kg/s", low=0.0),
    Key("mass_loss_r_h_au", "number", None, "r_h where that rate holds (default: the "
        "lightcurve's median)", unit="AU", low=0.0),
    Key("outflow_speed_m_s", "number", None, "gas outflow speed", unit="m/s", low=0.0),
    Key("nongrav_accel_limit_m_s2", "number", None, "upper limit on the non-gravitational "
        "acceleration", unit="m/s2", low=0.0),
    Key("nongrav_accel_limit_m_day2", "number", None, "the same limit in m/day2 (give one)",
        unit="m/day2", low=0.0),
    Key("nongrav_accel_limit_au_day2", "number", None, "the same limit in AU/day2 (give one)",
        unit="AU/day2", low=0.0),
    Key("momentum_efficiency", "number", 1.0, "share of the outflow momentum along the Sun line",
        low=0.0, high=1.0),
    Key("composition", "number_table", None, "mass fractions of the sublimating ices"),
    Key("sublimation_geometry", "text", "subsolar", "energy-balance geometry",
        choices=("subsolar", "rapid-rotator", "isothermal", "sunlit-hemisphere")),
    Key("bond_albedo", "number", 0.01, "Bond albedo in the energy balance", low=0.0, high=1.0,
        low_open=False),
    Key("emissivity", "number", 0.9, "emissivity in the energy balance", low=0.0, high=1.0),
    Key("m_sun", "number", None, "the Sun's magnitude in the band (default: the table's)",
        unit="mag"),
    Key("n_samples", "integer", 100_000, "Monte Carlo draws", low=100, low_open=False),
    Key("seed", "integer", 20261202, "seed of the Monte Carlo draws"),
    Key("phase_coefficient_range", "pair", (0.02, 0.06), "nucleus phase coefficients drawn in "
        "the Monte Carlo (Jupiter-family nuclei)", unit="mag/deg", low=0.0, low_open=False),
    Key("phase_fit_min_span_deg", "number", 5.0, "least phase-angle span for fitting the "
        "phase coefficient", unit="deg", low=0.0),
    Key("h_err_limit_mag", "number", 0.3, "a radius whose H error exceeds this is flagged "
        "h_error_large", unit="mag", low=0.0),
    Key("min_detections", "integer", 5, "fewest frames detecting the nucleus for a radius",
        low=1, low_open=False),
    Key("min_detected_fraction", "number", 0.5, "least share of frames detecting the nucleus "
        "for a radius", low=0.0, high=1.0, low_open=False),
), "nucleus radius and mass")

ACTIVITY = Section("activity", (
    Key("outburst_sigma", "number", 5.0, "a night this many sigma above the trend may be an "
        "outburst", low=0.0),
    Key("jump_sigma", "number", 3.0, "rise from the night before, in sigma", low=0.0),
    Key("quiet_sigma", "number", 2.0, "a night within this many sigma is quiet", low=0.0),
    Key("max_false_alarm", "number", 0.01, "campaign-wide false-alarm chance of an outburst",
        low=0.0, high=1.0),
    Key("fit_method", "text", "scatter", "trend fit", choices=("scatter", "clip", "robust")),
    Key("aperture_km", "number", None, "aperture of the trend (default: the most measured, "
        "ties nearest 10 000 km)", unit="km", low=0.0),
    Key("afrho_column", "text", "a0frho_coma_cm", "quantity of the trend and outburst "
        "searches (coma-only columns fall back to the total, flagged, where missing)",
        choices=("a0frho_coma_cm", "afrho_coma_cm", "a0frho_cm", "afrho_cm")),
    Key("night_max_false_alarm", "number", 0.001, "within-night search: chance that a quiet "
        "night gives a claim", low=0.0, high=1.0),
    Key("night_min_frames", "integer", 8, "within-night search: fewest frames a night needs",
        low=4, low_open=False),
    Key("night_gap_h", "number", 6.0, "frames further apart than this are two nights",
        unit="h", low=0.0),
    Key("exclude_flags", "texts", ("upper_limit", "saturated"), "rows with these flags are left "
        "out"),
    Key("perihelion_time", "time", None, "splits the trend (default [target.orbit] "
        "perihelion_time), TDB"),
), "activity trend and outbursts")

RUN = Section("run", (
    Key("workers", "integer", 1, "local worker processes (0: in this process)", low=0,
        low_open=False),
    Key("scheduler", "text", None, "address of an existing Dask scheduler, e.g. "
        "tcp://host:8786"),
), "where the frame tasks run")

#: Section name -> Section, in the order configs/demo.toml lists them.
SECTIONS = {s.name: s for s in (CAMPAIGN, NIGHT, SITES, FRAMES, INSTRUMENTS, FILTERS,
                                 CATALOGUE, TARGET, ORBIT, GEOMETRY, PHOTOMETRY, NUCLEUS,
                                 ROTATION, SIZE, ACTIVITY, RUN)}


def section_spec(name):
    """The `Section` called ``name`` (``"target.orbit"`` for the orbit)."""
    return SECTIONS[name]
