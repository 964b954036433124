import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable
from astropy.wcs import WCS

from photpipe.report.images import (
    cutout_figure,
    nucleus_images_figure,
    profile_figure,
    sky_direction,
)


def _wcs(rotation_deg=0.0):
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [150.0, 10.0]
    w.wcs.crpix = [50.0, 50.0]
    c, s = np.cos(np.radians(rotation_deg)), np.sin(np.radians(rotation_deg))
    w.wcs.cd = (1 / 3600) * np.array([[-c, s], [s, c]])
    return w


@pytest.mark.parametrize("rotation", [0.0, 30.0, 90.0])
def test_sunward_arrow_follows_the_wcs(rotation):
    # a position angle of 0 is north, 90 east (IAU convention). With this CD matrix north lies
    # along pixel (sin θ, cos θ) (solve CD (dx, dy) = (0, δ)), i.e. θ clockwise from +y; east
    # is 90° further counter-clockwise on the sky, so at -θ + 90° from +y
    w = _wcs(rotation)
    for pa, expected in ((0.0, -rotation), (90.0, 90.0 - rotation)):
        dx, dy = sky_direction(w, 49.0, 49.0, pa * u.deg, length_pix=10)
        angle = np.degrees(np.arctan2(-dx, dy))  # counter-clockwise from +y
        assert abs(((angle - expected) + 180) % 360 - 180) < 0.5


def test_cutout_draws_every_aperture_and_the_sun():
    img = np.random.default_rng(0).normal(100, 5, (100, 100))
    fig = cutout_figure(img, x=49, y=49, radii_pix=[5, 10, 20], wcs=_wcs(),
                        pa_sun=250 * u.deg, labels=["a", "b", "c"])
    ax = fig.axes[0]
    assert len(ax.patches) == 3
    texts = [t.get_text() for t in ax.get_legend().get_texts()]
    assert texts[-1] == "to the Sun (PA 250°)"


def test_profile_has_sectors_on_log_axes_with_errors():
    rho = np.geomspace(500, 20000, 12)
    sb = 1e4 / rho
    p = QTable({"rho_km": rho * u.km, "sb": sb, "sb_err": 0.05 * sb, "sb_sun": 1.2 * sb,
                "sb_sun_err": 0.05 * sb, "sb_tail": 0.8 * sb, "sb_tail_err": 0.05 * sb})
    ax = profile_figure(p).axes[0]
    assert ax.get_xscale() == ax.get_yscale() == "log"
    assert len(ax.containers) == 3
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert {"sunward sector", "tailward sector", "all azimuths"} <= set(labels)


def test_nucleus_images_share_a_stretch():
    yy, xx = np.mgrid[:21, :21]
    m = np.exp(-((xx - 10) ** 2 + (yy - 10) ** 2) / 6.0)
    fig = nucleus_images_figure(m, m, m - m)
    a, b = fig.axes[0].images[0].norm, fig.axes[1].images[0].norm
    assert a is b
