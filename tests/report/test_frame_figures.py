"""The frames the page shows for the profile and the nucleus fit, read from the results folder."""

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.campaign.frame_views import (
    PROFILE_NAMES,
    nucleus_images_path,
    profile_rows,
    read_nucleus_images,
    write_nucleus_images,
)
from photpipe.report.frame_figures import frame_figure_jobs, representative_frames


def _nucleus_table():
    return QTable({"night": ["n1"] * 4 + ["n2"] * 2,
                   "frame": ["a", "b", "c", "d", "e", "f"],
                   "mjd_utc_mid": [61010.10, 61010.12, 61010.14, 61010.16, 61011.1, 61011.2],
                   "fwhm_arcsec": [3.1, 2.2, 2.9, 2.5, np.nan, 2.4] * u.arcsec})


def test_best_and_median_seeing_per_night():
    chosen = representative_frames(_nucleus_table())
    assert [c[0] for c in chosen] == ["n1", "n2"]
    # n1 sorted by FWHM: b 2.2, d 2.5, c 2.9, a 3.1 -> best b, median (index 2 of 4) c
    assert chosen[0][2] == {"best": ("b", 2.2), "median": ("c", 2.9)}
    assert chosen[1][2] == {"best": ("f", 2.4)}  # e has no FWHM


def test_jobs_draw_the_profile_and_the_images(tmp_path):
    rho = np.geomspace(800, 20000, 10)
    profile = QTable({"rho_km": rho * u.km, "rho_arcsec": rho / 400 * u.arcsec,
                      "sb": 1e5 / rho * u.electron / u.s / u.arcsec**2,
                      "sb_err": 1e3 / rho * u.electron / u.s / u.arcsec**2,
                      "sb_sun": 1.2e5 / rho * u.electron / u.s / u.arcsec**2,
                      "sb_sun_err": 1e3 / rho * u.electron / u.s / u.arcsec**2,
                      "sb_tail": 0.9e5 / rho * u.electron / u.s / u.arcsec**2,
                      "sb_tail_err": 1e3 / rho * u.electron / u.s / u.arcsec**2,
                      "n_pix": np.arange(10) + 8})
    rows = QTable(rows=[list(r.values()) for r in profile_rows(profile)],
                  names=list(profile_rows(profile)[0]))
    rows["frame"] = "c"
    (tmp_path / "n1").mkdir()
    rows.write(tmp_path / "n1" / "profiles.ecsv", format="ascii.ecsv")
    yy, xx = np.mgrid[:41, :41]
    model = 1e3 * np.exp(-((xx - 20) ** 2 + (yy - 20) ** 2) / 8.0)
    images = {"data": model + 1, "model": model, "residual": np.ones(model.shape),
              "x_origin": 100, "y_origin": 90, "fwhm_arcsec": 2.2}
    path = write_nucleus_images(images, nucleus_images_path(tmp_path, "n1", "b"))
    back = read_nucleus_images(path)
    assert back["x_origin"] == 100 and back["data"].shape == (41, 41)
    jobs = frame_figure_jobs(_nucleus_table()[:4], tmp_path)
    assert set(jobs) == {"profiles_2025-12-01", "nucleus_images_2025-12-01_best"}
    fig = jobs["profiles_2025-12-01"][1]()
    assert fig.axes[0].get_xlabel() == "ρ at the comet (km)"
    assert len(fig.axes[0].containers) == 3  # all azimuths, sunward, tailward with error bars
    assert [ax.get_title() for ax in jobs["nucleus_images_2025-12-01_best"][1]().axes[:3]] == \
        ["data", "model", "data - model"]
    assert set(PROFILE_NAMES.values()) >= set(rows.colnames) - {"frame"}
