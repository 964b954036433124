import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable

from photpipe.activity import FALLBACK_FLAG, NO_FIT_FLAG, NOT_DETECTED_FLAG, afrho_series


def _table():
    t = QTable()
    t["a0frho_cm"] = [120.0, 130.0, 140.0] * u.cm
    t["a0frho_err_cm"] = [3.0, 3.0, 3.0] * u.cm
    t["a0frho_coma_cm"] = [100.0, np.nan, -5.0] * u.cm
    t["a0frho_coma_err_cm"] = [4.0, np.nan, 4.0] * u.cm
    return t


def test_coma_by_default_never_mixed_with_the_total_light():
    # The total light is larger by the nucleus's share (here 20-30 cm): a series switching to
    # it on one frame would show a step the comet never made, so that row is left out; a value
    # below 3 sigma (-5 +- 4 cm, a bare nucleus) is a coma not detected, also left out.
    a, e, flags = afrho_series(_table())
    assert a.to_value(u.cm)[0] == 100.0 and np.all(np.isnan(a.to_value(u.cm)[1:]))
    assert e.to_value(u.cm)[0] == 4.0
    assert flags.tolist() == ["", NO_FIT_FLAG, NOT_DETECTED_FLAG]


def test_total_light_throughout_when_no_row_has_the_coma_alone():
    t = _table()
    t["a0frho_coma_cm"] = [np.nan] * 3 * u.cm
    a, e, flags = afrho_series(t)
    assert a.to_value(u.cm).tolist() == [120.0, 130.0, 140.0]
    assert e.to_value(u.cm).tolist() == [3.0, 3.0, 3.0]
    assert flags.tolist() == [FALLBACK_FLAG] * 3


def test_total_on_request_and_whole_column_missing():
    a, _, flags = afrho_series(_table(), column="a0frho_cm")
    assert a.to_value(u.cm).tolist() == [120.0, 130.0, 140.0] and not any(flags)
    t = _table()
    del t["a0frho_coma_cm"], t["a0frho_coma_err_cm"]
    _, _, flags = afrho_series(t)
    assert flags.tolist() == [FALLBACK_FLAG] * 3


def test_unknown_or_absent_column():
    with pytest.raises(ValueError, match="unknown Afρ column 'afrho'"):
        afrho_series(_table(), column="afrho")
    with pytest.raises(ValueError, match="no 'afrho_cm'/'afrho_err_cm' columns"):
        afrho_series(_table(), column="afrho_cm")
