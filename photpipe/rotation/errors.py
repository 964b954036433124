"""Exceptions and warnings of the rotation stage."""

from photpipe._warnings import PoorResultWarning

__all__ = ["LightcurveError", "RotationWarning"]


class LightcurveError(ValueError):
    """A lightcurve that cannot give the result asked for.

    The message says what is wrong with the data and what they can and cannot constrain.
    """


class RotationWarning(PoorResultWarning):
    """A rotation result was found but should be used with care (see the result's flags)."""
