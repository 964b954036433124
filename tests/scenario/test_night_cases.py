"""The named night cases: what each holds, and that its truth is exact at the 0.5 % level."""

from dataclasses import replace

import numpy as np
import pytest
from photutils.aperture import CircularAperture

from photpipe.scenario import NIGHT_CASES, case_night_size, render_case, trail_vector


def _aperture(image, x, y, r):
    return float(CircularAperture((x, y), r=r).do_photometry(image)[0][0])


def test_every_named_case_is_there():
    # the nights an independent generator found hard (see the module docstring of cases.py)
    assert set(NIGHT_CASES) >= {"nominal", "wcs_offset", "poor_seeing", "comet_trailed",
                                "comet_tracked", "no_nucleus", "no_coma", "faint_nucleus"}


@pytest.mark.parametrize("name", list(NIGHT_CASES))
def test_case_frame_holds_what_the_case_says(name):
    cf = render_case(name, 3, shape=(121, 121), n_catalogued=6)
    case = NIGHT_CASES[name]
    lo, hi = case.fwhm_arcsec
    assert lo / case.pixel_scale_arcsec <= cf.fwhm_pix <= hi / case.pixel_scale_arcsec
    assert (cf.nucleus_flux_e > 0) == case.has_nucleus
    assert (cf.coma_k_e > 0) == case.has_coma
    # the start is off by the header WCS error (plus a centroid error of 0.3 pixel rms)
    off = np.hypot(cf.x_start - cf.x, cf.y_start - cf.y)
    assert off == pytest.approx(case.wcs_offset_arcsec / case.pixel_scale_arcsec, abs=1.5)
    assert len(cf.star_xy) == 6 and len(cf.faint_xy) == case.n_faint
    assert np.all(np.isfinite(cf.frame.data))
    assert 12 <= case_night_size(case, 1) <= 40


def test_trail_is_rate_times_exposure():
    # 24"/h for 300 s is 2" of motion (rate × time); position angle 0 is north (+y)
    dx, dy = trail_vector(24.0, 0.0, 300.0, 1.0)
    assert (dx, dy) == pytest.approx((0.0, 2.0))
    cf = render_case("comet_trailed", 5, n_catalogued=4)
    assert np.hypot(*cf.comet_trail) == pytest.approx(cf.rate_arcsec_h * 300.0 / 3600.0)
    assert cf.star_trail == (0.0, 0.0)
    tracked = render_case("comet_tracked", 5, n_catalogued=4)
    assert tracked.comet_trail == (0.0, 0.0)
    assert np.hypot(*tracked.star_trail) == pytest.approx(60.0 * 240.0 / 3600.0)


def _moments(img, x, y, direction):
    yy, xx = np.mgrid[0:img.shape[0], 0:img.shape[1]]
    t = (xx - x) * direction[0] + (yy - y) * direction[1]
    return img.sum(), np.sum(img * t) / img.sum(), np.sum(img * t**2) / img.sum()


def test_trailed_nucleus_keeps_its_flux_and_spreads_along_the_trail():
    # a uniform motion of length L adds L²/12 to the second moment along it (the variance of a
    # uniform distribution, common practice), moves no light and takes none away
    bare = replace(NIGHT_CASES["comet_trailed"], nucleus_fraction=None, n_faint=0,
                   n_blended=0, extra={"rate_range": (60.0, 60.0)})
    still = replace(bare, rate_arcsec_h=0.0, extra={})
    kw = dict(shape=(81, 81), n_catalogued=0)
    moving, fixed = render_case(bare, 6, **kw), render_case(still, 6, **kw)
    length = np.hypot(*moving.comet_trail)
    assert length == pytest.approx(5.0)
    direction = np.array(moving.comet_trail) / length
    f1, m1, v1 = _moments(moving.signal - moving.sky_e, moving.x, moving.y, direction)
    f0, m0, v0 = _moments(fixed.signal - fixed.sky_e, fixed.x, fixed.y, direction)
    assert f1 == pytest.approx(moving.nucleus_flux_e, rel=2e-3)  # wings past the frame
    assert f1 == pytest.approx(f0, rel=1e-4)
    assert m1 == pytest.approx(m0, abs=1e-3)
    # the second moment of a β = 3 Moffat grows (logarithmically) with the window, and the
    # trailed stamp is wider by the trail: a 2 % allowance
    assert v1 - v0 == pytest.approx(length**2 / 12.0, rel=0.02)


def test_nucleus_fraction_is_exact():
    # the coma strength is set from the noise-free nucleus and coma images, apart: the share
    # of the nucleus within one FWHM of the rendered comet is what the case asks
    cf = render_case("faint_nucleus", 4, shape=(121, 121), n_catalogued=0)
    case = NIGHT_CASES["faint_nucleus"]
    assert cf.nucleus_fraction == case.nucleus_fraction


@pytest.mark.parametrize("name", ["nominal", "comet_trailed", "poor_seeing"])
def test_rendering_is_exact_at_half_a_percent(name):
    # the truth must hold to 0.5 %: the same frame (same seed) with the nucleus's pixels on a
    # 9x9 sub-grid and the coma's core 7x finer, against 15x15 and 13x finer
    base = render_case(name, 2, shape=(81, 81), n_catalogued=0)
    fine = render_case(name, 2, shape=(81, 81), n_catalogued=0, oversample=15,
                       core_oversample=13)
    comet = base.signal - base.sky_e
    comet_fine = fine.signal - fine.sky_e
    r = np.hypot(*np.mgrid[0:81, 0:81][::-1] - np.array([base.x, base.y])[:, None, None])
    core = r < 2.0 * base.fwhm_pix
    rel = np.abs(comet[core] - comet_fine[core]) / comet_fine[core]
    assert rel.max() < 0.005
    for radius in (1.0, 2.0, 4.0):
        a = _aperture(comet, base.x, base.y, radius * base.fwhm_pix)
        b = _aperture(comet_fine, base.x, base.y, radius * base.fwhm_pix)
        assert a == pytest.approx(b, rel=0.001)
