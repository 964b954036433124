"""Render the shipped demo night into this folder (run from the repository root).

    python sample_frames/make_sample_frames.py

Uses the demo orbit and site from ``configs/demo.toml`` and the geometry photpipe computes from
them, so the comet sits where the pipeline will look for it. Everything is invented.
"""

import sys
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.time import Time

from photpipe.config import load_config
from photpipe.config import geometry_for_times
from photpipe.photometry import dust_phase
from photpipe.scenario import make_star_field, render_night
from photpipe.scenario.demo import DEMO_INSTRUMENT, DEMO_TRUTH, demo_exposures, demo_truth_table

HERE = Path(__file__).resolve().parent
N_SCIENCE = 12


def main():
    """Render the demo night, its reference stars and its truth table."""
    config = load_config(HERE.parent / "configs" / "demo.toml")
    night = config["night"][0]
    folder = Path(night["path"])
    rng = np.random.default_rng(20261201)
    times = Time("2026-12-01T02:10:00", scale="utc") + np.linspace(0, 4.4, N_SCIENCE) * u.h
    geom = geometry_for_times(config, night, times)
    exposures = demo_exposures(times, geom, phase_function=dust_phase, rng=rng)
    mid = SkyCoord(np.mean(geom["ra"]), np.mean(geom["dec"]))
    half_track = SkyCoord(geom["ra"][0], geom["dec"][0]).separation(mid)
    stars = make_star_field(mid, half_track + 8 * u.arcmin, n_stars=2400,
                            mag_range=(19.5, 11.0), rng=rng)
    stars.write(HERE / "reference_stars.ecsv", overwrite=True)
    site = config["sites"][night["site"]]
    header_extra = {"TELESCOP": "invented 0.6 m reflector", "OBSERVER": "demo",
                    "SITELAT": site["latitude_deg"], "SITELONG": site["longitude_deg"],
                    "SITEELEV": site["height_m"]}
    truth = render_night(folder, DEMO_INSTRUMENT, exposures, stars=stars, n_bias=5, n_dark=3,
                         n_flat=3, object_name=config["target"]["name"],
                         header_extra=header_extra, rng=rng)
    table = demo_truth_table(exposures, truth)
    for key, value in DEMO_TRUTH.items():
        table.meta[key] = value
    table.write(HERE / "demo_truth.ecsv", overwrite=True)
    print(f"wrote {sum(len(v) for v in truth.files.values())} frames to {folder}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
