"""Frames and calibration: ingest a night, build master calibrations, calibrate science frames.

Typical use::

    night = scan_night("raw/2026-12-01")                  # headers of every FITS file
    plan = plan_calibrations(night)                       # which calibrations go together
    masters = build_masters(plan, "work/masters")         # master bias, dark rate, flats
    for info in plan.science:
        frame = calibrate_frame(info, masters)            # electrons, variance, quality
        write_calibrated(frame, f"work/cal/{info.name}.fits")
"""

from .calibrate import *  # noqa: F401,F403
from .calibrate import __all__ as _calibrate_all
from .calibrated_io import *  # noqa: F401,F403
from .calibrated_io import __all__ as _io_all
from .combine import *  # noqa: F401,F403
from .combine import __all__ as _combine_all
from .cosmics import *  # noqa: F401,F403
from .cosmics import __all__ as _cosmics_all
from .errors import *  # noqa: F401,F403
from .errors import __all__ as _errors_all
from .ingest import *  # noqa: F401,F403
from .ingest import __all__ as _ingest_all
from .instruments import *  # noqa: F401,F403
from .instruments import __all__ as _instruments_all
from .kinds import *  # noqa: F401,F403
from .kinds import __all__ as _kinds_all
from .masters import *  # noqa: F401,F403
from .masters import __all__ as _masters_all
from .noise import *  # noqa: F401,F403
from .noise import __all__ as _noise_all
from .plan import *  # noqa: F401,F403
from .plan import __all__ as _plan_all
from .sites import *  # noqa: F401,F403
from .sites import __all__ as _sites_all
from .survey import *  # noqa: F401,F403
from .survey import __all__ as _survey_all
from .types import *  # noqa: F401,F403
from .types import __all__ as _types_all

__all__ = (list(_types_all) + list(_errors_all) + list(_kinds_all) + list(_ingest_all)
           + list(_plan_all) + list(_combine_all) + list(_masters_all) + list(_noise_all)
           + list(_cosmics_all) + list(_calibrate_all) + list(_io_all)
           + list(_instruments_all) + list(_sites_all) + list(_survey_all))
