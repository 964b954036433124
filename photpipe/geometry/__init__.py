"""Observing geometry, offline: orbits of any eccentricity, Sun and Earth, per-frame geometry.

Public API: `Orbit`, `observing_geometry`, `geometry_from_ephemeris_table`, the site helpers,
the two-body solver and the Sun caution.
"""

from photpipe.geometry.caution import *  # noqa: F403
from photpipe.geometry.caution import __all__ as _caution_all
from photpipe.geometry.kepler import *  # noqa: F403
from photpipe.geometry.kepler import __all__ as _kepler_all
from photpipe.geometry.observer import *  # noqa: F403
from photpipe.geometry.observer import __all__ as _observer_all
from photpipe.geometry.observing import *  # noqa: F403
from photpipe.geometry.observing import __all__ as _observing_all
from photpipe.geometry.orbit import *  # noqa: F403
from photpipe.geometry.orbit import __all__ as _orbit_all
from photpipe.geometry.solar_system import *  # noqa: F403
from photpipe.geometry.solar_system import __all__ as _solar_all
from photpipe.geometry.table_source import *  # noqa: F403
from photpipe.geometry.table_source import __all__ as _table_all

__all__ = (_caution_all + _kepler_all + _observer_all + _observing_all + _orbit_all
           + _solar_all + _table_all)
