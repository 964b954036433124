import numpy as np
from astropy import units as u

from photpipe.rotation import (
    periodogram_figure,
    phased_figure,
    reduce_lightcurve,
    residuals_figure,
    search_rotation,
    synthetic_lightcurve,
)


def test_three_figures():
    table, _ = synthetic_lightcurve(rng=np.random.default_rng(3))
    res = search_rotation(reduce_lightcurve(table), min_period=3 * u.h, max_period=20 * u.h,
                          n_bootstrap=0, rng=np.random.default_rng(3))
    assert len(periodogram_figure(res).axes) == 3
    phased = phased_figure(res)
    assert "phase" in phased.axes[0].get_xlabel()
    assert "model" in residuals_figure(res).axes[0].get_ylabel()
