"""How far the comet and the stars move during one exposure (`photpipe.photometry.trails`).

The photometry needs the stars' trail first (its apertures follow it); the names stay
importable from here for the nucleus's callers.
"""

from photpipe.photometry.trails import TRACKING_MODES, exposure_trails

__all__ = ["TRACKING_MODES", "exposure_trails"]
