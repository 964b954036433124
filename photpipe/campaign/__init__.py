"""Campaign: the batch run, the Dask task runner, the campaign steps, figures and report."""

from .figures import *  # noqa: F401,F403
from .figures import __all__ as _figures_all
from .hashing import *  # noqa: F401,F403
from .hashing import __all__ as _hashing_all
from .records import *  # noqa: F401,F403
from .records import __all__ as _records_all
from .report import *  # noqa: F401,F403
from .report import __all__ as _report_all
from .runner import *  # noqa: F401,F403
from .runner import __all__ as _runner_all

__all__ = (list(_hashing_all) + list(_records_all) + list(_runner_all)
           + list(_figures_all) + list(_report_all))
