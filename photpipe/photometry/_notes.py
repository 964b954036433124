"""The flags, messages, intermediate values and step timings of one frame's photometry."""

import time

from photpipe.flags import meaning

from .dust_phase import PHASE_FLAG

__all__ = ["flag_text", "Notes"]

#: The photometry's messages that say more than the flag's meaning in the one registry
#: (`photpipe.flags.FLAGS`); every other flag's message is its registered meaning.
_MORE_TEXT = {
    "saturated": "saturated comet pixels inside an aperture",
    "no_sun_pa": "no pa_sun in the geometry row; sector profiles not made",
    "psf_fallback": ("too few field stars, or a curve of growth that does not fix both Moffat "
                     "parameters; the coma aperture correction uses a Moffat PSF with beta = 3 "
                     "and the measured FWHM"),
    PHASE_FLAG: ("phase angle outside the range where the dust phase function is checked; "
                 "A(0)fρ uses its value at the edge of that range"),
}


def flag_text(name):
    """The sentence for flag ``name`` in a frame's messages.

    Examples
    --------
    >>> flag_text("few_stars")
    "fewer reference stars than 'min_stars' in the zero-point fit"
    """
    return _MORE_TEXT.get(name) or meaning(name)


def add_flag(flags, messages, name, detail=""):
    """Add flag ``name`` to ``flags`` (once) and its sentence to ``messages``."""
    if name not in flags:
        flags.append(name)
        extra = f" ({detail})" if detail else ""
        messages.append(f"{name}: {flag_text(name)}{extra}")


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
