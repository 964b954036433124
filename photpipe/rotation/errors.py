"""Exceptions and warnings of the rotation stage."""

from photpipe._warnings import PoorResultWarning

__all__ = ["LightcurveError", "NoUsablePointsError", "RotationWarning"]


class LightcurveError(ValueError):
    """A lightcurve that cannot give the result asked for.

    The message says what is wrong with the data and what they can and cannot constrain.
    """


class NoUsablePointsError(LightcurveError):
    """A well-formed lightcurve none of whose rows can be used (no rows, or every row set aside).

    The data are not wrong, they are only too few: the campaign's rotation step turns this into
    a result of status ``"none"`` with the message as its reason.
    """


class RotationWarning(PoorResultWarning):
    """A rotation result was found but should be used with care (see the result's flags)."""
