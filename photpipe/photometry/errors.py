"""The exception and warning classes of the photometry stage."""

from photpipe._warnings import PoorResultWarning

__all__ = ["PhotometryError", "PhotometryWarning"]


class PhotometryError(ValueError):
    """No measurement row can be made from a frame (the message names the frame and why).

    Raised when no reference star matches, the frame has no WCS, the comet is off the frame, or
    the inputs cannot be used at all. Batch code catches it per frame and records the reason.
    """


class PhotometryWarning(PoorResultWarning):
    """A frame was measured but the result is suspect; the rows carry flags saying why."""
