"""Campaign: the SQLite store of every measurement, the Dask task runner and the batch pipeline."""

from .hashing import *  # noqa: F401,F403
from .hashing import __all__ as _hashing_all
from .records import *  # noqa: F401,F403
from .records import __all__ as _records_all
from .runner import *  # noqa: F401,F403
from .runner import __all__ as _runner_all
from .store import *  # noqa: F401,F403
from .store import __all__ as _store_all

__all__ = list(_hashing_all) + list(_records_all) + list(_runner_all) + list(_store_all)
