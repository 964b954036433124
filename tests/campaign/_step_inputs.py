"""Inputs for the once-per-campaign steps (size, report) and their commands.

Shared by ``tests/campaign/test_size_step.py``, ``tests/campaign/test_report_step.py`` and the
command tests in ``tests/cli``, which import it as ``campaign._step_inputs``.
"""

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.activity.synthetic import simulate_campaign_tables

H_TRUE, PERIOD_H = 14.0, 5.4  # synthetic nucleus (same form as the demo scenario's)


def make_lightcurve(n=80, seed=3, flags=None):
    rng = np.random.default_rng(seed)
    mjd = 61010.0 + np.sort(rng.uniform(0, 3, n))
    rh = 1.3 + 0.01 * (mjd - 61010)
    de = 0.8 + 0.02 * (mjd - 61010)
    ph = 35 + 0.5 * (mjd - 61010)
    light_time = de * 499.004784  # s per AU (IAU 2012 B2 au / c)
    rot = 2 * np.pi * (mjd - light_time / 86400 - 61010) * 24 / PERIOD_H
    m = H_TRUE + 5 * np.log10(rh * de) + 0.035 * ph + 0.15 * np.cos(2 * rot)
    m = m + rng.normal(0, 0.02, n)
    return QTable({
        "frame": [f"sci_{i:04d}" for i in range(n)], "mjd_utc_mid": mjd,
        "nucleus_mag": m * u.mag, "nucleus_mag_err": np.full(n, 0.02) * u.mag,
        "r_h_au": rh * u.au, "delta_au": de * u.au, "phase_deg": ph * u.deg,
        "light_time_s": light_time * u.s, "site": ["kettle_rock"] * n, "filter": ["R"] * n,
        "source": ["fit"] * n, "flags": flags if flags is not None else [""] * n})


def write_size_config(tmp_path, size_lines):
    text = f"""
[campaign]
name = "test"
results = "{tmp_path / 'results'}"
[[night]]
path = "nowhere"
[photometry]
band = "R"
[rotation]
phase_coefficient_mag_per_deg = 0.035
[size]
{size_lines}
"""
    path = tmp_path / "c.toml"
    path.write_text(text)
    (tmp_path / "results").mkdir(exist_ok=True)
    return path


FULL_SIZE = """albedo = 0.04
albedo_range = [0.02, 0.06]
density_range_g_cm3 = [0.3, 1.0]
mass_loss_kg_s = 150.0
outflow_speed_m_s = 440.0
nongrav_accel_limit_m_day2 = 15.0
momentum_efficiency = 1.0
composition = {H2O = 0.7, CO2 = 0.3}
n_samples = 20000
"""


def write_report_campaign(tmp_path, activity="outburst_sigma = 5.0\n", write_tables=True,
                          elong_limit=45.0):
    meas, nuc, sim = simulate_campaign_tables(seed=1, frames_per_night=2, outburst_night=12,
                                              outburst_mag=-1.2)
    results = tmp_path / "results"
    results.mkdir()
    if write_tables:
        meas.write(results / "measurements.ecsv")
        nuc.write(results / "nucleus.ecsv")
    cfg = tmp_path / "campaign.toml"
    cfg.write_text(
        '[campaign]\nname = "Invented comet, test"\nresults = "results"\n'
        '[[night]]\npath = "night1"\n'
        f'[target.orbit]\nperihelion_time = "{sim.perihelion_time.tdb.isot}"\n'
        f"[geometry]\ncaution_elongation_deg = {elong_limit}\n"
        f"[activity]\n{activity}", encoding="utf-8")
    return cfg, results, meas, nuc, sim
