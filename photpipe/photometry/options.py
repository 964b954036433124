"""Options of the photometry of one frame, grouped by the step that uses them.

`measure_frame` takes one `MeasureOptions`; `measure_comet_frame` keeps the flat keywords (the
campaign passes ``[photometry]`` keys by name) and sorts them into the groups with
`MeasureOptions.from_keywords`.
"""

import dataclasses
from dataclasses import dataclass, field

from astropy import units as u

__all__ = ["StarOptions", "CalibrationOptions", "ApertureOptions", "ProfileOptions",
           "SiteOptions", "MeasureOptions"]


@dataclass(frozen=True)
class StarOptions:
    """Finding the field stars and refining the WCS.

    Attributes
    ----------
    detect_threshold : float
        Detection threshold, signal-to-noise of the binned image.
    detect_binning : int
        Binning factor for detection.
    max_wcs_offset : `~astropy.units.Quantity`
        Largest header-WCS error searched when matching stars (arcsec or pix).
    wcs_shift_limit : `~astropy.units.Quantity`
        WCS corrections larger than this (at the frame corners) flag ``wcs_refined_large``.
    tracking : {"sidereal", "comet", "none"}
        What the telescope followed: the stars (the comet trails by its rate × exposure), the
        comet (the stars trail, and are measured in apertures along the trail) or "none"
        (the motion is not modelled).
    tracking_check : bool
        Let a ``TRACKING`` header value, else the field stars' shapes, decide the mode of
        this frame (`~photpipe.photometry.tracking_from_stars`).
    """

    detect_threshold: float = 5.0
    detect_binning: int = 2
    max_wcs_offset: u.Quantity = 30 * u.arcsec
    wcs_shift_limit: u.Quantity = 3 * u.pix
    tracking: str = "sidereal"
    tracking_check: bool = True


@dataclass(frozen=True)
class CalibrationOptions:
    """The zero point from the field stars.

    Attributes
    ----------
    band, colour : str
        Catalogue band the frame is calibrated to, and colour column of the colour term.
    solar_band : str
        Band of the Sun's magnitude used for Afρ (a name `~photpipe.photometry.solar_magnitude`
        knows); empty means ``band``. A catalogue column named ``Vmag`` calibrates on V but
        the Sun's table knows it as ``V``.
    fit_colour_term : bool
        Fit a colour term in the zero point.
    comet_colour : float or None
        The comet's colour in ``colour`` (mag) for the colour term; default the Sun's
        (``SOLAR_COLOURS``).
    mag_system : {"Vega", "AB"}
        System of the catalogue magnitudes (for the solar magnitude).
    min_stars : int
        Fewer stars in the zero point than this flags the frame ``few_stars``.
    max_zp_stars : int
        Measure at most this many matched stars (brightest catalogue magnitudes first, which
        includes saturated ones that are then rejected).
    star_aperture_fwhm : float
        Star photometry radius in units of the FWHM (corrected to total by the curve of growth).
    coma_correction : bool
        Fit the PSF's curve of growth and correct the comet's sums for the coma light the PSF
        spreads out of them (column ``coma_apcorr_mag``; see
        :mod:`photpipe.photometry.coma_apcorr`).
    """

    band: str = "R"
    solar_band: str = ""
    colour: str = "B-V"
    fit_colour_term: bool = False
    comet_colour: float | None = None
    mag_system: str = "Vega"
    min_stars: int = 5
    max_zp_stars: int = 150
    star_aperture_fwhm: float = 1.5
    coma_correction: bool = True


