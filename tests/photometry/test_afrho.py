import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u

from photpipe.photometry import afrho, afrho_uncertainty


def test_hand_computation():
    # A'Hearn et al. 1984, AJ 89, 579: Afρ = 4 r² Δ² / ρ · 10^(0.4 (m_sun - m)), r in AU,
    # Δ and ρ in cm. By hand: 4 · 1.5² · (1.495978707e13 cm)² / 1e9 cm · 10^(-15.66)
    # = 2.014157e18 · 2.187762e-16 = 440.65 cm ("about 440.7 cm", issue 4)
    a = afrho(12.00 * u.mag, -27.15 * u.mag, 1.5 * u.au, 1.0 * u.au, 1e4 * u.km)
    assert a.unit == u.cm
    assert a.to_value(u.cm) == pytest.approx(440.65, abs=0.01)


def test_against_flux_ratio_definition():
    # same definition written with fluxes and the IAU AU (astropy.constants), A'Hearn et al. 1984
    r_h, delta, rho = 2.3, 0.8 * const.au, 5000 * u.km
    m, m_sun = 14.2, -26.76
    ratio = 10 ** (-0.4 * (m - m_sun))
    expected = ((2 * delta * r_h) ** 2 / rho * ratio).to(u.cm)
    got = afrho(m * u.mag, m_sun * u.mag, r_h * u.au, 0.8 * u.au, rho)
    assert got.to_value(u.cm) == pytest.approx(expected.value, rel=1e-12)


def test_one_over_rho_coma_is_constant():
    # a K/ρ coma has F(ρ) ∝ ρ, so m(ρ) = m(ρ0) - 2.5 log10(ρ/ρ0) and Afρ is constant
    # (A'Hearn et al. 1984)
    rho = np.array([2e3, 5e3, 1e4, 4e4]) * u.km
    mag = 13.0 - 2.5 * np.log10((rho / rho[0]).to_value(u.one))
    a = afrho(mag, -27.15, 1.2 * u.au, 0.5 * u.au, rho)
    np.testing.assert_allclose(a.value, a.value[0], rtol=1e-12)


def test_uncertainty_matches_numerical_derivative():
    m, dm = 12.0, 0.03
    a0 = afrho(m, -27.15, 1.5 * u.au, 1.0 * u.au, 1e4 * u.km)
    a1 = afrho(m + 1e-6, -27.15, 1.5 * u.au, 1.0 * u.au, 1e4 * u.km)
    deriv = (a1 - a0).value / 1e-6
    err = afrho_uncertainty(a0, dm * u.mag)
    assert err.to_value(u.cm) == pytest.approx(abs(deriv) * dm, rel=1e-4)


def test_uncertainty_with_geometry():
    # (σ_A/A)² = (0.4 ln10 σ_m)² + (2σ_r/r)² + (2σ_Δ/Δ)² (first-order propagation)
    err = afrho_uncertainty(100 * u.cm, 0.0 * u.mag, r_h=2 * u.au, r_h_err=0.01 * u.au,
                            delta=1 * u.au, delta_err=0.005 * u.au)
    assert err.to_value(u.cm) == pytest.approx(100 * np.hypot(0.01, 0.01), rel=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "error", "match"),
    [
        pytest.param({"r_h": -1 * u.au}, ValueError, "'r_h' must be finite and positive",
                     id="negative-rh"),
        pytest.param({"delta": 1.0}, TypeError, "'delta' must be an astropy Quantity",
                     id="delta-no-unit"),
        pytest.param({"rho": 5 * u.s}, ValueError, "'rho' must have units convertible",
                     id="rho-wrong-unit"),
    ],
)
def test_bad_input(kwargs, error, match):
    args = {"mag": 12.0, "m_sun": -27.15, "r_h": 1.5 * u.au, "delta": 1 * u.au,
            "rho": 1e4 * u.km}
    args.update(kwargs)
    with pytest.raises(error, match=match):
        afrho(**args)
