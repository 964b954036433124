"""What the photometry of one frame returns."""

from dataclasses import dataclass, field

from astropy.table import QTable
from astropy.wcs import WCS

from .zeropoint import ZeroPoint

__all__ = ["MEASUREMENT_COLUMNS", "FramePhotometry"]

#: The columns of ``measurements.ecsv``, in order (the stage contract, see DEVELOPERS.md).
MEASUREMENT_COLUMNS = (
    "frame", "mjd_utc_mid", "filter", "exptime_s", "airmass", "zp_mag", "zp_err_mag", "n_stars",
    "x_pix", "y_pix", "ra_deg", "dec_deg", "r_h_au", "delta_au", "phase_deg", "elong_deg",
    "rho_km", "rho_arcsec", "mag", "mag_err", "afrho_cm", "afrho_err_cm", "a0frho_cm",
    "a0frho_err_cm", "coma_slope", "coma_apcorr_mag", "flags",
)


@dataclass(frozen=True)
class FramePhotometry:
    """Photometry of one calibrated frame.

    Attributes
    ----------
    frame : str
        Frame name.
    comet : `~astropy.table.QTable`
        One row per aperture with exactly ``MEASUREMENT_COLUMNS`` (units carried).
    stars : `~astropy.table.QTable`
        One row per matched reference star: ``id, ra, dec, x, y, flux, flux_err, inst_mag,
        inst_mag_err, cat_mag, cat_mag_err, colour, residual, used``.
    zero_point : ZeroPoint
        The frame's zero point fit.
    profile : `~astropy.table.QTable`
        Azimuthal and sector coma profiles.
    wcs : `~astropy.wcs.WCS`
        The WCS refined from the matched stars.
    flags : list of str
        Frame-level flags (each row's ``flags`` also lists its own).
    messages : list of str
        One line per flag, for a person to read.
    details : dict
        Intermediate values (sky estimate, FWHM, WCS correction, comet centroid status, ...).
    """

    frame: str
    comet: QTable
    stars: QTable
    zero_point: ZeroPoint
    profile: QTable
    wcs: WCS
    flags: list = field(default_factory=list)
    messages: list = field(default_factory=list)
    details: dict = field(default_factory=dict)

    def to_table(self):
        """The per-aperture comet rows (the ``measurements.ecsv`` rows of this frame)."""
        return self.comet

    def to_dict(self):
        """Frame-level results as a plain dict (no tables)."""
        return {"frame": self.frame, "zero_point": self.zero_point.to_dict(),
                "flags": list(self.flags), "messages": list(self.messages),
                **{k: v for k, v in self.details.items() if not hasattr(v, "colnames")}}
