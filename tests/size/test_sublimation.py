import re

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from scipy.integrate import quad
from scipy.optimize import brentq

from photpipe.size import ICES, SOLAR_IRRADIANCE, sublimation_rate

SIGMA = const.sigma_sb.to_value(u.W / u.m**2 / u.K**4)
S0 = 1361.0  # W/m^2, IAU 2015 Resolution B3 nominal total solar irradiance


def brentq_balance(name, r_h, *, albedo, emissivity, factor=1.0):
    """Oracle: the same balance solved one value at a time with scipy's Brent method."""
    ice = ICES[name]
    s = (1 - albedo) * S0 / r_h**2 * factor
    t_rad = (s / (emissivity * SIGMA)) ** 0.25
    t = brentq(lambda t: s - emissivity * SIGMA * t**4 - ice.mass_flux(t) * ice.latent_heat,
               1e-3 * t_rad, t_rad * (1 + 1e-8), xtol=1e-12, rtol=1e-14)
    return t, float(ice.mass_flux(t))


def test_irradiance_constant():
    # IAU 2015 B3 nominal S = 1361 W/m^2; L_sun / (4 π AU^2) from astropy agrees to 0.02%
    assert SOLAR_IRRADIANCE.to_value(u.W / u.m**2) == S0
    assert (const.L_sun / (4 * np.pi * const.au**2)).to_value(u.W / u.m**2) == \
        pytest.approx(S0, rel=2e-4)


@pytest.mark.parametrize("name", sorted(ICES))
@pytest.mark.parametrize("geometry, factor", [
    pytest.param("subsolar", 1.0, id="subsolar"),
    pytest.param("rapid-rotator", 1 / np.pi, id="rapid"),
    pytest.param("isothermal", 0.25, id="isothermal"),
])
def test_vectorised_solver_against_brentq(name, geometry, factor):
    r = np.array([0.3, 0.7, 1.0, 1.8, 3.0, 6.0, 15.0])
    z = sublimation_rate(name, r * u.au, albedo=0.02, emissivity=0.95, geometry=geometry)
    for i, ri in enumerate(r):
        t_ref, z_ref = brentq_balance(name, ri, albedo=0.02, emissivity=0.95, factor=factor)
        assert z.temperature[i].to_value(u.K) == pytest.approx(t_ref, rel=1e-9)
        assert z.mass_flux[i].value == pytest.approx(z_ref, rel=1e-6, abs=1e-300)


def test_sunlit_hemisphere_against_quadrature():
    # day-side mean ∫_0^1 Z(μ) dμ, with the local balance at flux μ S / r^2 (scipy quad oracle)
    r = 1.4
    mean, _ = quad(lambda mu: brentq_balance("H2O", r, albedo=0.01, emissivity=0.9,
                                             factor=mu)[1], 1e-9, 1.0, limit=200)
    z = sublimation_rate("H2O", r * u.au, geometry="sunlit-hemisphere")
    assert z.mass_flux.value == pytest.approx(mean, rel=1e-4)


@pytest.mark.parametrize("name", sorted(ICES))
def test_energy_is_conserved(name):
    z = sublimation_rate(name, [0.5, 1.0, 2.5] * u.au, albedo=0.05, emissivity=0.9)
    t = z.temperature.to_value(u.K)
    absorbed = 0.95 * S0 / np.array([0.5, 1.0, 2.5]) ** 2
    spent = 0.9 * SIGMA * t**4 + z.mass_flux.value * ICES[name].latent_heat
    assert np.allclose(spent, absorbed, rtol=1e-8)


def test_blackbody_limit_far_from_the_sun():
    # no sublimation to speak of at 30 AU for water: an isothermal black body,
    # T = (S / (4 σ))^(1/4) / sqrt(r) = 278.3 K / sqrt(r) (common practice: "278 K at 1 AU")
    z = sublimation_rate("H2O", 30 * u.au, albedo=0.0, emissivity=1.0, geometry="isothermal")
    assert z.temperature.to_value(u.K) == pytest.approx((S0 / (4 * SIGMA)) ** 0.25 / 30**0.5,
                                                        rel=1e-9)
    assert (S0 / (4 * SIGMA)) ** 0.25 == pytest.approx(278.0, abs=0.5)


def test_free_sublimation_limit_close_to_the_sun():
    # CO near the Sun spends nearly all absorbed power on sublimation (Z L -> absorbed flux)
    z = sublimation_rate("CO", 0.5 * u.au, albedo=0.0, emissivity=0.9)
    assert z.mass_flux.value * ICES["CO"].latent_heat == pytest.approx(S0 / 0.25, rel=0.005)


