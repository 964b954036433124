import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.wcs import WCS

from photpipe.photometry import (
    RigidTransform,
    apply_to_wcs,
    fit_rigid,
    match_stars,
    pair_nearest,
)


def _wcs(rotation_deg=0.0, crpix=(1024.5, 1024.5)):
    s = 1.0 / 3600
    th = np.radians(rotation_deg)
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [52.0, 18.0]
    w.wcs.crpix = list(crpix)
    w.wcs.cd = [[-s * np.cos(th), s * np.sin(th)], [s * np.sin(th), s * np.cos(th)]]
    return w


@pytest.mark.parametrize(
    ("dx", "dy", "rot"),
    [
        pytest.param(0.0, 0.0, 0.0, id="exact"),
        pytest.param(4.3, -2.7, 0.0, id="shift"),
        pytest.param(-6.0, 3.0, 0.15, id="shift-rotation"),
        pytest.param(15.0, 12.0, -0.3, id="large"),
    ],
)
def test_recovers_shift_and_rotation(dx, dy, rot):
    rng = np.random.default_rng(7)
    ref = rng.uniform(0, 2048, (200, 2))
    truth = RigidTransform(dx=dx, dy=dy, rotation_deg=rot, cx=1023.5, cy=1023.5)
    x, y = truth.apply(ref[:, 0], ref[:, 1])
    det = np.column_stack([x, y]) + rng.normal(0, 0.05, (200, 2))
    # detections come with spurious sources and miss some stars
    det = np.vstack([det[:170], rng.uniform(0, 2048, (60, 2))])
    i_det, i_ref, t = match_stars(det, ref, center=(1023.5, 1023.5), max_offset=40,
                                  tolerance=1.5)
    assert len(i_det) >= 165
    assert np.all(i_det == i_ref)  # the first 170 detections are the stars, in order
    assert t.dx == pytest.approx(dx, abs=0.02)
    assert t.dy == pytest.approx(dy, abs=0.02)
    assert t.rotation_deg == pytest.approx(rot, abs=0.002)


def test_no_match_far_off():
    rng = np.random.default_rng(8)
    ref = rng.uniform(0, 2048, (50, 2))
    i_det, i_ref, t = match_stars(ref + 300.0, ref, center=(1023.5, 1023.5), max_offset=30,
                                  tolerance=1.5)
    assert len(i_det) == 0


def test_pair_nearest_one_to_one():
    det = np.array([[0.0, 0.0]])
    ref = np.array([[0.3, 0.0], [0.1, 0.0]])
    i_det, i_ref = pair_nearest(det, ref, tolerance=1.0)
    assert i_det.tolist() == [0] and i_ref.tolist() == [1]


def test_fit_rigid_exact():
    rng = np.random.default_rng(9)
    p = rng.uniform(0, 1000, (30, 2))
    truth = RigidTransform(dx=1.2, dy=-0.7, rotation_deg=0.4, cx=500, cy=500)
    q = np.column_stack(truth.apply(p[:, 0], p[:, 1]))
    t = fit_rigid(p, q, center=(500, 500))
    assert t.rms < 1e-9
    assert t.rotation_deg == pytest.approx(0.4, abs=1e-9)


@pytest.mark.parametrize("rot", [pytest.param(0.0, id="north-up"),
                                 pytest.param(30.0, id="rotated")])
def test_apply_to_wcs_matches_transform(rot):
    # the corrected WCS maps the sky to p' = R (p - c) + c + t of the header WCS's pixels
    # (Calabretta & Greisen 2002, A&A 395, 1077, linear part)
    w = _wcs(rot)
    t = RigidTransform(dx=3.2, dy=-1.1, rotation_deg=0.25, cx=1023.5, cy=1023.5)
    w2 = apply_to_wcs(w, t)
    sky = SkyCoord([52.0, 52.2, 51.8] * u.deg, [18.0, 18.1, 17.85] * u.deg)
    x, y = w.world_to_pixel(sky)
    x2, y2 = w2.world_to_pixel(sky)
    xe, ye = t.apply(x, y)
    np.testing.assert_allclose(x2, xe, atol=1e-6)
    np.testing.assert_allclose(y2, ye, atol=1e-6)


def test_apply_to_wcs_pc_form():
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [52.0, 18.0]
    w.wcs.crpix = [100.5, 100.5]
    w.wcs.cdelt = [-1 / 3600, 1 / 3600]
    t = RigidTransform(dx=1.0, dy=2.0, rotation_deg=0.5, cx=50, cy=50)
    w2 = apply_to_wcs(w, t)
    sky = SkyCoord(52.01 * u.deg, 18.02 * u.deg)
    x, y = w.world_to_pixel(sky)
    x2, y2 = w2.world_to_pixel(sky)
    xe, ye = t.apply(x, y)
    assert (float(x2), float(y2)) == pytest.approx((float(xe), float(ye)), abs=1e-6)
