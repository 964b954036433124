"""Photometry: reference stars, WCS refinement, zero point, comet apertures in km, profiles, Afρ.

The stage's entry point is :func:`measure_comet_frame`; the pure pieces (Afρ, solar magnitudes,
dust phase functions, profile slope, sky estimators, airmass, the coma aperture
correction) are importable on their own.
"""

from .afrho import *  # noqa: F401,F403
from .afrho import __all__ as _afrho_all
from .airmass import *  # noqa: F401,F403
from .airmass import __all__ as _airmass_all
from .astrometry import *  # noqa: F401,F403
from .astrometry import __all__ as _astrometry_all
from .coma_apcorr import *  # noqa: F401,F403
from .coma_apcorr import __all__ as _coma_apcorr_all
from .coma_background import *  # noqa: F401,F403
from .coma_background import __all__ as _coma_background_all
from .cometphot import *  # noqa: F401,F403
from .cometphot import __all__ as _cometphot_all
from .detection import *  # noqa: F401,F403
from .detection import __all__ as _detection_all
from .dust_phase import *  # noqa: F401,F403
from .dust_phase import __all__ as _dust_phase_all
from .errors import *  # noqa: F401,F403
from .errors import __all__ as _errors_all
from .filters import *  # noqa: F401,F403
from .filters import __all__ as _filters_all
from .frame_solve import *  # noqa: F401,F403
from .frame_solve import __all__ as _frame_solve_all
from .locate import *  # noqa: F401,F403
from .locate import __all__ as _locate_all
from .measure import *  # noqa: F401,F403
from .measure import __all__ as _measure_all
from .options import *  # noqa: F401,F403
from .options import __all__ as _options_all
from .phase_linear import *  # noqa: F401,F403
from .phase_linear import __all__ as _phase_linear_all
from .phase_schleicher_marcus import *  # noqa: F401,F403
from .phase_schleicher_marcus import __all__ as _phase_schleicher_marcus_all
from .phase_table import *  # noqa: F401,F403
from .phase_table import __all__ as _phase_table_all
from .platesolve import *  # noqa: F401,F403
from .platesolve import __all__ as _platesolve_all
from .profile import *  # noqa: F401,F403
from .profile import __all__ as _profile_all
from .refstars import *  # noqa: F401,F403
from .refstars import __all__ as _refstars_all
from .refstore import *  # noqa: F401,F403
from .refstore import __all__ as _refstore_all
from .result import *  # noqa: F401,F403
from .result import __all__ as _result_all
from .sky import *  # noqa: F401,F403
from .sky import __all__ as _sky_all
from .sky_coma import *  # noqa: F401,F403
from .sky_coma import __all__ as _sky_coma_all
from .sky_median import *  # noqa: F401,F403
from .sky_median import __all__ as _sky_median_all
from .solar import *  # noqa: F401,F403
from .solar import __all__ as _solar_all
from .starphot import *  # noqa: F401,F403
from .starphot import __all__ as _starphot_all
from .tracking import *  # noqa: F401,F403
from .tracking import __all__ as _tracking_all
from .trailed import *  # noqa: F401,F403
from .trailed import __all__ as _trailed_all
from .trailed_psf import *  # noqa: F401,F403
from .trailed_psf import __all__ as _trailed_psf_all
from .trails import *  # noqa: F401,F403
from .trails import __all__ as _trails_all
from .zeropoint import *  # noqa: F401,F403
from .zeropoint import __all__ as _zeropoint_all

__all__ = (
    _afrho_all +
    _airmass_all +
    _astrometry_all +
    _coma_apcorr_all +
    _coma_background_all +
    _cometphot_all +
    _detection_all +
    _dust_phase_all +
    _errors_all +
    _filters_all +
    _frame_solve_all +
    _locate_all +
    _measure_all +
    _options_all +
    _phase_linear_all +
    _phase_schleicher_marcus_all +
    _phase_table_all +
    _platesolve_all +
    _profile_all +
    _refstars_all +
    _refstore_all +
    _result_all +
    _sky_all +
    _sky_coma_all +
    _sky_median_all +
    _solar_all +
    _starphot_all +
    _tracking_all +
    _trailed_all +
    _trailed_psf_all +
    _trails_all +
    _zeropoint_all
)
