"""The Sun caution: when it shows, what it says, and the warning."""

import warnings

import numpy as np
import pytest
from astropy import units as u

from photpipe._warnings import SolarElongationWarning
from photpipe.geometry import near_sun, solar_elongation_caution, warn_if_near_sun


def test_caution_text_defers_to_local_rules_and_experience():
    text = solar_elongation_caution([35.0, 14.2, 50.0] * u.deg)
    assert text.startswith("SUN CAUTION: the target comes within 14.2 deg of the Sun")
    assert "(limit 20 deg)" in text
    assert "blind" in text and "site's safety rules" in text and "experienced observers" in text


def test_no_caution_far_from_the_sun():
    assert solar_elongation_caution([20.0, 90.0] * u.deg) is None   # the limit itself is fine
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert warn_if_near_sun([45.0] * u.deg) is None


def test_limit_is_configurable():
    assert solar_elongation_caution([25.0] * u.deg, limit=30 * u.deg) is not None
    assert solar_elongation_caution([25.0] * u.deg, limit=10 * u.deg) is None
    assert near_sun([5, 15, 25] * u.deg, limit=15 * u.deg).tolist() == [True, False, False]
    with pytest.raises(ValueError, match="'limit' must be within 0-180 deg, got 200.0 deg"):
        near_sun([5] * u.deg, limit=200 * u.deg)
    with pytest.raises(TypeError, match="'elong' must be an astropy Quantity"):
        near_sun(np.array([5.0]))


def test_warning_carries_the_text():
    with pytest.warns(SolarElongationWarning, match="SUN CAUTION") as rec:
        text = warn_if_near_sun([8.0] * u.deg)
    assert str(rec[0].message) == text
