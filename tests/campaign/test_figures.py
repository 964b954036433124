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
        "afrho_aperture": lambda: F.afrho_aperture_figure(meas),
        "total_magnitude": lambda: F.total_magnitude_figure(meas),
    }


EXPECTED_LABELS = {
    "afrho_time": [("date (UTC)", "A(0°)fρ (cm)")],
    "afrho_rh": [("heliocentric distance r_h (au)", "A(0°)fρ (cm)")],
    "nucleus": [("date (UTC)", "nucleus magnitude (mag)")],
    "coma_slope": [("date (UTC)", "coma slope d ln Σ / d ln ρ")],
    "quality": [("", "zero point (mag)"), ("", "reference stars"),
                ("date (UTC)", "PSF FWHM (arcsec)")],
    "outburst": [("date (UTC)", "Δm from trend (mag)")],
    "afrho_aperture": [("aperture radius ρ at the comet (km)", "A(0°)fρ (cm)")],
    "total_magnitude": [("date (UTC)", "magnitude in the aperture (mag)")],
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


def test_time_axis_in_dates_and_magnitudes_brighter_up(campaign):
    meas, nuc, _, _ = campaign
    fig = F.nucleus_lightcurve_figure(nuc)
    assert fig.axes[0].get_xlabel() == "date (UTC)"
    assert fig.axes[0].yaxis_inverted()  # magnitudes: brighter up


def test_time_axis_is_not_stretched_to_a_distant_perihelion(campaign):
    from astropy.time import Time
    from matplotlib.dates import num2date

    meas, nuc, _, _ = campaign
    far = Time(float(np.min(meas["mjd_utc_mid"].value)) - 300, format="mjd")
    ax = F.afrho_time_figure(meas, perihelion_time=far).axes[0]
    lo = num2date(ax.get_xlim()[0])
    first = Time(float(np.min(meas["mjd_utc_mid"].value)), format="mjd").datetime
    assert (first - lo.replace(tzinfo=None)).days < 10  # the axis starts near the data
    assert any("perihelion 300 d before" in t.get_text() for t in ax.texts)


def test_power_laws_on_log_axes_with_the_fit_drawn(campaign):
    meas, _, _, res = campaign
    ax = F.afrho_rh_figure(meas, trend=res.trend).axes[0]
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert sum(1 for line in ax.lines if len(line.get_xdata()) == 50) == 2  # both branches


def test_every_point_has_an_error_bar(campaign):
    meas, nuc, _, res = campaign
    for name in ("afrho_time", "afrho_rh", "nucleus", "coma_slope", "total_magnitude"):
        ax = _builders(campaign)[name]().axes[0]
        assert ax.containers, name  # errorbar containers


def test_empty_departures_panel_says_why():
    from photpipe.activity import analyse_activity
    from photpipe.activity.synthetic import simulate_activity

    sim = simulate_activity(seed=0)
    few = slice(0, 2)  # two nights: no branch can be fitted
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = analyse_activity(sim.time[few], sim.r_h[few], sim.afrho[few], sim.afrho_err[few],
                               perihelion_time=sim.perihelion_time)
    ax = F.outburst_figure(res.trend, res.outbursts).axes[0]
    assert ax.get_legend() is None
    assert any("no branch of the activity trend" in t.get_text() for t in ax.texts)


def test_plain_table_with_units_works(campaign):
    meas, _, _, _ = campaign
    plain = Table(meas)  # as read back by Table.read: Columns with units, not Quantities
    fig = F.coma_slope_figure(plain)
    assert len(fig.axes[0].containers[0].lines[0].get_xdata()) == len(np.unique(meas["frame"]))


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
