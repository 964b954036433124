"""Bad frames in the nucleus path: each row says which, and every later stage goes on.

A fit that hits its position bound, a cutout crowded by a catalogued star on the nucleus and a
frame with no usable PSF star each give an upper limit flagged with the reason; unusable core
pixels leave the nucleus out (NaN) with the reason. The rows then go through the lightcurve,
the rotation search and H with the rest of a campaign: limits stay limits and are counted, the
left-out row is set aside with its reason, nothing else is lost. Truth: the scenario generator
(`photpipe.scenario.render_case`) and the synthetic campaign (`photpipe.rotation.synthetic`).
"""

import warnings
from dataclasses import replace

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.nucleus import fit_nucleus, measure_psf, nucleus_table
from photpipe.rotation import reduce_lightcurve, search_rotation, synthetic_lightcurve
from photpipe.rotation.errors import RotationWarning
from photpipe.scenario import render_case
from photpipe.size import mean_absolute_magnitude

SCALE = 1.0 * u.arcsec / u.pix


def _fit(cf, frame=None, psf=None, x=None, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        if psf is None:
            psf = measure_psf(cf.frame, cf.star_xy, exclude_xy=(cf.x_start, cf.y_start),
                              exclude_radius=20.0, methods=("moffat",))
        opts = dict(pixel_scale=SCALE, cutout=61, star_xy=cf.star_xy, profile=False,
                    zero_point=25.0, zero_point_err=0.01)
        opts.update(kw)
        return fit_nucleus(cf.frame if frame is None else frame,
                           cf.x_start if x is None else x, cf.y_start, psf, **opts)


@pytest.fixture(scope="module")
def bad_fits():
    cf = render_case("nominal", 70)
    data = cf.frame.data.copy()
    ix, iy = int(round(cf.x)), int(round(cf.y))
    data[iy - 2:iy + 3, ix - 2:ix + 3] = np.nan
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        no_star_psf = measure_psf(cf.frame, np.zeros((0, 2)), fallback_fwhm=2.5)
    return {
        "fit_at_bound": _fit(cf, x=cf.x + 2.0, max_shift=0.5, search_radius=0.0),
        "star_near_nucleus": _fit(cf, star_xy=np.vstack([cf.star_xy, [[cf.x + 1.5, cf.y]]])),
        "psf_fallback": _fit(cf, psf=no_star_psf),
        "core_masked": _fit(cf, frame=replace(cf.frame, data=data)),
    }


def test_each_bad_frame_row_says_which(bad_fits):
    table = nucleus_table(list(bad_fits.values()))
    for row, reason in zip(table, bad_fits):
        words = str(row["flags"]).split(",")
        assert reason in words
        if reason == "core_masked":  # left out: no value, no limit
            assert np.isnan(row["nucleus_mag"]) and "upper_limit" not in words
        else:  # an upper limit: a bright limit, no error
            assert "upper_limit" in words and np.isfinite(row["nucleus_mag"])
            assert np.isnan(row["nucleus_mag_err"])


def test_later_stages_go_on_with_the_rest(bad_fits):
    table, truth = synthetic_lightcurve(n_nights=4, noise=0.02 * u.mag,
                                        rng=np.random.default_rng(4))
    n = len(table)
    table["flags"] = table["flags"].astype("<U200")
    bad_rows = nucleus_table(list(bad_fits.values()))
    # the bad frames take the place of four campaign frames, their flags and value kind kept
    # (a limit 0.3 mag brighter than the frame's true magnitude, NaN for the left-out one)
    for i, row in zip((5, 30, 60, 90), bad_rows):
        limit = "upper_limit" in str(row["flags"]).split(",")
        table["nucleus_mag"][i] = table["nucleus_mag"][i] - 0.3 if limit else np.nan
        table["nucleus_mag_err"][i] = np.nan
        table["flags"][i] = str(row["flags"])
    with pytest.warns(RotationWarning, match="core_masked"):
        lc = reduce_lightcurve(table)
    assert lc.n_points == n - 1 and int(lc.upper_limit.sum()) == 3
    assert lc.set_aside[0][0] == table["frame"][90] and "core_masked" in lc.set_aside[0][1]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PoorResultWarning)
        res = search_rotation(lc, n_bootstrap=0, rng=np.random.default_rng(1))
    assert res.n_upper_limits_set_aside == 3 and res.n_points == n - 4
    assert "3 upper limits" in res.summary()
    det = ~lc.upper_limit
    h = mean_absolute_magnitude(lc.mag[det], lc.mag_err[det], method="rotation-unknown",
                                times=lc.epoch_mjd[det] * u.day)
    assert np.isfinite(h.H) and h.n_points == n - 4
