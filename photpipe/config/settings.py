"""One reader per configuration section, each returning a frozen settings object with units.

Every reader takes a configuration from `photpipe.config.load_config` (or a plain dict of
sections, as in the examples), checks the section with the one rule of
`photpipe.config._keys.check_value`, fills the defaults written in
`photpipe.config._sections` and puts the units on. Stages never call these: the campaign and the
commands do, and pass the settings' values to the stages as plain keyword values.
"""

from dataclasses import dataclass, fields
from pathlib import Path

import numpy as np
from astropy import units as u

from ._errors import ConfigError
from ._keys import check_value, nearest
from ._sections import SECTIONS

__all__ = [
    "section_values", "CampaignSettings", "read_campaign", "RunSettings", "read_run",
    "FrameSettings", "read_frames", "PhotometrySettings", "read_photometry",
    "NucleusSettings", "read_nucleus", "RotationSettings", "read_rotation", "SizeSettings",
    "read_size", "ActivitySettings", "read_activity", "GeometrySettings", "read_geometry",
]


def _file(config):
    return config.get("_file", "configuration")


def section_values(config, name, table=None, *, label=None):
    """The checked values of one section with every default filled (a dict key -> value).

    Parameters
    ----------
    config : dict
        A loaded configuration (only ``_file`` is used when ``table`` is given).
    name : str
        The section (a key of `~photpipe.config._sections.SECTIONS`).
    table : dict, optional
        The section's table (default ``config[name]``; ``target.orbit`` is found inside
        ``target``).
    label : str, optional
        How the messages name the section (default ``[name]``).

    Raises
    ------
    ConfigError
        An unknown key (with the nearest known one) or a bad value.

    Examples
    --------
    >>> section_values({"photometry": {"min_stars": 4}}, "photometry")["min_stars"]
    4
    """
    spec = SECTIONS[name]
    if table is None:
        table = config
        for part in name.split("."):
            table = (table or {}).get(part) or {}
    label = label or f"[{name}]"
    here = f"{_file(config)}: {label}"
    children = {n.split(".")[-1] for n in SECTIONS if n.startswith(f"{name}.")}
    values = {}
    for key, value in table.items():
        if key in children:
            continue
        if key not in spec.key_names:
            guess = nearest(key, spec.key_names)
            hint = f"; did you mean {guess!r}?" if guess else ""
            msg = f"{here} {key}: unknown key{hint}"
            raise ConfigError(msg)
        values[key] = check_value(spec.key(key), value, here)
    return {key.name: values.get(key.name, key.default) for key in spec.keys}


def _fill(cls, values, **extra):
    names = {f.name for f in fields(cls)}
    return cls(**{k: v for k, v in {**values, **extra}.items() if k in names})


# -- campaign and run ------------------------------------------------------------------------

@dataclass(frozen=True)
class CampaignSettings:
    """``[campaign]``: the campaign's name, results folder and store."""

    name: str
    results: Path
    store: Path


def read_campaign(config):
    """Read ``[campaign]``.

    Examples
    --------
    >>> read_campaign({"campaign": {"results": "/r"}}).store.as_posix()
    '/r/campaign.sqlite'
    """
    v = section_values(config, "campaign")
    results = Path(v["results"])
    store = Path(v["store"]) if v["store"] else results / "campaign.sqlite"
    return CampaignSettings(name=v["name"], results=results, store=store)


@dataclass(frozen=True)
class RunSettings:
    """``[run]``: where the frame tasks run."""

    workers: int
    scheduler: str | None


def read_run(config):
    """Read ``[run]``.

    Examples
    --------
    >>> read_run({"run": {"workers": 2}})
    RunSettings(workers=2, scheduler=None)
    """
    return _fill(RunSettings, section_values(config, "run"))


# -- frames ----------------------------------------------------------------------------------

@dataclass(frozen=True)
class FrameSettings:
    """``[frames]``: how frames are classified, combined into masters and calibrated."""

    kind_map: object
    detect_cosmics: bool
    cosmic_method: str
    max_saturated_fraction: float
    method: str
    sigma: float
    maxiters: int
    require_dark: bool

    def calibration_options(self):
        """Keyword values of `~photpipe.frames.calibrate_frame`."""
        return {"detect_cosmics": self.detect_cosmics, "cosmic_method": self.cosmic_method,
                "max_saturated_fraction": self.max_saturated_fraction}

    def master_options(self):
        """Keyword values of `~photpipe.frames.build_masters`."""
        return {"method": self.method, "sigma": self.sigma, "maxiters": self.maxiters}


