import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u

from photpipe.size import ICES, Ice, get_ice, vapour_pressure


def murphy_koop_ice(t):
    """Vapour pressure over hexagonal ice, Pa (Murphy & Koop 2005, QJRMS 131, 1539, eq. 7)."""
    return np.exp(9.550426 - 5723.265 / t + 3.53068 * np.log(t) - 0.00728332 * t)


@pytest.mark.parametrize("t, rtol", [
    # Murphy & Koop 2005 eq. 7 (valid above 110 K); the two-constant law drifts at low T
    pytest.param(273.16, 0.01, id="273K"), pytest.param(230.0, 0.01, id="230K"),
    pytest.param(200.0, 0.01, id="200K"), pytest.param(170.0, 0.01, id="170K"),
    pytest.param(150.0, 0.05, id="150K"), pytest.param(130.0, 0.12, id="130K"),
])
def test_water_against_murphy_koop(t, rtol):
    p = vapour_pressure("H2O", t * u.K).to_value(u.Pa)
    assert p == pytest.approx(murphy_koop_ice(t), rel=rtol)


def test_co2_normal_sublimation_point():
    # CO2 sublimes at 194.7 K under 101325 Pa (CRC Handbook of Chemistry and Physics; common
    # practice)
    assert vapour_pressure("CO2", 194.7 * u.K).to_value(u.Pa) == pytest.approx(101325, rel=0.05)


def test_co_triple_point():
    # CO triple point 68.1 K, 15.4 kPa (CRC Handbook; from memory)
    assert vapour_pressure("CO", 68.1 * u.K).to_value(u.Pa) == pytest.approx(15.4e3, rel=0.15)


@pytest.mark.parametrize("name, molar_enthalpy_kj, rtol", [
    # sublimation enthalpies near the temperatures of interest: H2O 51.0 kJ/mol
    # (Murphy & Koop 2005, eq. 5 near 200 K), CO2 26.1 kJ/mol and CO 6.9 kJ/mol (NIST Chemistry
    # WebBook; from memory)
    pytest.param("H2O", 51.0, 0.02, id="H2O"),
    pytest.param("CO2", 26.1, 0.05, id="CO2"),
    pytest.param("CO", 6.9, 0.15, id="CO"),
])
def test_latent_heats(name, molar_enthalpy_kj, rtol):
    ice = ICES[name]
    per_mol = ice.latent_heat * ice.molar_mass * 1e-3 / 1e3  # J/kg -> kJ/mol
    assert per_mol == pytest.approx(molar_enthalpy_kj, rel=rtol)


@pytest.mark.parametrize("name", sorted(ICES))
def test_clausius_clapeyron_consistency(name):
    # d ln P / dT = L m / (k T^2) (Clausius-Clapeyron, ideal vapour), checked numerically
    ice = ICES[name]
    t, h = 0.5 * ice.pressure_temperature / 30.0, 1e-4
    slope = (np.log(ice.pressure(t + h)) - np.log(ice.pressure(t - h))) / (2 * h)
    k = const.k_B.to_value(u.J / u.K)
    assert slope == pytest.approx(ice.latent_heat * ice.molecule_mass / (k * t**2), rel=1e-7)


def test_hertz_knudsen_mass_flux_with_units():
    # Z = P sqrt(m / (2 π k T)) (Hertz-Knudsen, unit sticking), evaluated with astropy units
    ice, t = ICES["H2O"], 200.0 * u.K
    m = 18.015 * const.u
    z = (vapour_pressure("H2O", t) * np.sqrt(m / (2 * np.pi * const.k_B * t))).to(
        u.kg / u.m**2 / u.s)
    assert ice.mass_flux(200.0) == pytest.approx(z.value, rel=1e-12)


def test_lookup_errors():
    assert get_ice(ICES["CO"]) is ICES["CO"]
    with pytest.raises(ValueError, match="unknown species 'NH3'"):
        get_ice("NH3")
    with pytest.raises(TypeError, match="'species' must be a name"):
        get_ice(3)
    with pytest.raises(ValueError, match="'temperature' must be finite and positive"):
        vapour_pressure("H2O", 0 * u.K)
    custom = Ice("X", 10.0, 1e10, 1000.0, "test")
    assert vapour_pressure(custom, 1000 * u.K).to_value(u.Pa) == pytest.approx(1e10 / np.e)
