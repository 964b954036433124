"""The period-search methods, one module each, behind a name -> function table."""

from photpipe.rotation.methods.fourier import (
    ORDER_CRITERIA,
    choose_order,
    fourier_periodogram,
    refine_order_peaks,
)
from photpipe.rotation.methods.lombscargle import LS_ENGINES, lomb_scargle_periodogram
from photpipe.rotation.methods.pdm import pdm_periodogram, pdm_theta

__all__ = ["METHODS", "lomb_scargle_periodogram", "fourier_periodogram", "pdm_periodogram",
           "pdm_theta", "choose_order", "refine_order_peaks", "ORDER_CRITERIA", "LS_ENGINES"]

#: Method name -> function(t, y, dy, grid, **options) -> Periodogram.
METHODS = {
    "lomb-scargle": lomb_scargle_periodogram,
    "fourier": fourier_periodogram,
    "pdm": pdm_periodogram,
}
