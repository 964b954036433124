import base64
import os
import re
from html.parser import HTMLParser

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable
from matplotlib.figure import Figure

from photpipe.campaign import report as R

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948:2003, section 5.2)
# Elements with no end tag (WHATWG HTML Living Standard, "void elements").
VOID = {"meta", "img", "br", "hr", "link", "input", "area", "base", "col", "embed", "source",
        "track", "wbr"}


class _Checker(HTMLParser):
    def __init__(self):
        super().__init__()
        self.stack, self.errors, self.images, self.seen = [], [], [], set()

    def handle_starttag(self, tag, attrs):
        self.seen.add(tag)
        if tag == "img":
            self.images.append(dict(attrs)["src"])
        if tag not in VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
        else:
            self.stack.pop()


def _figure():
    fig = Figure(figsize=(2, 2))
    ax = fig.subplots()
    ax.plot([0, 1], [1, 0])
    ax.set_xlabel("x")
    return fig


def _write(tmp_path, **kw):
    args = {"campaign_name": "Invented comet <b>", "summary": {"nights": 3, "k": -3.1},
            "tables": {"Trend": QTable({"k": [-3.1, -2.4], "r_h": [1.3, 1.9] * u.au})},
            "figures": {"afrho": _figure()}, "notes": ["a & b"]}
    args.update(kw)
    return R.write_report(tmp_path / "report.html", **args)


def test_report_is_well_formed_and_self_contained(tmp_path):
    path = _write(tmp_path)
    text = path.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    checker = _Checker()
    checker.feed(text)
    checker.close()
    assert checker.errors == []
    assert checker.stack == []
    assert {"html", "head", "body", "style", "table", "img"} <= checker.seen
    # Nothing to fetch: no remote references, no scripts, no external style sheets.
    assert "http://" not in text and "https://" not in text
    assert "<script" not in text and "<link" not in text
    assert len(checker.images) == 1
    src = checker.images[0]
    assert src.startswith("data:image/png;base64,")
    assert base64.b64decode(src.split(",", 1)[1]).startswith(PNG_MAGIC)


def test_text_is_escaped_and_units_shown(tmp_path):
    text = _write(tmp_path).read_text(encoding="utf-8")
    assert "Invented comet &lt;b&gt;" in text
    assert "a &amp; b" in text
    assert "<small>au</small>" in text


@pytest.mark.parametrize(
    ("elongations", "expected"),
    [
        pytest.param([35.0, 18.2, 60.0] * u.deg, True, id="below-limit"),
        pytest.param([35.0, 60.0] * u.deg, False, id="all-above"),
        pytest.param(None, False, id="unknown"),
    ],
)
def test_sun_caution_only_below_the_limit(tmp_path, elongations, expected):
    text = _write(tmp_path, elongations=elongations,
                  caution_elongation=20 * u.deg).read_text(encoding="utf-8")
    assert ("Sun caution" in text) is expected
    if expected:
        assert "smallest elongation 18.2°" in text
        assert "local rules" in text


def test_long_tables_are_cut_with_a_note(tmp_path):
    big = QTable({"i": np.arange(500)})
    text = _write(tmp_path, tables={"Many": big}, max_rows=50).read_text(encoding="utf-8")
    assert "First 50 of 500 rows shown." in text
    assert len(re.findall(r"<tr>", text)) == 51


def test_write_is_atomic(tmp_path, monkeypatch):
    path = _write(tmp_path)
    before = path.read_bytes()

    def failing_replace(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", failing_replace)
    with pytest.raises(OSError, match=re.escape(f"{path}: cannot write (disk full)")):
        _write(tmp_path, notes=["second version"])
    assert path.read_bytes() == before
    assert os.listdir(tmp_path) == ["report.html"]


def test_wrong_kinds(tmp_path):
    with pytest.raises(TypeError, match=re.escape("tables['t'] must be an astropy Table")):
        _write(tmp_path, tables={"t": [1, 2]})
    with pytest.raises(TypeError, match="figures must be matplotlib Figure objects"):
        _write(tmp_path, figures={"f": "not a figure"})
    with pytest.raises(TypeError, match="'summary' must be a dict"):
        _write(tmp_path, summary=[("a", 1)])