def read_frames(config):
    """Read ``[frames]``; the frame-type lists become a `~photpipe.frames.KindMap`.

    Examples
    --------
    >>> read_frames({"frames": {"science": ["light"]}}).kind_map.classify("LIGHT")
    'science'
    """
    from photpipe.frames import kind_map_from_mapping

    v = section_values(config, "frames")
    mapping = {"type_keyword": v["type_keyword"]}
    mapping.update({k: list(v[k]) for k in ("bias", "dark", "flat", "science")
                    if v[k] is not None})
    try:
        kind_map = kind_map_from_mapping(mapping)
    except (TypeError, ValueError) as exc:
        msg = f"{_file(config)}: [frames]: {exc}"
        raise ConfigError(msg) from exc
    return _fill(FrameSettings, v, kind_map=kind_map)


# -- photometry and nucleus ------------------------------------------------------------------

@dataclass(frozen=True)
class PhotometrySettings:
    """``[photometry]``: the comet and star photometry of each frame, with units."""

    reference_stars: str | None
    reference_store: str | None
    band: str
    colour: str
    fit_colour_term: bool
    comet_colour: float | None
    mag_system: str
    apertures_km: u.Quantity
    apertures_arcsec: u.Quantity
    annulus: tuple | None
    sky_method: str
    dust_phase_function: str
    phase_coefficient: u.Quantity | None
    phase_function_table: tuple | None
    profile_slope_range_km: u.Quantity
    min_stars: int
    detect_threshold: float
    coma_correction: bool
    airmass_formula: str
    plate_solve: str
    plate_max_offset: u.Quantity

    def options(self):
        """Keyword values of `~photpipe.photometry.measure_comet_frame`."""
        skip = {"reference_stars", "reference_store", "plate_solve", "plate_max_offset"}
        return {f.name: getattr(self, f.name) for f in fields(self) if f.name not in skip}


def _phase_table(config, path):
    from astropy.table import Table

    try:
        t = Table.read(path)
    except Exception as exc:  # noqa: BLE001 - astropy raises many kinds for an unreadable table
        msg = f"{_file(config)}: [photometry] phase_function_table: {path}: cannot be read ({exc})"
        raise ConfigError(msg) from exc
    if len(t.colnames) < 2:
        msg = (f"{_file(config)}: [photometry] phase_function_table: {path}: needs two columns "
               "(phase in deg, value)")
        raise ConfigError(msg)
    return (np.asarray(t[t.colnames[0]], float), np.asarray(t[t.colnames[1]], float))


def read_photometry(config, *, tables=True):
    """Read ``[photometry]``.

    Parameters
    ----------
    config : dict
    tables : bool, optional
        Read the phase-function table file now (False leaves it None).

    Examples
    --------
    >>> s = read_photometry({"photometry": {"apertures_km": [5000.0], "min_stars": 4}})
    >>> s.apertures_km, s.min_stars, s.coma_correction
    (<Quantity [5000.] km>, 4, True)
    """
    v = section_values(config, "photometry")
    if v["annulus_km"] is not None and v["annulus_arcsec"] is not None:
        msg = f"{_file(config)}: [photometry] annulus_arcsec: give annulus_km or annulus_arcsec"
        raise ConfigError(msg)
    annulus = None
    if v["annulus_km"] is not None:
        annulus = tuple(x * u.km for x in v["annulus_km"])
    elif v["annulus_arcsec"] is not None:
        annulus = tuple(x * u.arcsec for x in v["annulus_arcsec"])
    beta = v["phase_coefficient_mag_per_deg"]
    table = v["phase_function_table"]
    return _fill(
        PhotometrySettings, v,
        apertures_km=np.array(v["apertures_km"]) * u.km,
        apertures_arcsec=np.array(v["apertures_arcsec"]) * u.arcsec, annulus=annulus,
        phase_coefficient=None if beta is None else beta * u.mag / u.deg,
        plate_max_offset=v["plate_max_offset_arcmin"] * u.arcmin,
        phase_function_table=_phase_table(config, table) if table and tables else None,
        profile_slope_range_km=np.array(v["profile_slope_range_km"]) * u.km)


