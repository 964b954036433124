import inspect
import io

import numpy as np
import pytest
from astropy.table import Table
from matplotlib.colors import to_rgb
from matplotlib.figure import Figure

from photpipe.activity import analyse_activity
from photpipe.activity.synthetic import simulate_campaign_tables
from photpipe.campaign import figures as F

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948:2003, section 5.2)


@pytest.fixture(scope="module")
def campaign():
    meas, nuc, sim = simulate_campaign_tables(seed=3, frames_per_night=2, outburst_night=12,
                                              outburst_mag=-1.2)
    res = analyse_activity(sim.time, sim.r_h, meas["a0frho_cm"], meas["a0frho_err_cm"],
                           rho=meas["rho_km"], perihelion_time=sim.perihelion_time)
    return meas, nuc, sim, res


def _builders(campaign):
    meas, nuc, sim, res = campaign
    return {
        "afrho_time": lambda: F.afrho_time_figure(meas, trend=res.trend,
                                                  outbursts=res.outbursts),
        "afrho_rh": lambda: F.afrho_rh_figure(meas, trend=res.trend),
        "nucleus": lambda: F.nucleus_lightcurve_figure(nuc, perihelion_time=sim.perihelion_time),
        "coma_slope": lambda: F.coma_slope_figure(meas, perihelion_time=sim.perihelion_time),
        "quality": lambda: F.quality_figure(meas, nuc),
        "outburst": lambda: F.outburst_figure(res.trend, res.outbursts),
    }


EXPECTED_LABELS = {
    "afrho_time": [("days from perihelion", "A(0°)fρ (cm)")],
    "afrho_rh": [("heliocentric distance r_h (au)", "A(0°)fρ (cm)")],
    "nucleus": [("days from perihelion", "nucleus magnitude (mag)")],
    "coma_slope": [("days from perihelion", "coma slope d ln Σ / d ln ρ")],
    "quality": [("", "zero point (mag)"), ("", "reference stars"),
                ("frame number, in time order", "FWHM (arcsec)")],
    "outburst": [("days from perihelion", "Δm from trend (mag)")],
}


@pytest.mark.parametrize("name", sorted(EXPECTED_LABELS))
def test_figure_builds_with_labels_and_saves_png(campaign, name):
    fig = _builders(campaign)[name]()
    assert isinstance(fig, Figure)
    labels = [(ax.get_xlabel(), ax.get_ylabel()) for ax in fig.axes]
    assert labels == EXPECTED_LABELS[name]
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=40)
    assert buf.getvalue().startswith(PNG_MAGIC)


def test_rh_legend_states_the_indices(campaign):
    _, _, _, res = campaign
    fig = _builders(campaign)["afrho_rh"]()
    texts = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    pre = res.trend.branch("pre")
    assert f"fit before perihelion: k = {pre.k:.2f} ± {pre.k_err:.2f}" in texts


def test_outburst_is_marked(campaign):
    fig = _builders(campaign)["outburst"]()
    notes = [t.get_text() for t in fig.axes[0].texts]
    assert len(notes) == 1 and notes[0].startswith("Δm = -")


def test_time_axis_in_mjd_without_perihelion(campaign):
    meas, nuc, _, _ = campaign
    fig = F.nucleus_lightcurve_figure(nuc)
    assert fig.axes[0].get_xlabel() == "time (MJD, UTC)"
    assert fig.axes[0].yaxis_inverted()  # magnitudes: brighter up


def test_plain_table_with_units_works(campaign):
    meas, _, _, _ = campaign
    plain = Table(meas)  # as read back by Table.read: Columns with units, not Quantities
    fig = F.coma_slope_figure(plain)
    assert len(fig.axes[0].lines[0].get_xdata()) == len(np.unique(meas["frame"]))


def test_no_pyplot_global_state():
    # Figures must not use pyplot's global figure manager (matplotlib docs, "Embedding").
    source = inspect.getsource(F)
    assert "import matplotlib.pyplot" not in source
    assert "from matplotlib import pyplot" not in source
    assert "plt." not in source


def test_palette_colours_are_distinct():
    rgb = [to_rgb(c) for c in F.PALETTE.values()]
    assert len(set(rgb)) == len(rgb)
    # Okabe & Ito (2008) blue and vermillion, as given in their palette.
    assert F.PALETTE["pre"] == "#0072B2" and F.PALETTE["post"] == "#D55E00"


def test_missing_column_is_named(campaign):
    meas, _, _, _ = campaign
    broken = meas.copy()
    broken.remove_column("coma_slope")
    with pytest.raises(ValueError, match="table has no column 'coma_slope'"):
        F.coma_slope_figure(broken)


def test_wrong_kind_of_table():
    with pytest.raises(TypeError, match="'nucleus' must be an astropy Table or QTable"):
        F.nucleus_lightcurve_figure({"nucleus_mag": [1.0]})
