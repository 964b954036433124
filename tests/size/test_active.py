import re

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.size import active_fraction, sublimation_rate

Q = 150 * u.kg / u.s


def test_single_ice_area_is_q_over_rate():
    # A = Q / Z and fraction = A / (4 π R^2): the definition (e.g. A'Hearn et al. 1995,
    # Icarus 118, 223, "active area"; from memory)
    af = active_fraction(Q, 1.5 * u.au, 3.0 * u.km, {"H2O": 1.0})
    z = sublimation_rate("H2O", 1.5 * u.au).mass_flux.to_value(u.kg / u.m**2 / u.s)
    assert af.active_area.to_value(u.m**2) == pytest.approx(150 / z, rel=1e-12)
    assert af.fraction == pytest.approx(150 / z / (4 * np.pi * 3000.0**2), rel=1e-12)
    assert af.flags == ()


def test_mix_adds_areas_of_each_ice():
    mix = {"H2O": 0.6, "CO2": 0.3, "CO": 0.1}
    af = active_fraction(Q, 2.0 * u.au, 2.0 * u.km, mix, geometry="isothermal")
    expected = sum(f * 150 / sublimation_rate(k, 2.0 * u.au, geometry="isothermal")
                   .mass_flux.to_value(u.kg / u.m**2 / u.s) for k, f in mix.items())
    assert af.active_area.to_value(u.m**2) == pytest.approx(expected, rel=1e-12)
    d = af.to_dict()
    assert set(d["active_area_by_ice_km2"]) == set(mix)
    assert d["sublimation_geometry"] == "isothermal"


def test_subsolar_gives_the_smallest_fraction():
    fr = {g: active_fraction(Q, 1.3 * u.au, 2.5 * u.km, geometry=g).fraction
          for g in ["subsolar", "sunlit-hemisphere", "isothermal"]}
    assert fr["subsolar"] < fr["sunlit-hemisphere"] < fr["isothermal"]


def test_hyperactive_warns_and_flags():
    with pytest.warns(PoorResultWarning, match="exceeds the nucleus surface"):
        af = active_fraction(1e5 * u.kg / u.s, 1.0 * u.au, 0.3 * u.km, {"H2O": 1.0})
    assert af.fraction > 1 and af.flags == ("exceeds_surface",)


@pytest.mark.parametrize("composition, error, match", [
    pytest.param({"H2O": 0.7, "CO2": 0.2}, ValueError, "must add up to 1, got 0.9", id="sum"),
    pytest.param({"H2O": 1.2, "CO2": -0.2}, ValueError, "fraction of 'H2O' must be in [0, 1]",
                 id="range"),
    pytest.param({"NH3": 1.0}, ValueError, "unknown species 'NH3'", id="species"),
    pytest.param({}, TypeError, "must be a non-empty dict", id="empty"),
])
def test_bad_composition(composition, error, match):
    with pytest.raises(error, match=re.escape(match)):
        active_fraction(Q, 1 * u.au, 2 * u.km, composition)


def test_bad_values():
    with pytest.raises(ValueError, match="'Q' must be finite and positive"):
        active_fraction(0 * u.kg / u.s, 1 * u.au, 2 * u.km)
    with pytest.raises(ValueError, match="'radius' must be finite and positive"):
        active_fraction(Q, 1 * u.au, -2 * u.km)
