import pytest
from astropy import units as u

from photpipe.photometry import SOLAR_MAGNITUDES, solar_magnitude


@pytest.mark.parametrize(
    ("band", "system", "expected"),
    [
        # Willmer 2018, ApJS 236, 47, Table 3 (apparent magnitude of the Sun, Vega system)
        pytest.param("Johnson V", "Vega", -26.76, id="V-vega"),
        pytest.param("V", "Vega", -26.76, id="V-alias"),
        # Willmer 2018, ApJS 236, 47, Table 3 (Cousins R, Vega)
        pytest.param("Cousins R", "Vega", -27.15, id="R-vega"),
        pytest.param("R", "Vega", -27.15, id="R-alias"),
        pytest.param("Rc", "Vega", -27.15, id="Rc-alias"),
    ],
)
def test_checked_values(band, system, expected):
    assert solar_magnitude(band, system) == expected * u.mag


def test_every_entry_names_its_source():
    for entry in SOLAR_MAGNITUDES.values():
        assert "Willmer 2018" in entry.source
        assert entry.system in ("Vega", "AB")


def test_vega_minus_ab_small():
    # Vega and AB zero points differ by a few tenths of a magnitude in the optical
    # (Blanton & Roweis 2007, AJ 133, 734, Table 1; from memory): |V_Vega - V_AB| < 0.1,
    # |R_Vega - R_AB| < 0.3
    assert abs(solar_magnitude("V", "Vega") - solar_magnitude("V", "AB")) < 0.1 * u.mag
    assert abs(solar_magnitude("R", "Vega") - solar_magnitude("R", "AB")) < 0.3 * u.mag


def test_unknown_band():
    with pytest.raises(ValueError, match="no solar magnitude for band 'H-alpha'"):
        solar_magnitude("H-alpha")


def test_unknown_system():
    with pytest.raises(ValueError, match="in the 'ST' system"):
        solar_magnitude("V", "ST")


def test_wrong_kind():
    with pytest.raises(TypeError, match="'band' must be a str"):
        solar_magnitude(5)
