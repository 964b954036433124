"""The campaign page: moved to `photpipe.report.page`; this name keeps old imports working."""

from photpipe.report.page import *  # noqa: F403
from photpipe.report.page import __all__  # noqa: F401