def test_water_at_1_au_published():
    # Water ice at 1 AU, Bond albedo 0.01, ε = 0.9, no conduction:
    # subsolar about 4.5e-4 kg m^-2 s^-1 (1.5e22 molecules m^-2 s^-1) at about 205 K, and an
    # isothermal (or fast-rotating) sphere a few 1e21 molecules m^-2 s^-1 at about 195 K
    # (Cowan & A'Hearn 1979, Moon Planets 21, 155, Fig. 1 and text; values from memory, the
    # paper could not be checked here)
    sub = sublimation_rate("H2O", 1 * u.au, geometry="subsolar")
    iso = sublimation_rate("H2O", 1 * u.au, geometry="isothermal")
    assert sub.mass_flux.value == pytest.approx(4.5e-4, rel=0.15)
    assert sub.number_flux.value == pytest.approx(1.5e22, rel=0.15)
    assert sub.temperature.to_value(u.K) == pytest.approx(205, abs=5)
    assert 1e21 < iso.number_flux.value < 5e21
    assert iso.temperature.to_value(u.K) == pytest.approx(195, abs=5)


def test_co2_at_1_au_published():
    # CO2 ice at 1 AU, subsolar: about 2e-3 kg m^-2 s^-1 (3e22 molecules m^-2 s^-1) near 110 K
    # (Cowan & A'Hearn 1979, Fig. 1; from memory, not checked here); it barely radiates, so
    # close to S (1 - A) / L = 2.27e-3 kg m^-2 s^-1 (energy limit, exact from the inputs)
    sub = sublimation_rate("CO2", 1 * u.au)
    assert sub.mass_flux.value == pytest.approx(2.2e-3, rel=0.2)
    assert sub.mass_flux.value < 0.99 * S0 / ICES["CO2"].latent_heat
    assert sub.temperature.to_value(u.K) == pytest.approx(110, abs=10)


def test_water_falls_as_marsden_law():
    # The water-sublimation curve of an isothermal black nucleus, normalised at 1 AU, follows
    # g(r) = (r/r0)^-m (1 + (r/r0)^n)^-k with r0 = 2.808 AU, m = 2.15, n = 5.093, k = 4.6142
    # (Marsden, Sekanina & Yeomans 1973, AJ 78, 211, eq. 5; constants from memory). Within 15%
    # inside 2.5 AU for A = 0, ε = 1 (their fit's own assumptions differ a little).
    def g(r):
        return (r / 2.808) ** -2.15 * (1 + (r / 2.808) ** 5.093) ** -4.6142

    r = np.array([0.5, 1.0, 1.5, 2.0, 2.5])
    z = sublimation_rate("H2O", r * u.au, albedo=0.0, emissivity=1.0,
                         geometry="isothermal").number_flux.value
    assert np.allclose(z / z[1], g(r) / g(1.0), rtol=0.15)


def test_geometry_ordering_and_monotonic_in_r():
    r = np.geomspace(0.3, 10, 50) * u.au
    rates = {g: sublimation_rate("H2O", r, geometry=g).mass_flux.value
             for g in ["subsolar", "sunlit-hemisphere", "rapid-rotator", "isothermal"]}
    assert np.all(rates["subsolar"] > rates["sunlit-hemisphere"])
    assert np.all(rates["sunlit-hemisphere"] > rates["rapid-rotator"])
    assert np.all(rates["rapid-rotator"] > rates["isothermal"])
    assert np.all(np.diff(rates["subsolar"]) < 0)


def test_table_and_units():
    z = sublimation_rate("CO2", [1.0, 2.0] * u.au)
    t = z.to_table()
    assert t.colnames == ["r_h", "temperature", "mass_flux", "number_flux", "species", "geometry"]
    assert t["mass_flux"].unit == u.kg / u.m**2 / u.s
    assert z.number_flux.value == pytest.approx(z.mass_flux.value / ICES["CO2"].molecule_mass)
    scalar = sublimation_rate("CO2", 1.0 * u.au)
    assert np.ndim(scalar.temperature) == 0 and len(scalar.to_table()) == 1


@pytest.mark.parametrize("kwargs, match", [
    pytest.param({"r_h": 0 * u.au}, "'r_h' must be finite and positive", id="r0"),
    pytest.param({"r_h": 1.0}, "'r_h' must be an astropy Quantity", id="r-plain"),
    pytest.param({"albedo": 1.0}, "'albedo' (Bond) must be in [0, 1)", id="albedo"),
    pytest.param({"emissivity": 0.0}, "'emissivity' must be in (0, 1]", id="emissivity"),
    pytest.param({"geometry": "polar"}, "unknown geometry 'polar'", id="geometry"),
    pytest.param({"species": "N2"}, "unknown species 'N2'", id="species"),
])
def test_bad_input(kwargs, match):
    args = {"species": "H2O", "r_h": 1 * u.au}
    args.update({k: kwargs.pop(k) for k in list(kwargs) if k in args})
    error = TypeError if match.endswith("Quantity") else ValueError
    with pytest.raises(error, match=re.escape(match)):
        sublimation_rate(args["species"], args["r_h"], **kwargs)
