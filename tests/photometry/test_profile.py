import numpy as np
import pytest

from photpipe.models.coma import coma_image
from photpipe.photometry import annulus_means, profile_slope, sector_selection


def test_exact_coma_has_slope_minus_one():
    # an exactly pixel-integrated K/ρ coma (photpipe.models.coma, Gradshteyn & Ryzhik 2.271)
    # has d log Σ / d log ρ = -1 (steady state, Jewitt & Meech 1987, AJ 93, 1542)
    shape = (401, 401)
    img = coma_image(shape, 200.3, 199.8, 500.0)
    yy, xx = np.mgrid[: shape[0], : shape[1]]
    rho = np.hypot(xx - 200.3, yy - 199.8)
    edges = np.geomspace(5, 180, 20)
    r, m, e, n = annulus_means(img, np.ones(shape), rho, edges)
    slope, slope_err, used = profile_slope(r, m, np.full(m.shape, 1e-3) * m, rho_range=(5, 180))
    assert slope == pytest.approx(-1.0, abs=0.005)
    assert used == 19


def test_annulus_means_against_loop():
    # oracle: a plain loop over annuli
    rng = np.random.default_rng(41)
    values = rng.normal(10, 2, 5000)
    var = rng.uniform(1, 3, 5000)
    rho = rng.uniform(0, 50, 5000)
    edges = np.array([1.0, 5.0, 12.0, 30.0, 50.0])
    r, m, e, n = annulus_means(values, var, rho, edges, sky_error=0.1)
    for i in range(4):
        sel = (rho >= edges[i]) & (rho < edges[i + 1])
        assert n[i] == sel.sum()
        assert m[i] == pytest.approx(values[sel].mean(), rel=1e-12)
        assert r[i] == pytest.approx(rho[sel].mean(), rel=1e-12)
        assert e[i] == pytest.approx(np.hypot(np.sqrt(var[sel].sum()) / sel.sum(), 0.1),
                                     rel=1e-12)


def test_sector_selection_wraps():
    pa = np.array([0.0, 44.0, 46.0, 315.0, 180.0])
    assert sector_selection(pa, 0.0, 45.0).tolist() == [True, True, False, True, False]
    assert sector_selection(pa, 180.0, 45.0).tolist() == [False, False, False, False, True]


def test_slope_needs_three_annuli():
    s, e, n = profile_slope([1.0, 2.0], [1.0, 0.5], [0.1, 0.1], rho_range=(0, 10))
    assert np.isnan(s) and n == 2
