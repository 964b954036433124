"""photpipe.activity: the Afρ(r_h) power-law trend and outburst detection over a campaign."""

from photpipe.activity.colour import *  # noqa: F401,F403
from photpipe.activity.colour import __all__ as _colour_all
from photpipe.activity.columns import *  # noqa: F401,F403
from photpipe.activity.columns import __all__ as _columns_all
from photpipe.activity.night_outbursts import *  # noqa: F401,F403
from photpipe.activity.night_outbursts import __all__ as _night_outbursts_all
from photpipe.activity.nights import *  # noqa: F401,F403
from photpipe.activity.nights import __all__ as _nights_all
from photpipe.activity.outbursts import *  # noqa: F401,F403
from photpipe.activity.outbursts import __all__ as _outbursts_all
from photpipe.activity.powerlaw import *  # noqa: F401,F403
from photpipe.activity.powerlaw import __all__ as _powerlaw_all
from photpipe.activity.synthetic import *  # noqa: F401,F403
from photpipe.activity.synthetic import __all__ as _synthetic_all
from photpipe.activity.synthetic_nights import *  # noqa: F401,F403
from photpipe.activity.synthetic_nights import __all__ as _synthetic_nights_all
from photpipe.activity.trend import *  # noqa: F401,F403
from photpipe.activity.trend import __all__ as _trend_all

__all__ = (_powerlaw_all + _nights_all + _trend_all + _outbursts_all + _synthetic_all
           + _columns_all + _colour_all + _night_outbursts_all + _synthetic_nights_all)
