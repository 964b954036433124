"""Small records shared by every stage of a batch run."""

from dataclasses import asdict, dataclass

__all__ = ["Skipped"]


@dataclass(frozen=True)
class Skipped:
    """One thing a batch run could not do, and why.

    Attributes
    ----------
    item : str
        The frame name or file path that was skipped.
    stage : str
        The stage that gave up (``"ingest"``, ``"calibration"``, ``"photometry"``, ...).
    reason : str
        One line saying what was wrong, for a person to read.

    Examples
    --------
    >>> s = Skipped("sci_0007.fits", "ingest", "header has no DATE-OBS or MJD-OBS")
    >>> str(s)
    'sci_0007.fits [ingest]: header has no DATE-OBS or MJD-OBS'
    """

    item: str
    stage: str
    reason: str

    def __str__(self):
        return f"{self.item} [{self.stage}]: {self.reason}"

    def to_dict(self):
        """Return the record as a plain dict."""
        return asdict(self)
