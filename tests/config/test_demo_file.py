"""``configs/demo.toml`` lists every key the readers know, with their defaults."""

import re
import tomllib
from pathlib import Path

import pytest

from photpipe.config import load_config
from photpipe.config._keys import check_value
from photpipe.config._sections import SECTIONS

DEMO = Path(__file__).resolve().parents[2] / "configs" / "demo.toml"

_HEADER = re.compile(r"^\s*\[\[?([\w.]+)\]?\]")
_KEY = re.compile(r"^\s*(#\s*)?([A-Za-z_][\w]*)\s*=\s*(.+)$")


def _section_of(header):
    """``sites.kettle_rock`` -> ``sites``; other headers are section names."""
    first = header.split(".")[0]
    if first in SECTIONS and SECTIONS[first].named:
        return first
    return header


def _value(text):
    """The TOML value at the start of ``text`` (a trailing comment is dropped)."""
    for end in range(len(text), 0, -1):
        try:
            return tomllib.loads(f"v = {text[:end]}")["v"]
        except tomllib.TOMLDecodeError:
            continue
    raise ValueError(text)


def _listed():
    """(section, key) -> (commented out, value) for every key line of the demo file."""
    found, section = {}, None
    for line in DEMO.read_text(encoding="utf-8").splitlines():
        header = _HEADER.match(line)
        if header and not line.lstrip().startswith("#"):
            section = _section_of(header.group(1))
            continue
        key = _KEY.match(line)
        if key and section in SECTIONS and key.group(2) in SECTIONS[section].key_names:
            found[(section, key.group(2))] = (bool(key.group(1)), _value(key.group(3)))
    return found


ALL_KEYS = [(name, key.name) for name, spec in SECTIONS.items() for key in spec.keys]


def test_the_demo_file_loads():
    config = load_config(DEMO)
    assert config["night"][0]["site"] == "kettle_rock"


@pytest.mark.parametrize(("section", "key"), ALL_KEYS, ids=[f"{s}.{k}" for s, k in ALL_KEYS])
def test_every_key_is_listed_with_its_default(section, key):
    listed = _listed()
    assert (section, key) in listed, f"configs/demo.toml does not list [{section}] {key}"
    commented, value = listed[(section, key)]
    spec = SECTIONS[section].key(key)
    checked = check_value(spec, value, f"{DEMO}: [{section}]")
    if commented and spec.default is not None:
        # an optional key is shown with the value used when it is left out
        assert checked == spec.default


def test_no_key_is_listed_that_the_readers_do_not_know():
    text = DEMO.read_text(encoding="utf-8")
    known = {k for _, k in ALL_KEYS} | {"kettle_rock"}
    for line in text.splitlines():
        key = _KEY.match(line)
        if key and not key.group(1):
            assert key.group(2) in known, line