@dataclass(frozen=True)
class ApertureOptions:
    """The comet's centre, sky and apertures.

    Attributes
    ----------
    apertures_km, apertures_arcsec : `~astropy.units.Quantity`
        Aperture radii at the comet and on the sky.
    annulus : tuple of `~astropy.units.Quantity` or None
        (inner, outer) sky-annulus radii in km, arcsec or pix; default 4 and 8 times the
        largest aperture.
    sky_method : {"coma-fit", "median"}
        Sky estimator in the annulus (see :mod:`photpipe.photometry.sky`).
    centroid_box : `~astropy.units.Quantity` or None
        Comet centroid box (arcsec or pix); default 4 FWHM.
    max_centroid_shift : `~astropy.units.Quantity`
        Largest centroid move from the predicted position (arcsec or pix).
    """

    apertures_km: u.Quantity = (5000, 10000, 20000) * u.km
    apertures_arcsec: u.Quantity | None = (5, 10) * u.arcsec
    annulus: tuple | None = None
    sky_method: str = "coma-fit"
    centroid_box: u.Quantity | None = None
    max_centroid_shift: u.Quantity = 5 * u.arcsec


@dataclass(frozen=True)
class ProfileOptions:
    """The coma profiles and the dust phase function of A(0)fρ.

    Attributes
    ----------
    profile_slope_range_km : `~astropy.units.Quantity`
        (min, max) ρ of the log-log slope fit.
    profile_bins : int
        Number of log-spaced profile annuli.
    sector_half_width : `~astropy.units.Quantity`
        Half opening of the sunward and tailward sectors.
    dust_phase_function : {"schleicher-marcus", "linear", "table"}
        Phase function for A(0°)fρ.
    phase_function_table : tuple or None
        ``(phase_deg, value)`` replacing the named function.
    phase_coefficient : `~astropy.units.Quantity` or None
        Coefficient of the ``"linear"`` phase law.
    """

    profile_slope_range_km: u.Quantity = (2000, 20000) * u.km
    profile_bins: int = 24
    sector_half_width: u.Quantity = 45 * u.deg
    dust_phase_function: str = "schleicher-marcus"
    phase_function_table: tuple | None = None
    phase_coefficient: u.Quantity | None = None


@dataclass(frozen=True)
class SiteOptions:
    """The observing site: airmass and the solar-elongation caution.

    Attributes
    ----------
    site : `~astropy.coordinates.EarthLocation` or None
        Used to compute the airmass when the header has no AIRMASS.
    airmass_formula : str
        Key of `~photpipe.photometry.airmass.AIRMASS_FORMULAS`.
    min_elongation : `~astropy.units.Quantity`
        Below this solar elongation the rows carry ``low_elongation`` and a caution.
    """

    site: object = None
    airmass_formula: str = "kasten-young"
    min_elongation: u.Quantity = 45 * u.deg


@dataclass(frozen=True)
class MeasureOptions:
    """All options of `~photpipe.photometry.measure_frame`, one group per step."""

    stars: StarOptions = field(default_factory=StarOptions)
    calibration: CalibrationOptions = field(default_factory=CalibrationOptions)
    apertures: ApertureOptions = field(default_factory=ApertureOptions)
    profile: ProfileOptions = field(default_factory=ProfileOptions)
    site: SiteOptions = field(default_factory=SiteOptions)

    @classmethod
    def from_keywords(cls, **keywords):
        """Options from the flat keywords of `measure_comet_frame`.

        Raises
        ------
        TypeError
            A keyword no group knows (named, with the known ones).

        Examples
        --------
        >>> MeasureOptions.from_keywords(band="V", profile_bins=12).calibration.band
        'V'
        """
        owner = {f.name: group for group, kind in _GROUP_TYPES.items()
                 for f in dataclasses.fields(kind)}
        unknown = sorted(set(keywords) - set(owner))
        if unknown:
            msg = f"unknown photometry option(s) {unknown}; known: {sorted(owner)}"
            raise TypeError(msg)
        values = {group: {} for group in _GROUP_TYPES}
        for key, value in keywords.items():
            values[owner[key]][key] = value
        return cls(**{group: _GROUP_TYPES[group](**kw) for group, kw in values.items()})


_GROUP_TYPES = {"stars": StarOptions, "calibration": CalibrationOptions,
                "apertures": ApertureOptions, "profile": ProfileOptions, "site": SiteOptions}
