"""What the photometry of one frame returns."""

from dataclasses import dataclass, field

from astropy.table import QTable
from astropy.wcs import WCS

from photpipe import schema

from .zeropoint import ZeroPoint

__all__ = ["MEASUREMENT_COLUMNS", "FramePhotometry"]

#: The columns of ``measurements.ecsv`` this stage makes, in order (the stage contract, see
#: DEVELOPERS.md), from the schema (`photpipe.schema.MEASUREMENT_COLUMNS`).
MEASUREMENT_COLUMNS = ("frame",) + schema.column_names(schema.MEASUREMENT_COLUMNS,
                                                      stage="photometry")


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
