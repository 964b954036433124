"""The campaign store: one SQLite file holding everything a campaign has measured.

Only this package touches the database; the batch run and the commands open it.
"""

from .campaign_store import *  # noqa: F401,F403
from .campaign_store import __all__ as _store_all
from .export import *  # noqa: F401,F403
from .export import __all__ as _export_all

__all__ = list(_store_all) + list(_export_all)
