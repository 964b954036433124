"""The report's content: moved to `photpipe.report.content` (old imports keep working)."""

from photpipe.report.content import *  # noqa: F403
from photpipe.report.content import __all__  # noqa: F401
