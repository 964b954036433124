"""Frames and calibration: ingest a night, build master calibrations, calibrate science frames."""

from .types import *  # noqa: F401,F403
from .types import __all__ as _types_all

__all__ = list(_types_all)
