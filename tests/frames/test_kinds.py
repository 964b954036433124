import re

import pytest

from photpipe.frames import DEFAULT_KIND_MAP, KindMap, kind_map_from_mapping


@pytest.mark.parametrize("value, kind", [
    pytest.param("Bias Frame", "bias", id="bias-frame"),
    pytest.param("ZERO", "bias", id="zero-upper"),
    pytest.param("dark", "dark", id="dark"),
    pytest.param("  Flat   Field ", "flat", id="flat-blanks"),
    pytest.param("LIGHT", "science", id="light"),
    pytest.param("object", "science", id="object"),
    pytest.param("focus", None, id="unknown"),
])
def test_default_classification(value, kind):
    assert DEFAULT_KIND_MAP.classify(value) == kind


def test_demo_config_section():
    # the [frames] section of configs/demo.toml
    section = {"type_keyword": "IMAGETYP", "bias": ["bias", "zero", "bias frame"],
               "dark": ["dark", "dark frame"],
               "flat": ["flat", "flat field", "flatfield", "sky flat", "dome flat"],
               "science": ["light", "object", "science", "light frame"]}
    km = kind_map_from_mapping(section)
    assert km.keyword == "IMAGETYP"
    assert km.classify("Sky Flat") == "flat"
    assert km.classify("twilight flat") is None  # the section replaces the default list


def test_partial_section_keeps_defaults():
    km = kind_map_from_mapping({"science": "target"})
    assert km.classify("TARGET") == "science"
    assert km.classify("light") is None
    assert km.classify("zero") == "bias"


def test_none_gives_defaults():
    assert kind_map_from_mapping(None) == DEFAULT_KIND_MAP


@pytest.mark.parametrize("section, exc, match", [
    pytest.param({"biass": ["bias"]}, ValueError, "unknown key(s) 'biass'", id="typo"),
    pytest.param({"dark": []}, ValueError, "'dark' lists no header values", id="empty"),
    pytest.param({"flat": [1, 2]}, TypeError, "'flat' must be a list of strings", id="numbers"),
    pytest.param({"type_keyword": 5}, TypeError, "'type_keyword' must be a non-empty string",
                 id="keyword"),
    pytest.param({"bias": ["frame"], "dark": ["Frame"]}, ValueError,
                 "'frame' is listed for both 'bias' and 'dark'", id="clash"),
])
def test_bad_sections(section, exc, match):
    with pytest.raises(exc, match=re.escape(match)):
        kind_map_from_mapping(section)


def test_kind_map_rejects_unknown_kind():
    with pytest.raises(ValueError, match=re.escape("frame kind 'arc' is not one of")):
        KindMap(values=(("arc", ("arc",)),))
