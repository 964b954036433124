"""Warning classes of photpipe.

A result that is poor but usable gets one of these warnings and a flag in its output table, never
an exception and never silence.
"""

__all__ = ["PhotpipeWarning", "PoorResultWarning", "SolarElongationWarning"]


class PhotpipeWarning(UserWarning):
    """Base class of every warning photpipe emits."""


class PoorResultWarning(PhotpipeWarning):
    """A measurement was made but should be used with care (see the row's flags)."""


class SolarElongationWarning(PhotpipeWarning):
    """The target is close to the Sun in the sky: pointing optics there can blind and damage."""
