"""The project's synthetic sky: raw nights of an invented comet with the truth that made them.

Tests use it to check that each stage recovers known values; ``sample_frames/`` is one night made
with it (see :mod:`photpipe.scenario.demo`).
"""

from .cases import *  # noqa: F401,F403
from .cases import __all__ as _cases_all
from .comet import *  # noqa: F401,F403
from .comet import __all__ as _comet_all
from .instrument import *  # noqa: F401,F403
from .instrument import __all__ as _instrument_all
from .night import *  # noqa: F401,F403
from .night import __all__ as _night_all
from .psf import *  # noqa: F401,F403
from .psf import __all__ as _psf_all
from .render import *  # noqa: F401,F403
from .render import __all__ as _render_all
from .stars import *  # noqa: F401,F403
from .stars import __all__ as _stars_all

__all__ = (_cases_all + _comet_all + _instrument_all + _night_all + _psf_all + _render_all
           + _stars_all)
