"""What one frame's processing hands to the campaign store."""

from dataclasses import dataclass, field, fields

__all__ = ["FrameRecord"]


@dataclass(frozen=True)
class FrameRecord:
    """Everything measured on one frame, as plain data, ready to be stored in one transaction.

    Task functions build it in a worker process and return it; only the parent process writes it
    to the :class:`~photpipe.campaign.CampaignStore`.

    Attributes
    ----------
    night : str
        Name of the night the frame belongs to.
    frame : str
        Frame name (file name without extensions).
    path : str
        The raw file.
    content_hash : str
        sha256 of the raw file's bytes.
    kind : str
        Frame kind (``"science"`` for measured frames).
    mjd_utc_mid : float or None
        Mid-exposure time, MJD (UTC).
    filter : str or None
        Filter name from the header.
    exptime_s : float or None
        Exposure time in seconds.
    site : str or None
        Site key from the configuration.
    stages : tuple of str
        The stages that ran on the frame and produced results (for example
        ``("calibration", "photometry", "nucleus")``).
    calibrations : tuple of dict
        Master calibrations used: dicts with ``kind, path`` and optionally ``filter, exptime_s,
        n_inputs, content_hash``.
    geometry : dict or None
        Observing geometry row (``r_h_au, delta_au, phase_deg, elong_deg, ra_deg, dec_deg,
        light_time_s``).
    zero_point : dict or None
        Zero-point row (``zp_mag, zp_err_mag, n_stars, ...``).
    stars : table-like or None
        Field-star rows (QTable, or list of dicts).
    measurements : table-like or None
        Comet rows per aperture, columns of the ``measurements.ecsv`` contract.
    nucleus : dict or table-like or None
        The nucleus fit, columns of the ``nucleus.ecsv`` contract.
    problems : tuple of (str, str)
        ``(stage, reason)`` for stages that could not give a result on this frame.
    calibrated_path : str or None
        Where the calibrated frame was written.
    astrometry : dict or None
        The comet's sky position with its error (``astrometry`` table of the store).
    profile : list of dict or None
        Σ(ρ) of the coma, all azimuths and the sunward and tailward sectors (``profiles``).
    nucleus_images : dict or None
        Data, model and residual of the nucleus fit, cut small (written by the campaign beside
        the store, see `photpipe.campaign.frame_views`).
    tracking : dict or None
        The frame's tracking verdict (`photpipe.photometry.TrackingVerdict.to_dict`), which
        the night weighs with the others'.

    Examples
    --------
    >>> r = FrameRecord("n1", "sci_0001", "/data/n1/sci_0001.fits", "ab12")
    >>> r.to_dict()["frame"]
    'sci_0001'
    """

    night: str
    frame: str
    path: str
    content_hash: str
    kind: str = "science"
    mjd_utc_mid: float | None = None
    filter: str | None = None
    exptime_s: float | None = None
    site: str | None = None
    stages: tuple = ()
    calibrations: tuple = ()
    geometry: dict | None = None
    zero_point: dict | None = None
    stars: object = None
    measurements: object = None
    nucleus: object = None
    problems: tuple = field(default=())
    calibrated_path: str | None = None
    astrometry: dict | None = None
    profile: object = None
    nucleus_images: dict | None = field(default=None, repr=False)
    tracking: dict | None = None

    def to_dict(self):
        """Return the record's attributes as a plain dict (tables are not copied)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}
