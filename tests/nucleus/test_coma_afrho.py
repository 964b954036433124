"""The coma's Afρ with the fitted nucleus taken out of the aperture sums."""

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable

from photpipe.nucleus import PSFModel, coma_only_afrho, enclosed_fraction
from photpipe.photometry import afrho

M_SUN_R = -27.15 * u.mag  # Willmer (2018, ApJS 236, 47), Cousins R, Vega
R_H, DELTA = 1.8 * u.au, 1.1 * u.au
SCALE = 1.2 * u.arcsec / u.pix
ZP = 24.0 * u.mag


def _moffat_alpha(fwhm, beta):
    return fwhm / (2.0 * np.sqrt(2.0 ** (1.0 / beta) - 1.0))


@pytest.mark.parametrize("radius", [8.0, 12.0])
def test_enclosed_fraction_follows_the_moffat_growth_curve(radius):
    # Moffat (1969, A&A 3, 455): a profile (1 + r²/α²)^(-β) encloses 1 - (1 + r²/α²)^(1-β) within
    # r. Beyond a few FWHM the pixel blur no longer matters; the rendering square (half side
    # 15 px here) holds all but ~0.2 % of the light, which sets the tolerance.
    psf = PSFModel.from_moffat(3.0, beta=3.0)
    alpha = _moffat_alpha(3.0, 3.0)
    expected = 1.0 - (1.0 + radius**2 / alpha**2) ** (1.0 - 3.0)
    assert enclosed_fraction(psf, radius) == pytest.approx(expected, abs=2e-3)


def test_enclosed_fraction_rises_to_one():
    psf = PSFModel.from_moffat(2.5)
    frac = enclosed_fraction(psf, [1.0, 2.0, 5.0, 50.0])
    assert np.all(np.diff(frac) > 0)
    assert frac[-1] == 1.0


def _rows(coma_k, nucleus_flux, psf, radii_pix, apcorr_mag=0.0):
    """Aperture rows of a bare K/ρ coma (flux 2π K ρ, ρ in pixels) plus a PSF nucleus."""
    rho_arcsec = radii_pix * SCALE.value
    rho_km = (rho_arcsec * u.arcsec).to_value(u.rad) * DELTA.to(u.km)
    f_coma = 2.0 * np.pi * coma_k * radii_pix
    f_total = (f_coma + nucleus_flux * enclosed_fraction(psf, radii_pix)) \
        * 10 ** (0.4 * apcorr_mag)
    mag = ZP - 2.5 * np.log10(f_total) * u.mag
    total = afrho(mag, M_SUN_R, R_H, DELTA, rho_km)
    coma = afrho(ZP - 2.5 * np.log10(f_coma * 10 ** (0.4 * apcorr_mag)) * u.mag, M_SUN_R, R_H,
                 DELTA, rho_km)
    rows = QTable({"rho_arcsec": rho_arcsec * u.arcsec, "mag": mag,
                   "zp_mag": np.full(len(radii_pix), ZP.value) * u.mag,
                   "afrho_cm": total, "afrho_err_cm": 0.02 * total,
                   "a0frho_cm": 3.0 * total, "a0frho_err_cm": 0.06 * total,
                   "coma_apcorr_mag": np.full(len(radii_pix), apcorr_mag) * u.mag})
    return rows, coma


@pytest.mark.parametrize("apcorr_mag", [0.0, -0.03])
def test_coma_afrho_recovered_exactly(apcorr_mag):
    # Afρ of A'Hearn et al. (1984, AJ 89, 579) is proportional to the aperture flux, so taking
    # the nucleus's share out of the flux gives the coma's own Afρ to rounding.
    psf = PSFModel.from_moffat(2.2)
    radii = np.array([2.0, 4.0, 8.0, 16.0, 32.0])
    rows, coma = _rows(500.0, 4.0e4, psf, radii, apcorr_mag)
    out = coma_only_afrho(rows, 4.0e4 * u.electron / u.s, psf, pixel_scale=SCALE)
    assert u.allclose(out["afrho_coma_cm"], coma, rtol=1e-10)
    assert u.allclose(out["a0frho_coma_cm"], 3.0 * coma, rtol=1e-10)
    # The nucleus share falls with the aperture: the coma grows as ρ, the nucleus does not.
    assert np.all(np.diff(out["nucleus_share"]) < 0)
    assert np.all(u.Quantity(rows["afrho_cm"]) > out["afrho_coma_cm"])


def test_nucleus_error_enters_the_coma_error():
    psf = PSFModel.from_moffat(2.2)
    rows, _ = _rows(500.0, 4.0e4, psf, np.array([3.0, 30.0]))
    bare = coma_only_afrho(rows, 4.0e4 * u.electron / u.s, psf, pixel_scale=SCALE)
    noisy = coma_only_afrho(rows, 4.0e4 * u.electron / u.s, psf, pixel_scale=SCALE,
                            nucleus_flux_err=2.0e3 * u.electron / u.s)
    assert np.all(noisy["afrho_coma_err_cm"] > bare["afrho_coma_err_cm"])
    # Without a nucleus error the coma's error is the total's: taking a known amount out of a
    # sum leaves the sum's noise whole, Var(X - a) = Var(X) (Bevington & Robinson 2003, ch. 3,
    # from memory); it does not shrink with the share (1 - s) taken out.
    assert u.allclose(bare["afrho_coma_err_cm"], u.Quantity(rows["afrho_err_cm"]), rtol=1e-12)
    # With one, the two add in quadrature (taken as independent).
    term = (u.Quantity(rows["afrho_cm"]) * bare["nucleus_share"] * 2.0e3 / 4.0e4)
    assert u.allclose(noisy["afrho_coma_err_cm"],
                      np.hypot(u.Quantity(rows["afrho_err_cm"]), term), rtol=1e-12)


def test_a_nucleus_brighter_than_the_aperture_gives_a_negative_coma_with_its_error():
    # A bare nucleus measured a little bright: the coma-only value is below zero, kept with its
    # sign and error (a coma not detected), not made missing (which would bias any mean of it).
    psf = PSFModel.from_moffat(2.2)
    rows, _ = _rows(500.0, 4.0e4, psf, np.array([3.0, 30.0]))
    out = coma_only_afrho(rows, 1.0e7 * u.electron / u.s, psf, pixel_scale=SCALE)
    assert np.all(out["nucleus_share"] > 1)
    assert np.all(out["afrho_coma_cm"] < 0 * u.cm)
    assert u.allclose(out["afrho_coma_err_cm"], u.Quantity(rows["afrho_err_cm"]), rtol=1e-12)


@pytest.mark.parametrize("change, kind, match", [
    pytest.param({"drop": "mag"}, KeyError, "lack column", id="missing-column"),
    pytest.param({"flux": -1.0}, ValueError, "'nucleus_flux' must be finite and >= 0",
                 id="negative-flux"),
    pytest.param({"flux": np.nan}, ValueError, "'nucleus_flux' must be finite and >= 0",
                 id="nan-flux"),
])
def test_bad_input(change, kind, match):
    psf = PSFModel.from_moffat(2.2)
    rows, _ = _rows(500.0, 4.0e4, psf, np.array([3.0]))
    if "drop" in change:
        rows.remove_column(change["drop"])
    flux = change.get("flux", 4.0e4) * u.electron / u.s
    with pytest.raises(kind, match=match):
        coma_only_afrho(rows, flux, psf, pixel_scale=SCALE)
