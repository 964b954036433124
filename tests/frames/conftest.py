"""A small synthetic night from photpipe.scenario, its masters built once per test session."""

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.time import Time

from photpipe.frames import build_masters, plan_calibrations, scan_night
from photpipe.scenario import Instrument, ScienceExposure, make_star_field, render_night

INSTRUMENT = Instrument(shape=(160, 192), pattern_seed=31, hot_pixel_fraction=1e-3,
                        dead_pixel_fraction=5e-4)
POINTING = SkyCoord(52.0 * u.deg, 18.0 * u.deg)


@pytest.fixture(scope="session")
def scenario_night(tmp_path_factory):
    folder = tmp_path_factory.mktemp("night")
    stars = make_star_field(POINTING, 0.08 * u.deg, n_stars=80, rng=np.random.default_rng(4))
    t0 = Time("2026-12-01T03:00:00", scale="utc")
    science = [ScienceExposure(time=t0 + i * 3 * u.min, exptime=60 * u.s, pointing=POINTING)
               for i in range(3)]
    science.append(ScienceExposure(time=t0 + 12 * u.min, exptime=120 * u.s, pointing=POINTING))
    truth = render_night(folder, INSTRUMENT, science, stars=stars, n_bias=9, n_dark=5,
                         n_flat=6, dark_exptime=60 * u.s, rng=8)
    night = scan_night(folder)
    plan = plan_calibrations(night)
    masters = build_masters(plan, folder / "masters")
    return {"folder": folder, "truth": truth, "night": night, "plan": plan,
            "masters": masters, "instrument": INSTRUMENT}
