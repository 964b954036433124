import re

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from astropy.table import QTable

from photpipe.rotation import LightcurveError, RotationWarning, reduce_lightcurve


def _rows(**over):
    data = {"frame": ["a", "b", "c"], "mjd_utc_mid": [61000.0, 61000.1, 61001.0],
            "nucleus_mag": [20.0, 20.1, 20.2], "nucleus_mag_err": [0.05, 0.05, 0.06],
            "r_h_au": [2.0, 2.0, 2.1], "delta_au": [1.5, 1.5, 1.6], "phase_deg": [10.0, 10, 11],
            "light_time_s": [748.0, 748.0, 798.0],
            "source": ["nucleus_fit", "small_aperture", "nucleus_fit"]}
    data.update(over)
    return data


def test_distance_and_linear_phase_reduction():
    # m(1,1,0) = m - 5 log10(r_h Δ) - β α (e.g. Lamy et al. 2004, Comets II, eq. 1; from memory)
    lc = reduce_lightcurve(_rows(), phase_coefficient=0.04 * u.mag / u.deg)
    expected = 20.0 - 5 * np.log10(2.0 * 1.5) - 0.04 * 10.0
    assert lc.mag[0] == pytest.approx(expected, abs=1e-12)


def test_light_time_correction_given_and_from_delta():
    lc = reduce_lightcurve(_rows())
    assert lc.epoch_mjd[0] == pytest.approx(61000.0 - 748.0 / 86400, abs=1e-12)
    data = _rows()
    del data["light_time_s"]
    lc2 = reduce_lightcurve(data)
    # τ = Δ/c with 1 au / c = 499.004784 s (IAU 2012 au, CODATA c)
    tau = 1.5 * (const.au / const.c).to_value(u.s)
    assert tau == pytest.approx(748.507, abs=1e-3)
    assert lc2.epoch_mjd[0] == pytest.approx(61000.0 - tau / 86400, abs=1e-12)


def test_small_aperture_points_are_flagged():
    lc = reduce_lightcurve(_rows())
    assert list(lc.coma_contaminated) == [False, True, False]
    assert lc.flags[1] == "coma_contaminated"
    assert not lc.coma_free


def test_hg_law_and_quantity_columns():
    table = QTable(_rows())
    table["r_h_au"] = table["r_h_au"] * u.au
    table["phase_deg"] = (table["phase_deg"] * u.deg).to(u.rad)
    lc = reduce_lightcurve(table, phase_law="hg", H_G_slope=0.15)
    assert lc.phase_deg[0] == pytest.approx(10.0, rel=1e-12)
    assert lc.phase_law == "hg"


@pytest.mark.parametrize("column, value, text", [
    pytest.param("nucleus_mag_err", [0.05, np.nan, 0.05], "NaN or infinite magnitude error",
                 id="nan-error"),
    pytest.param("nucleus_mag_err", [0.05, -0.01, 0.05], "zero or negative magnitude error",
                 id="negative-error"),
    pytest.param("nucleus_mag", [20.0, np.nan, 20.2], "no finite magnitude", id="nan-mag"),
    pytest.param("mjd_utc_mid", [61000.0, np.nan, 61001.0], "no finite epoch", id="nan-epoch"),
    pytest.param("delta_au", [1.5, 0.0, 1.5], "missing or non-positive r_h_au or delta_au",
                 id="delta"),
])
def test_bad_rows_are_set_aside_with_their_reason(column, value, text):
    # one bad row never refuses the lightcurve: it is set aside, counted and named
    expected = f"1 of 3 lightcurve rows set aside: 1 with {re.escape(text)}"
    with pytest.warns(RotationWarning, match=expected):
        lc = reduce_lightcurve(_rows(**{column: value}))
    assert lc.n_points == 2 and list(lc.frame) == ["a", "c"]
    assert lc.set_aside == (("b", next(r for r in lc.set_aside_counts)),)
    assert text in lc.set_aside[0][1]


def test_all_rows_bad_is_refused_with_the_frames_named():
    with pytest.raises(LightcurveError, match="none of the 3 lightcurve rows can be used") as info:
        reduce_lightcurve(_rows(nucleus_mag_err=[np.nan, np.nan, 0.0]))
    assert "a, b, c" in str(info.value)


def test_unknown_source_is_refused():
    with pytest.raises(LightcurveError, match="unknown 'source'"):
        reduce_lightcurve(_rows(source=["nucleus_fit", "psf", "nucleus_fit"]))


def test_upper_limits_are_kept_as_limits():
    # nucleus.ecsv contract: an upper-limit row holds the bright limit and a NaN error
    lc = reduce_lightcurve(_rows(nucleus_mag_err=[0.05, np.nan, 0.05],
                                 flags=["", "upper_limit", ""]))
    assert lc.n_points == 3 and lc.set_aside == ()
    np.testing.assert_array_equal(lc.upper_limit, [False, True, False])


def test_empty_lightcurve():
    with pytest.raises(LightcurveError, match="has no rows: there is nothing to reduce"):
        reduce_lightcurve({k: [] for k in _rows()})


def test_missing_column_and_wrong_type():
    data = _rows()
    del data["phase_deg"]
    with pytest.raises(LightcurveError, match="has no 'phase_deg' column"):
        reduce_lightcurve(data)
    with pytest.raises(TypeError, match="takes a Table, QTable or mapping"):
        reduce_lightcurve([1, 2, 3])
