"""Small synthetic nights and configurations for the pipeline tests (photpipe.scenario).

The nights follow the invented demo comet (orbit and site of ``configs/demo.toml``) on a small
160x160 camera, so every stage that is installed has something real to measure.
"""

import os
from dataclasses import replace
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.table import QTable, vstack
from astropy.time import Time

from photpipe.config import load_config
from photpipe.scenario import Instrument, make_star_field, render_night
from photpipe.scenario.demo import demo_exposures
from photpipe.store import CampaignStore

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "configs" / "demo.toml"

SMALL = Instrument(shape=(160, 160), pixel_scale=1.5 * u.arcsec, pattern_seed=11,
                   name="invented small test camera")


def _geometry(times):
    """Geometry of the demo comet at ``times`` (the project's own geometry stage if installed)."""
    config = load_config(DEMO)
    try:
        from photpipe.config import geometry_for_times
    except ImportError:
        geometry_for_times = None
    if geometry_for_times is not None:
        return geometry_for_times(config, config["night"][0], times)
    n = len(times)
    # A fixed track: only used while the geometry stage is not installed.
    return QTable({"ra": np.linspace(51.0, 51.01, n) * u.deg,
                   "dec": np.linspace(28.0, 28.005, n) * u.deg,
                   "r_h": np.full(n, 1.35) * u.AU, "delta": np.full(n, 0.55) * u.AU,
                   "phase": np.full(n, 40.0) * u.deg})


def render_small_night(folder, *, start="2026-12-01T02:10:00", n_science=4, seed=1,
                       calibrations=True, stars_path=None, comet_change=None):
    """Render a night of ``n_science`` 160x160 science frames (plus calibrations) to ``folder``.

    Returns the NightTruth; writes the reference stars to ``stars_path`` when given.
    ``comet_change`` (a dict of `CometSpec` fields, e.g. ``{"afrho": None}`` for a bare
    nucleus) changes the demo comet in every frame.
    """
    rng = np.random.default_rng(seed)
    times = Time(start, scale="utc") + np.arange(n_science) * 12 * u.min
    geom = _geometry(times)
    exposures = demo_exposures(times, geom, phase_function=lambda phase: 1.0, rng=rng)
    if comet_change:
        exposures = [replace(e, comet=replace(e.comet, **comet_change)) for e in exposures]
    center = SkyCoord(np.mean(geom["ra"]), np.mean(geom["dec"]))
    stars = make_star_field(center, 6 * u.arcmin, n_stars=300, mag_range=(19.0, 15.0), rng=rng)
    if stars_path is not None:
        # One reference file for the campaign: each night adds the stars of its field.
        stars_path = Path(stars_path)
        stars_path.parent.mkdir(parents=True, exist_ok=True)
        if stars_path.exists():
            stars = vstack([QTable.read(stars_path), stars])
        stars.write(stars_path, overwrite=True)
    counts = dict(n_bias=3, n_dark=2, n_flat=2) if calibrations else dict(
        n_bias=0, n_dark=0, n_flat=0)
    return render_night(folder, SMALL, exposures, stars=stars, rng=rng, **counts)


def write_config(folder, nights, *, stars_path=None, results="results", extra=""):
    """Write a campaign TOML in ``folder`` naming ``nights`` (folders); return its path."""
    demo = DEMO.read_text()
    orbit = demo[demo.index("[target.orbit]"):demo.index("[geometry]")]
    lines = ['[campaign]', 'name = "test campaign (invented)"', f'results = "{results}"', '']
    for path in nights:
        lines += ['[[night]]', f'path = "{path}"', 'site = "kettle_rock"', '']
    lines += ['[sites.kettle_rock]', 'longitude_deg = -111.42', 'latitude_deg = 34.17',
              'height_m = 1710.0', '', '[target]', 'name = "Vesperine"', '', orbit]
    if stars_path is not None:
        lines += ['[photometry]', f'reference_stars = "{stars_path}"',
                  'apertures_km = [2000.0, 4000.0]', 'apertures_arcsec = [4.0]',
                  'min_stars = 3', '',
                  '[nucleus]', 'cutout_pix = 41', 'bootstrap = 5',
                  'psf_methods = ["moffat"]', '']
    lines.append(extra)
    path = Path(folder) / "campaign.toml"
    path.write_text("\n".join(lines))
    return path


#: Tables whose contents must not depend on how or how often the frames were processed.
RESULT_TABLES = ("frames", "geometry", "zero_points", "stars", "measurements", "nucleus",
                 "calibrations", "skipped")


def _plain(col, value):
    """One stored value as a plain comparable: file name for paths, float for numbers."""
    if col == "path":
        return os.path.basename(str(value))
    if hasattr(value, "unit"):
        return float(value.value)
    if isinstance(value, (float, np.floating)):
        return float(value)
    return str(value)


def contents(store_path):
    """Every result table of the store at ``store_path`` as sorted rows.

    Run ids are left out and paths cut to file names. Rows are sorted on their non-float
    values, so the order does not hang on the last bits of a float.
    """
    out = {}
    with CampaignStore(store_path) as store:
        for name in RESULT_TABLES:
            table = store.export_table(name)
            rows = [tuple(_plain(col, row[col]) for col in table.colnames if col != "run")
                    for row in table]
            out[name] = sorted(rows, key=lambda r: [v for v in r if isinstance(v, str)])
    return out


def assert_same_contents(a, b):
    """Equal tables; floats to 1e-9 relative (worker processes run BLAS on one thread, the
    parent on several, so sums can differ in their last bits)."""
    assert a.keys() == b.keys()
    for name in a:
        assert len(a[name]) == len(b[name]), name
        for ra, rb in zip(a[name], b[name]):
            assert len(ra) == len(rb)
            for va, vb in zip(ra, rb):
                if isinstance(va, float):
                    assert np.isclose(va, vb, rtol=1e-9, atol=0, equal_nan=True), (name, ra, rb)
                else:
                    assert va == vb, (name, ra, rb)
