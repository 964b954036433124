"""Run astropy's Earth-orientation machinery without any network access."""

import contextlib
import warnings

from astropy.utils import iers

__all__ = ["offline_earth_orientation"]


@contextlib.contextmanager
def offline_earth_orientation():
    """Context in which astropy uses only its bundled IERS and leap-second tables.

    Notes
    -----
    ``astropy-iers-data`` ships the IERS-A predictions (about a year ahead) and the leap-second
    list. Beyond the predictions astropy holds UT1-UTC and polar motion at their last values; the
    resulting error (< 1 s of Earth rotation, < 0.5 arcsec of pole) moves an observing site by
    less than 0.5 km, which is below 0.01 arcsec of parallax for a comet beyond 0.1 AU. So the
    "old predictions" age check is switched off and the polar-motion notice is not repeated.
    """
    with contextlib.ExitStack() as stack:
        stack.enter_context(iers.conf.set_temp("auto_download", False))
        stack.enter_context(iers.conf.set_temp("auto_max_age", None))
        stack.enter_context(warnings.catch_warnings())
        warnings.filterwarnings("ignore", message=r".*Tried to get polar motions.*")
        yield
