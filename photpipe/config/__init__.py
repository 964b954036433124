"""The configuration: one reader per section, one rule for keys, types, ranges and defaults.

Only the commands and the campaign read the configuration; stages get plain values.
"""

from ._errors import *  # noqa: F401,F403
from ._errors import __all__ as _errors_all
from .geometry import *  # noqa: F401,F403
from .geometry import __all__ as _geometry_all
from .load import *  # noqa: F401,F403
from .load import __all__ as _load_all
from .observing import *  # noqa: F401,F403
from .observing import __all__ as _observing_all
from .settings import *  # noqa: F401,F403
from .settings import __all__ as _settings_all

__all__ = (list(_errors_all) + list(_load_all) + list(_settings_all) + list(_geometry_all)
           + list(_observing_all))
