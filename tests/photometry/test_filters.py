"""FILTER header values to catalogue bands and solar magnitudes."""

import pytest

from photpipe.photometry import band_for_frame, filter_map_from_mapping, solar_magnitude

TWO = filter_map_from_mapping({"R": "R", "V": {"band": "V", "solar_band": "Johnson V"}})


def test_each_filter_gets_its_band_and_sun():
    r = band_for_frame("R", filter_map=TWO)
    v = band_for_frame(" v ", filter_map=TWO)
    assert (r.band, v.band) == ("R", "V")
    # solar magnitudes of Willmer 2018, ApJS 236, 47, Table 3 (Vega): R -27.15, V -26.76
    assert solar_magnitude(r.sun).value == pytest.approx(-27.15)
    assert solar_magnitude(v.sun).value == pytest.approx(-26.76)


def test_unmapped_filter_is_refused_with_the_reason():
    with pytest.raises(ValueError, match=r"filter 'Ha' has no band mapping \(\[filters\] maps "
                                         r"R, V\)"):
        band_for_frame("Ha", filter_map=TWO)


@pytest.mark.parametrize(("filt", "band"), [("R", "V"), ("Rc", "V"), ("V", "R"), ("r'", "R")])
def test_without_a_mapping_another_named_band_is_refused(filt, band):
    with pytest.raises(ValueError, match="map it in \\[filters\\]"):
        band_for_frame(filt, default_band=band)


@pytest.mark.parametrize("filt", ["R", "Rc", "Clear", "L", None])
def test_without_a_mapping_same_or_unnamed_band_passes(filt):
    assert band_for_frame(filt, default_band="R").band == "R"


def test_bad_mapping_entry():
    with pytest.raises(ValueError, match="must be a band name or a table"):
        filter_map_from_mapping({"R": 3})
    with pytest.raises(ValueError, match="unknown key"):
        filter_map_from_mapping({"R": {"band": "R", "sun": "R"}})
