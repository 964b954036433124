import numpy as np
import pytest
from astropy import units as u

from photpipe.photometry import (
    DUST_PHASE_FUNCTIONS,
    SCHLEICHER_MARCUS_PARAMETERS,
    afrho_at_zero_phase,
    dust_phase,
    henyey_greenstein,
    linear_phase,
    phase_beyond_checked,
    schleicher_marcus,
    tabulated_phase,
)


def test_henyey_greenstein_closed_form():
    # Henyey & Greenstein 1941, ApJ 93, 70: p(θ) = (1 - g²)/(1 + g² - 2g cos θ)^1.5 with the
    # scattering angle θ = 180° - α; at α = 0 (θ = 180°) that is (1 - g)/(1 + g)²
    g = 0.9
    assert henyey_greenstein(0.0, g) == pytest.approx((1 - g) / (1 + g) ** 2, rel=1e-12)
    assert henyey_greenstein(180.0, g) == pytest.approx((1 + g) / (1 - g) ** 2, rel=1e-12)


def test_schleicher_marcus_normalised_and_shaped():
    a = np.arange(0.0, 181.0, 1.0)
    phi = schleicher_marcus(a)
    assert phi[0] == 1.0  # normalised at 0° (Schleicher & Bair 2011 convention)
    # backscatter: falls steadily from 0° to ~90° (Schleicher et al. 1998, Icarus 132, 397)
    assert np.all(np.diff(phi[:85]) < 0)
    # forward scattering rises strongly toward 180° (Marcus 2007, ICQ 29, 39)
    assert phi[180] > 10 * phi[90]
    # smooth join: no jump larger than the neighbouring steps around the join region
    steps = np.abs(np.diff(np.log(phi[60:121])))
    assert steps.max() < 0.1


def test_schleicher_marcus_back_part_is_the_stated_formula():
    # below the join (70°) the function is S(α) = a e^(-α/α0) + 1 - a with the stated parameters
    p = SCHLEICHER_MARCUS_PARAMETERS
    a = np.array([0.0, 10.0, 30.0, 60.0])
    s = p["back_amplitude"] * np.exp(-a / p["back_scale_deg"]) + 1 - p["back_amplitude"]
    np.testing.assert_allclose(schleicher_marcus(a), s, rtol=1e-12)


def test_linear_phase():
    # Φ = 10^(-0.4 β α) (common practice)
    assert linear_phase(20.0, coefficient=0.035) == pytest.approx(10 ** (-0.4 * 0.7), rel=1e-12)


def test_table_replaces_named_function():
    table = ([0.0, 10.0, 20.0], [1.0, 0.5, 0.25])
    got = dust_phase(15 * u.deg, method="schleicher-marcus", table=table)
    assert got == pytest.approx(0.375, rel=1e-12)


@pytest.mark.parametrize(
    ("table", "match"),
    [
        pytest.param(([0, 10], [2.0, 1.0]), "normalised to 1 at 0 deg", id="not-normalised"),
        pytest.param(([0, 0], [1.0, 1.0]), "increase strictly", id="not-increasing"),
        pytest.param(([0, 1, 2], [1.0, 1.0]), "two 1-d columns of equal length", id="ragged"),
        pytest.param(([0, 10], [1.0, -1.0]), "finite and positive", id="negative"),
    ],
)
def test_bad_tables(table, match):
    with pytest.raises(ValueError, match=match):
        tabulated_phase(5.0, table=table)


def test_table_range():
    with pytest.raises(ValueError, match="outside the table's range 0.0-10.0 deg"):
        tabulated_phase(30.0, table=([0, 10], [1.0, 0.5]))


def test_unknown_method():
    with pytest.raises(ValueError, match="unknown dust phase function 'hg3'"):
        dust_phase(10 * u.deg, method="hg3")


def test_registry_names():
    assert set(DUST_PHASE_FUNCTIONS) == {"schleicher-marcus", "linear", "table"}


def test_out_of_range_phase():
    with pytest.raises(ValueError, match="within 0-180 deg"):
        schleicher_marcus(190.0)


def test_a0frho():
    phi = schleicher_marcus(40.0)
    got = afrho_at_zero_phase(100 * u.cm, 40 * u.deg)
    assert got.to_value(u.cm) == pytest.approx(100 / phi, rel=1e-12)


def test_composite_matches_the_published_15_degree_value():
    # Schleicher 2010 (Lowell Observatory composite dust phase function, table at 1° steps):
    # Φ(15°) = 0.5872, normalised to 1 at 0°. The back-scatter scale is anchored to it.
    assert schleicher_marcus(15.0) == pytest.approx(0.5872, rel=1e-4)


def test_composite_depth_over_the_observed_range():
    # Schleicher 2010: between 0° and 110° "the phase effect varies up to a factor of 3".
    # The analytic composite reaches 3.8 (minimum 0.261 at 85°): a coarse check only, the
    # recalled parameters of the join are not confirmed by it.
    phi = schleicher_marcus(np.arange(0.0, 111.0))
    assert 2.5 < 1.0 / phi.min() < 4.0


@pytest.mark.parametrize("phase", [120.0, 150.0, 180.0])
def test_correction_never_runs_away_beyond_the_checked_range(phase):
    # Uncapped, the forward-scattering part gives Φ(150°) = 4.1 and Φ(180°) = 513; beyond the
    # checked range (0-110°) Φ is held at Φ(110°) and the row is flagged.
    edge = dust_phase(110 * u.deg)
    assert dust_phase(phase * u.deg) == edge
    assert np.isnan(dust_phase(phase * u.deg, beyond="refuse"))
    assert dust_phase(phase * u.deg, beyond="extend") == pytest.approx(schleicher_marcus(phase))
    assert phase_beyond_checked(phase * u.deg)
    assert not phase_beyond_checked(60 * u.deg)


def test_linear_law_and_table_are_capped_at_their_ranges():
    # linear: 0-60° (the small-phase range of the Halley coefficients it stands for, from
    # memory); a table: its own range, held at the last row instead of failing the frame.
    assert dust_phase(90 * u.deg, method="linear") == dust_phase(60 * u.deg, method="linear")
    table = ([0.0, 10.0, 20.0], [1.0, 0.5, 0.25])
    assert dust_phase(35 * u.deg, table=table) == pytest.approx(0.25)
    assert phase_beyond_checked(35 * u.deg, table=table)
    with pytest.raises(ValueError, match="'beyond' must be one of"):
        dust_phase(10 * u.deg, beyond="clip")
