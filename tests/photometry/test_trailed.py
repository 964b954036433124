"""Stars trailed by a telescope that followed the comet: apertures, centres, PSF, zero point."""

import numpy as np
import pytest
from astropy import units as u

from photpipe.models.moffat import moffat_alpha, moffat_fwhm
from photpipe.photometry import (
    fit_trailed_moffat,
    measure_fwhm_minor,
    measured_fwhm_of_moffat,
    merge_trail_detections,
    segment_distance,
    solve_frame,
    trail_centroids,
)
from photpipe.photometry.trailed import _stadium_weights
from photpipe.scenario.psf import TrailedMoffat

from ._synthetic import make_synthetic, measure_recording

#: 360"/h for 60 s at 1"/pix: the comet moves 6 pixels, along (cos 30°, sin 30°) on the sky
RATE = (311.8, 180.0) * u.arcsec / u.h
OPTIONS = {"band": "R", "apertures_km": (10000, 20000) * u.km}


@pytest.mark.parametrize("radius,trail", [(3.0, (6.0, 0.0)), (4.5, (3.0, 4.0)),
                                          (2.0, (-5.5, 2.5))])
def test_stadium_area_is_pi_r2_plus_2rl(radius, trail):
    # area of all points within r of a segment of length L: π r² + 2 r L (plane geometry)
    _, (w,) = _stadium_weights((80, 80), 40.3, 39.6, trail, [radius], radius + 5, 7)
    exact = np.pi * radius**2 + 2 * radius * np.hypot(*trail)
    assert w.sum() == pytest.approx(exact, rel=3e-3)


def test_trailed_star_flux_and_centre():
    # a star of 1e5 electrons trailed 7 px at 30° on a flat sky of 50 e: the stadium of
    # 4 FWHM holds it all (Moffat β = 3 outside 4 FWHM + the sky ring's share: < 1 %)
    psf = TrailedMoffat(2.5, 3.0, 0.0, 0.0, (7 * np.cos(0.5), 7 * np.sin(0.5)))
    img = np.full((101, 101), 50.0)
    s = psf.stamp(0.3, -0.2) * 1e5
    h = s.shape[0] // 2
    img[50 - h:51 + h, 50 - h:51 + h] += s
    trail = (7 * np.cos(0.5), 7 * np.sin(0.5))
    # start at one end of the trail, as a peak may
    cx, cy = trail_centroids(img, img > 0, [50.3 + 3.0], [49.8 + 1.6], trail, radius=4.0)
    assert (cx[0], cy[0]) == (pytest.approx(50.3, abs=0.05), pytest.approx(49.8, abs=0.05))
    from photpipe.photometry import measure_trailed_fluxes

    t = measure_trailed_fluxes(img, np.full(img.shape, 50.0), np.zeros(img.shape, bool), cx, cy,
                               trail=trail, radii=[10.0], annulus=(12.5, 20.0))
    assert float(t["flux_0"][0]) == pytest.approx(1e5, rel=0.01)
    # across the trail: what a Gaussian core fit gives for the untrailed Moffat star
    untrailed = measured_fwhm_of_moffat(moffat_alpha(2.5, 3.0), 3.0)
    assert measure_fwhm_minor(img, cx, cy, sky=50.0) == pytest.approx(untrailed, rel=0.1)


def test_peaks_of_one_trail_merge():
    x = np.array([10.0, 12.8, 30.0, 10.5])
    y = np.array([10.0, 10.4, 10.0, 13.0])
    assert merge_trail_detections(x, y, (6.0, 0.0), radius=1.5).tolist() == [
        True, False, True, True]
    assert segment_distance([4.0], [0.0], (6.0, 0.0))[0] == pytest.approx(1.0)


def test_untrailed_moffat_from_trailed_stars():
    rng = np.random.default_rng(3)
    trail = (5.0, -3.0)
    psf = TrailedMoffat(2.8, 3.5, 0.0, 0.0, trail)
    img = np.full((120, 200), 40.0)
    s = psf.stamp(0.0, 0.0)
    h = s.shape[0] // 2
    xs = [35, 100, 165]
    for xc in xs:
        img[60 - h:61 + h, xc - h:xc + h + 1] += 3e5 * s
    img = img + rng.normal(0.0, 1.0, img.shape) * np.sqrt(img)
    alpha, beta = fit_trailed_moffat(img, img, img > 0, xs, [60.0] * 3, trail, fwhm_guess=3.5)
    assert moffat_fwhm(alpha, beta) == pytest.approx(2.8, rel=0.03)
    assert beta == pytest.approx(3.5, rel=0.15)


@pytest.fixture(scope="module")
def tracked_pair():
    side = make_synthetic(rate=RATE, seed=21)
    comet = make_synthetic(rate=RATE, seed=21, tracking="comet",
                           header_extra={"TRACKING": "NON-SIDEREAL"})
    return side, comet


@pytest.mark.slow
def test_trailed_stars_give_the_zero_point_of_round_ones(tracked_pair):
    side, comet = tracked_pair
    assert np.hypot(*comet.truth.star_trail) == pytest.approx(6.0, rel=0.02)
    a, _ = measure_recording(side.frame, side.stars, side.geometry, **OPTIONS)
    # the header says TRACKING = NON-SIDEREAL; the configured "sidereal" gives way
    b, _ = measure_recording(comet.frame, comet.stars, comet.geometry, **OPTIONS)
    assert b.details["tracking"]["source"] == "header"
    assert np.hypot(*b.details["star_trail_pix"]) == pytest.approx(6.0, rel=0.02)
    for res in (a, b):  # rendered zero point 25.0 (make_synthetic)
        assert abs(res.zero_point.zp - 25.0) < 3 * res.zero_point.zp_err
    assert b.zero_point.zp_err < 2.0 * a.zero_point.zp_err
    assert b.zero_point.n_stars > 0.6 * a.zero_point.n_stars
    # the untrailed PSF and FWHM of the round stars, from the trailed ones
    assert b.details["fwhm_pix"] == pytest.approx(a.details["fwhm_pix"], rel=0.08)
    assert b.details["psf_moffat"]["fwhm_pix"] == pytest.approx(2.5, rel=0.06)
    # the comet's magnitudes (its own light is untrailed here, trailed 6 px there)
    assert np.all(np.abs(a.comet["mag"] - b.comet["mag"]).to_value(u.mag)
                  < 3 * np.hypot(a.comet["mag_err"], b.comet["mag_err"]).to_value(u.mag))
    # the configured mode, without the header's word, gives the same numbers
    c, _ = measure_recording(comet.frame, comet.stars, comet.geometry, tracking="comet",
                            tracking_check=False, **OPTIONS)
    assert c.zero_point.zp == b.zero_point.zp


@pytest.mark.slow
def test_plate_solution_of_trailed_stars(tracked_pair):
    _, comet = tracked_pair
    frame, sol, _ = solve_frame(comet.frame, comet.stars, band="R", pixel_scale=1.0 * u.arcsec,
                                trail_length=6.0)
    assert sol.median_arcsec < 0.2  # the goal for every frame (issue's plate-solving target)
