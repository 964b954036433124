import math

import pytest

from photpipe.report.numbers import decimals_for, key_label, value_range, with_error


@pytest.mark.parametrize(("value", "error", "unit", "text"), [
    # two significant digits of the error, the value to the same place (common practice;
    # the Particle Data Group keeps one or two, Tanabashi et al. 2018, PRD 98, 030001)
    pytest.param(2.7765701873257043, 0.03127672913405271, "h", "2.777 ± 0.031 h", id="period"),
    pytest.param(258.7412, 0.7833, "cm", "258.74 ± 0.78 cm", id="afrho"),
    pytest.param(12345.6, 250.0, "cm", "12350 ± 250 cm", id="tens"),
    pytest.param(-3.4412, 0.2671, "", "-3.44 ± 0.27", id="index"),
])
def test_values_are_rounded_to_their_errors(value, error, unit, text):
    assert with_error(value, error, unit) == text


def test_no_error_no_false_precision():
    assert with_error(16.48412, math.nan, "mag") == "16.5 mag"
    assert decimals_for(0.0) is None


def test_a_range_prints_the_digits_that_separate_its_ends():
    assert value_range(3.823134282234735, 5.46106160083403, "km") == "3.8–5.5 km"
    assert value_range(14.951, 15.284, "mag") == "14.95–15.28 mag"


def test_keys_get_human_labels_with_units():
    assert key_label("radius_lo_km") == "radius, low end (km)"
    assert key_label("delta_au") == "geocentric distance Δ (au)"
