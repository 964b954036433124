"""Campaign figures: moved to `photpipe.report.figures`; this name keeps old imports working."""

from photpipe.report.figures import *  # noqa: F403
from photpipe.report.figures import __all__  # noqa: F401
