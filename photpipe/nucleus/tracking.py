"""Which of the comet and the stars trailed (defined in `photpipe.photometry.tracking`).

The photometry decides it, before the field stars are measured, and hands its verdict on; the
names stay importable from here for the nucleus's callers.
"""

from photpipe.photometry.tracking import (
    SEPARATION_SIGMA,
    STRONG_MARGIN,
    TrackingVerdict,
    tracking_from_header,
    tracking_from_stars,
)

__all__ = ["TrackingVerdict", "tracking_from_header", "tracking_from_stars", "SEPARATION_SIGMA",
           "STRONG_MARGIN"]