@dataclass(frozen=True)
class NucleusSettings:
    """``[nucleus]``: the nucleus + coma fit and the PSF it uses."""

    gamma: float | str
    cutout: int
    bootstrap: int
    modulation: int
    max_shift: float
    detection_sigma: float
    profile: bool
    tracking: str
    tracking_check: bool
    psf_cutout: int
    psf_min_stars: int
    psf_methods: tuple
    psf_epsf: str

    def fit_options(self):
        """Keyword values of `~photpipe.nucleus.fit_nucleus`.

        ``tracking`` is not one: the frame task turns it into the comet's and the stars'
        trails (`~photpipe.nucleus.exposure_trails`).
        """
        return {"gamma": self.gamma, "cutout": self.cutout, "bootstrap": self.bootstrap,
                "modulation": self.modulation, "max_shift": self.max_shift,
                "detection_sigma": self.detection_sigma, "profile": self.profile}

    def psf_options(self):
        """Keyword values of `~photpipe.nucleus.measure_psf`."""
        return {"cutout": self.psf_cutout, "min_stars": self.psf_min_stars,
                "methods": self.psf_methods, "epsf": self.psf_epsf}


def read_nucleus(config):
    """Read ``[nucleus]``.

    Examples
    --------
    >>> read_nucleus({"nucleus": {"gamma": 1.0}}).fit_options()["gamma"]
    1.0
    """
    v = section_values(config, "nucleus")
    return NucleusSettings(
        gamma=v["gamma"], cutout=v["cutout_pix"], bootstrap=v["bootstrap"],
        modulation=v["modulation"], max_shift=v["max_shift_pix"],
        detection_sigma=v["detection_sigma"], profile=v["profile"], tracking=v["tracking"],
        tracking_check=v["tracking_check"], psf_cutout=v["psf_cutout_pix"],
        psf_min_stars=v["psf_min_stars"], psf_methods=v["psf_methods"], psf_epsf=v["psf_epsf"])


# -- campaign steps --------------------------------------------------------------------------

@dataclass(frozen=True)
class RotationSettings:
    """``[rotation]``: the lightcurve reduction and period search."""

    phase_law: str
    phase_coefficient: u.Quantity
    hg_slope: float
    min_period: u.Quantity
    max_period: u.Quantity
    methods: tuple
    n_bootstrap: int
    seed: int
    oversample: int
    max_order: int
    order_criterion: str
    lomb_scargle_nterms: int
    pdm_bins: int
    pdm_covers: int
    prefer_double_peaked: bool
    use_points: str
    coma_fraction: float | None
    amplitude_phase_slope: u.Quantity
    alias_delta_chi2: float = 10.0
    fap_limit: float = 0.01

    def search_options(self):
        """Keyword values of `~photpipe.rotation.search_rotation` (``rng`` from the seed)."""
        return {"min_period": self.min_period, "max_period": self.max_period,
                "methods": self.methods, "n_bootstrap": self.n_bootstrap,
                "rng": np.random.default_rng(self.seed), "oversample": self.oversample,
                "max_order": self.max_order, "order_criterion": self.order_criterion,
                "ls_nterms": self.lomb_scargle_nterms, "pdm_bins": self.pdm_bins,
                "pdm_covers": self.pdm_covers,
                "prefer_double_peaked": self.prefer_double_peaked,
                "use_points": self.use_points, "coma_fraction": self.coma_fraction,
                "amplitude_phase_slope": self.amplitude_phase_slope,
                "alias_delta_chi2": self.alias_delta_chi2, "fap_limit": self.fap_limit}


def read_rotation(config):
    """Read ``[rotation]``.

    Examples
    --------
    >>> read_rotation({}).phase_coefficient
    <Quantity 0.035 mag / deg>
    """
    v = section_values(config, "rotation")
    return _fill(RotationSettings, v,
                 phase_coefficient=v["phase_coefficient_mag_per_deg"] * u.mag / u.deg,
                 min_period=v["min_period_h"] * u.h, max_period=v["max_period_h"] * u.h,
                 amplitude_phase_slope=v["amplitude_phase_slope_per_deg"] / u.deg)


@dataclass(frozen=True)
class SizeSettings:
    """``[size]``: the assumptions of the nucleus radius and mass."""

    band: str | None
    phase_coefficient: u.Quantity
    albedo: float
    albedo_range: tuple | None
    albedo_prior: str
    density_range: u.Quantity
    mass_loss: u.Quantity | None
    mass_loss_r_h: u.Quantity | None
    outflow_speed: u.Quantity | None
    accel_limit: u.Quantity | None
    momentum_efficiency: float
    composition: dict | None
    sublimation_geometry: str
    bond_albedo: float
    emissivity: float
    m_sun: float | None
    n_samples: int
    seed: int
    phase_coefficient_range: tuple = (0.02, 0.06)
    phase_fit_min_span_deg: float = 5.0
    h_err_limit_mag: float = 0.3
    min_detections: int = 5
    min_detected_fraction: float = 0.5


_ACCEL_UNITS = {"nongrav_accel_limit_m_s2": u.m / u.s**2,
                "nongrav_accel_limit_m_day2": u.m / u.day**2,
                "nongrav_accel_limit_au_day2": u.au / u.day**2}


