"""photpipe.size: nucleus size, mass and active area under stated assumptions.

From the rotation-averaged absolute magnitude H: the effective radius for an assumed albedo
(Monte Carlo over the H error and the albedo range), the Russell (1916) radius of one frame, the
mass for an assumed density range, the momentum-balance lower bound on the mass, and the
fraction of the surface that must sublimate to give a measured mass-loss rate.
"""

from photpipe.size.active import *  # noqa: F401, F403
from photpipe.size.active import __all__ as _active_all
from photpipe.size.assess import *  # noqa: F401, F403
from photpipe.size.assess import __all__ as _assess_all
from photpipe.size.diameter import *  # noqa: F401, F403
from photpipe.size.diameter import __all__ as _diameter_all
from photpipe.size.ices import *  # noqa: F401, F403
from photpipe.size.ices import __all__ as _ices_all
from photpipe.size.limits import *  # noqa: F401, F403
from photpipe.size.limits import __all__ as _limits_all
from photpipe.size.magnitude import *  # noqa: F401, F403
from photpipe.size.magnitude import __all__ as _magnitude_all
from photpipe.size.mass import *  # noqa: F401, F403
from photpipe.size.mass import __all__ as _mass_all
from photpipe.size.momentum import *  # noqa: F401, F403
from photpipe.size.momentum import __all__ as _momentum_all
from photpipe.size.montecarlo import *  # noqa: F401, F403
from photpipe.size.montecarlo import __all__ as _montecarlo_all
from photpipe.size.phase_coefficient import *  # noqa: F401, F403
from photpipe.size.phase_coefficient import __all__ as _phase_all
from photpipe.size.result import *  # noqa: F401, F403
from photpipe.size.result import __all__ as _result_all
from photpipe.size.russell import *  # noqa: F401, F403
from photpipe.size.russell import __all__ as _russell_all
from photpipe.size.sublimation import *  # noqa: F401, F403
from photpipe.size.sublimation import __all__ as _sublimation_all

__all__ = (_active_all + _assess_all + _diameter_all + _ices_all + _limits_all + _magnitude_all
           + _mass_all + _momentum_all + _montecarlo_all + _phase_all + _result_all
           + _russell_all + _sublimation_all)
