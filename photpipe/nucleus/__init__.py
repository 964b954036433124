"""photpipe.nucleus: the nucleus separated from the coma by PSF-convolved fitting.

The PSF is measured from the field stars (`measure_psf`); the model (`nucleus_coma_image`) is the
PSF convolved with a point source plus a power-law coma, plus sky; `fit_nucleus` fits it to a
frame and `fisher_bound` gives the Cramér-Rao bound of its parameters.
"""

from .coma_afrho import *  # noqa: F403
from .coma_afrho import __all__ as _coma_afrho_all
from .fisher import *  # noqa: F403
from .fisher import __all__ as _fisher_all
from .fit import *  # noqa: F403
from .fit import __all__ as _fit_all
from .models import *  # noqa: F403
from .models import __all__ as _models_all
from .motion import *  # noqa: F403
from .motion import __all__ as _motion_all
from .plot import *  # noqa: F403
from .plot import __all__ as _plot_all
from .profile import *  # noqa: F403
from .profile import __all__ as _profile_all
from .psf import *  # noqa: F403
from .psf import __all__ as _psf_all
from .result import *  # noqa: F403
from .result import __all__ as _result_all
from .table import *  # noqa: F403
from .table import __all__ as _table_all

__all__ = (_coma_afrho_all + _fisher_all + _fit_all + _models_all
           + _motion_all + _plot_all + _profile_all + _psf_all + _result_all + _table_all)
