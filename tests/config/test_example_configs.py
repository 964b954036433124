"""The example configurations in configs/ load and read as they say."""

from pathlib import Path

from photpipe.config import load_config, read_catalogue_columns, read_filters, read_instruments

EXAMPLE = Path(__file__).resolve().parents[2] / "configs" / "two_filters_two_sites.toml"


def test_two_filter_two_site_example():
    config = load_config(EXAMPLE)
    assert [n["site"] for n in config["night"]] == ["north_dome", "valley_roof", "valley_roof"]
    cams = {c.name: c for c in read_instruments(config)}
    assert cams["valley_cam"].keys("exptime") == ("EXPOSURE",)
    assert cams["valley_cam"].time_reference == "middle"
    assert cams["valley_cam"].kind_map.classify("Light Frame") == "science"
    assert cams["north_cam"].trust_header == ("gain", "read_noise")
    filters = read_filters(config)
    assert [filters.lookup(f).band for f in ("R", "rc", "V")] == ["R", "R", "V"]
    assert read_catalogue_columns(config)["V_err"] == "e_Vmag"
