"""Orbit determination from astrometry, with non-gravitational terms.

Public API: the ADES reader and writers, the force model and integrator, Gauss's initial
orbit, the orbit fit and its result, the g(r) laws and the acceleration verdict.
"""

from photpipe.orbit.ades import *  # noqa: F403
from photpipe.orbit.ades import __all__ as _ades_all
from photpipe.orbit.astrometry import *  # noqa: F403
from photpipe.orbit.astrometry import __all__ as _astrometry_all
from photpipe.orbit.bound import *  # noqa: F403
from photpipe.orbit.bound import __all__ as _bound_all
from photpipe.orbit.centroid import *  # noqa: F403
from photpipe.orbit.centroid import __all__ as _centroid_all
from photpipe.orbit.figures import *  # noqa: F403
from photpipe.orbit.figures import __all__ as _figures_all
from photpipe.orbit.fit import *  # noqa: F403
from photpipe.orbit.fit import __all__ as _fit_all
from photpipe.orbit.frame_position import *  # noqa: F403
from photpipe.orbit.frame_position import __all__ as _frame_position_all
from photpipe.orbit.initial import *  # noqa: F403
from photpipe.orbit.initial import __all__ as _initial_all
from photpipe.orbit.limits import *  # noqa: F403
from photpipe.orbit.limits import __all__ as _limits_all
from photpipe.orbit.nongrav import *  # noqa: F403
from photpipe.orbit.nongrav import __all__ as _nongrav_all
from photpipe.orbit.observe import *  # noqa: F403
from photpipe.orbit.observe import __all__ as _observe_all
from photpipe.orbit.propagate import *  # noqa: F403
from photpipe.orbit.propagate import __all__ as _propagate_all
from photpipe.orbit.result import *  # noqa: F403
from photpipe.orbit.result import __all__ as _result_all
from photpipe.orbit.sites import *  # noqa: F403
from photpipe.orbit.sites import __all__ as _sites_all

__all__ = (_ades_all + _astrometry_all + _bound_all + _centroid_all + _figures_all + _fit_all
           + _frame_position_all + _initial_all + _limits_all + _nongrav_all + _observe_all
           + _propagate_all + _result_all + _sites_all)
