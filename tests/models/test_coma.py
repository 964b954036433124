import re

import numpy as np
import pytest
from scipy import integrate

from photpipe.models.coma import (
    azimuthal_term_image,
    coma_image,
    inverse_rho_pixel_integral,
    power_law_antiderivative,
    power_law_coma_image,
    power_law_pixel_integral,
)


def test_centred_pixel_integral_is_4_ln_1_plus_sqrt2():
    # Over the square |x|, |y| <= s/2, by symmetry 8 times the triangle 0 <= y <= x <= s/2:
    # 8 ∫_0^{s/2} dx ∫_0^x dy / sqrt(x² + y²) = 8 ∫_0^{s/2} asinh(1) dx = 4 asinh(1) s, and
    # asinh(1) = ln(1 + sqrt 2) (Gradshteyn & Ryzhik 2007, 2.271 and 1.622); 4 ln(1 + √2) = 3.52549
    expected = 4.0 * np.log(1.0 + np.sqrt(2.0))
    for s in (1.0, 0.5, 3.0):
        val = inverse_rho_pixel_integral(np.array([-s / 2, s / 2]), np.array([-s / 2, s / 2]))
        assert val[0, 0] == pytest.approx(expected * s, rel=1e-13)
    assert expected == pytest.approx(3.5255, abs=5e-5)  # issue 5 quotes "about 3.5255 K s"
    assert coma_image((3, 3), 1.0, 1.0, 2.0)[1, 1] == pytest.approx(2.0 * expected, rel=1e-13)


def _quad(f, x1, x2, y1, y2):
    """dblquad over a rectangle, split through the origin so a singularity sits at corners."""
    xs = [x1, 0.0, x2] if x1 < 0 < x2 else [x1, x2]
    ys = [y1, 0.0, y2] if y1 < 0 < y2 else [y1, y2]
    tot = 0.0
    for xa, xb in zip(xs[:-1], xs[1:]):
        for ya, yb in zip(ys[:-1], ys[1:]):
            tot += integrate.dblquad(f, xa, xb, ya, yb, epsabs=1e-12, epsrel=1e-10)[0]
    return tot


@pytest.mark.parametrize("gamma", [pytest.param(g, id=f"gamma={g}") for g in (0.4, 1.0, 1.5, 1.9)])
def test_power_law_pixel_integral_matches_adaptive_quadrature(gamma):
    # reference: scipy's adaptive 2-D quadrature of ρ^-γ over the pixel (an independent method)
    xe = np.arange(-7.5, 8.0) + 0.27
    ye = np.arange(-7.5, 8.0) - 0.41
    got = power_law_pixel_integral(xe, ye, gamma)
    for i, j in [(7, 7), (7, 8), (8, 7), (6, 9), (0, 0), (7, 14), (3, 12)]:
        ref = _quad(lambda y, x: (x * x + y * y) ** (-gamma / 2), xe[j], xe[j + 1], ye[i],
                    ye[i + 1])
        # exact corner formula near the centre, midpoint + Laplacian term beyond EXACT_RADIUS
        # (next term of the midpoint rule: ~γ²(γ+2)²/(1920 ρ⁴), 2e-5 at ρ = 6, γ = 1.9)
        assert got[i, j] == pytest.approx(ref, rel=3e-5)


def test_centred_pixel_of_power_law_in_closed_form():
    # the centred unit square: 8 ∫_0^{1/2} dx x^(1-γ) ∫_0^1 (1+u²)^(-γ/2) du; for γ = 0 it is the
    # area, 1 (elementary)
    val = power_law_pixel_integral(np.array([-0.5, 0.5]), np.array([-0.5, 0.5]), 1e-9)
    assert val[0, 0] == pytest.approx(1.0, rel=1e-8)


def test_gamma_one_matches_asinh_form_everywhere():
    e = np.arange(-20.5, 21.0) + 0.13
    a = power_law_antiderivative(e[None, :], e[:, None], 1.0)
    from photpipe.models.coma import inverse_rho_antiderivative
    b = inverse_rho_antiderivative(e[None, :], e[:, None])
    np.testing.assert_allclose(a, b, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(power_law_coma_image((41, 41), 20.3, 19.6, 2.0, 1.0),
                               coma_image((41, 41), 20.3, 19.6, 2.0), rtol=1e-13)


def test_total_coma_flux_inside_radius():
    # A K/ρ coma holds 2π K R inside radius R (A'Hearn et al. 1984, the basis of Afρ); the pixel
    # integrals of a large image must add up to the integral over the square, which is
    # 4 ∫∫ over a quadrant: 8 R asinh(1) for the square of half-side R (as above)
    img = power_law_coma_image((201, 201), 100.0, 100.0, 1.0, 1.0)
    assert img.sum() == pytest.approx(8 * 100.5 * np.log(1 + np.sqrt(2)), rel=1e-12)
    # for general γ, the square of half-side R holds R^(2-γ) times that of the unit half-side
    a = power_law_coma_image((201, 201), 100.0, 100.0, 1.0, 1.4).sum()
    b = power_law_coma_image((21, 21), 10.0, 10.0, 1.0, 1.4).sum()
    assert a / b == pytest.approx((100.5 / 10.5) ** 0.6, rel=2e-5)


@pytest.mark.parametrize("m,phase", [pytest.param(1, "cos", id="cos1"),
                                     pytest.param(1, "sin", id="sin1"),
                                     pytest.param(2, "cos", id="cos2")])
def test_azimuthal_terms_match_quadrature(m, phase):
    gamma = 1.2
    trig = np.cos if phase == "cos" else np.sin
    img = azimuthal_term_image((15, 15), 7.3, 6.8, gamma, m, phase=phase, oversample=16)

    def f(y, x):
        return (x * x + y * y) ** (-gamma / 2) * trig(m * np.arctan2(y, x))

    # the pixel holding the centre is excluded: the sub-grid mean is good to ~10 % there only
    for i, j in [(6, 9), (9, 7), (2, 12), (7, 14), (7, 8)]:
        ref = _quad(f, j - 0.5 - 7.3, j + 0.5 - 7.3, i - 0.5 - 6.8, i + 0.5 - 6.8)
        assert img[i, j] == pytest.approx(ref, rel=2e-3, abs=2e-4)


@pytest.mark.parametrize("gamma", [pytest.param(0.0, id="zero"), pytest.param(2.0, id="two")])
def test_gamma_out_of_range_raises(gamma):
    with pytest.raises(ValueError, match=re.escape("power-law index 'gamma' must lie in (0, 2)")):
        power_law_antiderivative(1.0, 1.0, gamma)


def test_bad_phase_raises():
    with pytest.raises(ValueError, match="'phase' must be 'cos' or 'sin'"):
        azimuthal_term_image((5, 5), 2.0, 2.0, 1.0, 1, phase="tan")
