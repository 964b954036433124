"""The flags, messages, intermediate values and step timings of one frame's photometry."""

import time

from .dust_phase import PHASE_FLAG

__all__ = ["FLAG_TEXT", "Notes"]

#: flag -> sentence for the messages list.
FLAG_TEXT = {
    "few_stars": "fewer reference stars than 'min_stars' in the zero-point fit",
    "colour_term_dropped": "too few stars to fit a colour term; constant zero point used",
    "wcs_refined_large": "header WCS was off by more than the refinement limit",
    "edge": "an aperture or the sky annulus runs off the frame",
    "saturated": "saturated comet pixels inside an aperture",
    "star_in_aperture": "a field star inside an aperture was masked and filled from the coma",
    "nan_pixels": "non-finite or bad pixels inside an aperture were filled from the coma",
    "centroid_at_limit": "comet centroid reached 'max_centroid_shift'; position is bounded",
    "centroid_failed": "no comet light found for a centroid; predicted position used",
    "nonpositive_flux": "flux in an aperture is not positive; magnitude undefined",
    "profile_short": "too few profile annuli in the slope range",
    "no_sun_pa": "no pa_sun in the geometry row; sector profiles not made",
    "no_solar_magnitude": "no solar magnitude for the band; Afρ not computed",
    "psf_fallback": ("too few field stars, or a curve of growth that does not fix both Moffat "
                     "parameters; the coma aperture correction uses a Moffat PSF with beta = 3 "
                     "and the measured FWHM"),
    PHASE_FLAG: ("phase angle outside the range where the dust phase function is checked; "
                 "A(0)fρ uses its value at the edge of that range"),
    "low_elongation": ("small solar elongation: pointing optics near the Sun can blind and damage "
                       "them; follow local rules and experienced practice"),
}


def add_flag(flags, messages, name, detail=""):
    """Add flag ``name`` to ``flags`` (once) and its sentence to ``messages``."""
    if name not in flags:
        flags.append(name)
        extra = f" ({detail})" if detail else ""
        messages.append(f"{name}: {FLAG_TEXT.get(name, name)}{extra}")


class Notes:
    """Frame-level flags, their messages, and the intermediate values kept in ``details``."""

    def __init__(self):
        self.flags, self.messages, self.details = [], [], {}
        self._clock = [("start", time.perf_counter())]

    def lap(self, label):
        """Mark the end of the step ``label`` (its time goes to ``timings()``)."""
        self._clock.append((label, time.perf_counter()))

    def timings(self):
        """Seconds spent in each step, by label."""
        return {label: t - self._clock[i][1] for i, (label, t) in enumerate(self._clock[1:])}

    def flag(self, name, detail=""):
        """Raise a frame-level flag with an optional detail for its message."""
        add_flag(self.flags, self.messages, name, detail)
