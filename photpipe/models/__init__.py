"""photpipe.models: the pure model functions the stages share (no fitting, no I/O).

The exact pixel integrals of a power-law coma (`coma`) and the Moffat point-spread function
(`moffat`: surface density, pixel integrals, kernels, stamps, encircled energy). The measuring
stages (`photpipe.photometry`, `photpipe.nucleus`) and the synthetic sky (`photpipe.scenario`)
import them from here; this package imports no other part of photpipe.
"""

from .coma import *  # noqa: F403
from .coma import __all__ as _coma_all
from .moffat import *  # noqa: F403
from .moffat import __all__ as _moffat_all

__all__ = _coma_all + _moffat_all
