import numpy as np
from astropy import units as u

from photpipe.activity.synthetic import simulate_activity, simulate_campaign_tables

MEASUREMENT_COLUMNS = (
    "frame, mjd_utc_mid, filter, exptime_s, airmass, zp_mag, zp_err_mag, n_stars, x_pix, y_pix, "
    "ra_deg, dec_deg, r_h_au, delta_au, phase_deg, elong_deg, rho_km, rho_arcsec, mag, mag_err, "
    "afrho_cm, afrho_err_cm, a0frho_cm, a0frho_err_cm, coma_slope, flags").split(", ")
NUCLEUS_COLUMNS = (
    "frame, mjd_utc_mid, nucleus_mag, nucleus_mag_err, nucleus_flux_e_s, coma_k, coma_gamma, "
    "fwhm_arcsec, nucleus_fraction, chi2_red, method, flags").split(", ")


def test_same_seed_same_campaign():
    a = simulate_activity(seed=5)
    b = simulate_activity(seed=5)
    np.testing.assert_array_equal(a.afrho.value, b.afrho.value)


def test_noise_free_truth_follows_power_law():
    sim = simulate_activity(seed=0, scatter_dex=0.0)
    rh = sim.r_h.to_value(u.au)
    pre = sim.time.mjd < sim.perihelion_time.mjd
    # Both branches meet at r_h = q with Afρ(q) (the generator's definition).
    expected = 300.0 * (rh / 1.31) ** np.where(pre, -3.5, -2.5)
    np.testing.assert_allclose(sim.afrho_true.to_value(u.cm), expected, rtol=1e-12)


def test_injected_outburst_amplitude_at_onset():
    sim = simulate_activity(seed=0, scatter_dex=0.0, outburst_night=4, outburst_mag=-1.0,
                            outburst_decay_days=1e9)
    quiet = simulate_activity(seed=0, scatter_dex=0.0)
    ratio = sim.afrho_true.value / quiet.afrho_true.value
    # -1 mag is a factor 10^0.4 (Pogson 1856), held without decay from night 4 on.
    np.testing.assert_allclose(ratio[sim.night >= 4], 10 ** 0.4, rtol=1e-6)
    np.testing.assert_allclose(ratio[sim.night < 4], 1.0, rtol=1e-12)


def test_campaign_tables_have_contract_columns():
    meas, nuc, _ = simulate_campaign_tables(seed=1, frames_per_night=2)
    assert meas.colnames == MEASUREMENT_COLUMNS
    assert nuc.colnames == NUCLEUS_COLUMNS
    assert len(meas) == 3 * len(nuc)


def test_campaign_magnitudes_invert_to_afrho():
    meas, _, _ = simulate_campaign_tables(seed=2, frames_per_night=1)
    au_cm = (1 * u.au).to_value(u.cm)
    # Afρ = (2 Δ r_h)² / ρ · 10^{0.4 (m_sun - m)} (A'Hearn et al. 1984, AJ 89, 579, eq. 1),
    # with the generator's solar R magnitude -27.15 (from memory).
    afrho = ((2 * meas["delta_au"].value * au_cm * meas["r_h_au"].value) ** 2
             / (meas["rho_km"].value * 1e5) * 10 ** (0.4 * (-27.15 - meas["mag"].value)))
    np.testing.assert_allclose(afrho, meas["afrho_cm"].value, rtol=1e-9)