def _maybe(value, unit):
    return None if value is None else value * unit


def read_size(config):
    """Read ``[size]``.

    The phase coefficient defaults to ``[rotation]``'s, the band to ``[photometry]``'s.

    Examples
    --------
    >>> s = read_size({"size": {"albedo": 0.05}})
    >>> s.albedo, s.phase_coefficient, s.band
    (0.05, <Quantity 0.035 mag / deg>, None)
    """
    v = section_values(config, "size")
    given = [k for k in _ACCEL_UNITS if v[k] is not None]
    if len(given) > 1:
        msg = f"{_file(config)}: [size] {given[1]}: give one acceleration limit, not {given}"
        raise ConfigError(msg)
    beta = v["phase_coefficient_mag_per_deg"]
    if beta is None:
        beta = section_values(config, "rotation")["phase_coefficient_mag_per_deg"]
    # the band said in the file; else the lightcurve's own single filter (the size step)
    band = v["band"] or (config.get("photometry") or {}).get("band")
    return _fill(
        SizeSettings, v, band=band, phase_coefficient=beta * u.mag / u.deg,
        density_range=np.array(v["density_range_g_cm3"]) * u.g / u.cm**3,
        mass_loss=_maybe(v["mass_loss_kg_s"], u.kg / u.s),
        mass_loss_r_h=_maybe(v["mass_loss_r_h_au"], u.au),
        outflow_speed=_maybe(v["outflow_speed_m_s"], u.m / u.s),
        accel_limit=_maybe(v[given[0]], _ACCEL_UNITS[given[0]]) if given else None)


@dataclass(frozen=True)
class ActivitySettings:
    """``[activity]``: the Afρ trend and the outburst search."""

    sigma: float
    jump_sigma: float
    quiet_sigma: float
    max_false_alarm: float
    method: str
    aperture: u.Quantity | None
    column: str
    night_gap: u.Quantity
    exclude_flags: tuple
    perihelion_time: object
    perihelion_source: str | None
    caution_elongation: u.Quantity
    night_max_false_alarm: float = 0.001
    night_min_frames: int = 8

    def as_dict(self):
        """The settings as a plain dict (the form the report content takes)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


def _tdb(config, label, value):
    from astropy.time import Time

    try:
        return Time(str(value), scale="tdb")
    except ValueError as exc:
        msg = f"{_file(config)}: {label}: not a readable date and time (ISO, TDB), got {value!r}"
        raise ConfigError(msg) from exc


def read_activity(config):
    """Read ``[activity]`` (the perihelion time defaults to ``[target.orbit]``'s).

    Examples
    --------
    >>> read_activity({"activity": {"outburst_sigma": 4.0}}).sigma
    4.0
    """
    v = section_values(config, "activity")
    peri, source = v["perihelion_time"], "[activity] perihelion_time"
    if peri is None:
        peri = section_values(config, "target.orbit")["perihelion_time"]
        source = "[target.orbit] perihelion_time"
    perihelion = None if peri is None else _tdb(config, source, peri)
    return ActivitySettings(
        sigma=v["outburst_sigma"], jump_sigma=v["jump_sigma"], quiet_sigma=v["quiet_sigma"],
        max_false_alarm=v["max_false_alarm"], method=v["fit_method"],
        aperture=_maybe(v["aperture_km"], u.km), column=v["afrho_column"],
        night_gap=v["night_gap_h"] * u.h, exclude_flags=v["exclude_flags"],
        perihelion_time=perihelion, perihelion_source=source if perihelion is not None else None,
        caution_elongation=read_geometry(config).caution_elongation,
        night_max_false_alarm=v["night_max_false_alarm"],
        night_min_frames=v["night_min_frames"])


@dataclass(frozen=True)
class GeometrySettings:
    """``[geometry]``: the planetary ephemeris and the Sun caution limit."""

    ephemeris: str
    caution_elongation: u.Quantity


def read_geometry(config):
    """Read ``[geometry]``.

    Examples
    --------
    >>> read_geometry({}).caution_elongation
    <Quantity 20. deg>
    """
    from photpipe.geometry import EPHEMERIDES

    v = section_values(config, "geometry")
    if v["ephemeris"] not in EPHEMERIDES:
        msg = (f"{_file(config)}: [geometry] ephemeris: must be one of "
               f"{', '.join(map(repr, sorted(EPHEMERIDES)))}, got {v['ephemeris']!r}")
        raise ConfigError(msg)
    return GeometrySettings(ephemeris=v["ephemeris"],
                            caution_elongation=v["caution_elongation_deg"] * u.deg)
