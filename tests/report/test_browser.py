"""The campaign page as a real browser shows it: every image loads and no text runs over.

Headless Chromium loads the page with a small checking script added (the page itself carries
no script), and the script writes what it found into the DOM, which ``--dump-dom`` prints.
Skipped only where no Chromium is installed (CI installs one: ``.ci/run``).
"""

import json
import re
import shutil
import subprocess

import pytest
from campaign._step_inputs import write_report_campaign

from photpipe.campaign.report_step import run_report_stage
from photpipe.config import load_config

BROWSER = next((shutil.which(n) for n in ("chromium", "chromium-browser", "google-chrome")
                if shutil.which(n)), None)

# The checks run in the page. An image has loaded when it is complete with a natural width
# (WHATWG HTML, "img" element: complete, naturalWidth). Text runs over when an element's
# content is wider than its box (CSSOM View: scrollWidth > clientWidth) outside the table
# scrollers, or the page is wider than the window.
CHECK = """
<script>
window.addEventListener("load", () => {
  const imgs = Array.from(document.images);
  const broken = imgs.filter(i => !(i.complete && i.naturalWidth > 0)).map(i => i.alt);
  const over = [];
  for (const el of document.querySelectorAll("main *")) {
    if (el.closest("div.scroll") || el.tagName === "SCRIPT") continue;
    if (el.scrollWidth > el.clientWidth + 1 && el.clientWidth > 0)
      over.push(el.tagName + " " + el.scrollWidth + ">" + el.clientWidth + ": " +
                (el.textContent || "").slice(0, 40));
  }
  const wide = document.documentElement.scrollWidth > window.innerWidth + 1;
  const imgWide = imgs.filter(i => i.getBoundingClientRect().right >
                              document.querySelector("main").getBoundingClientRect().right + 1)
                      .map(i => i.alt);
  const out = document.createElement("pre");
  out.id = "checks";
  out.textContent = JSON.stringify({images: imgs.length, broken, over, wide, imgWide,
                                    sections: document.querySelectorAll("section").length});
  document.body.appendChild(out);
});
</script>
"""


def _browse(page, tmp_path, width):
    probe = tmp_path / f"probe_{width}.html"
    probe.write_text(page.replace("</body>", CHECK + "</body>"), encoding="utf-8")
    cmd = [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
           f"--window-size={width},900", "--virtual-time-budget=5000", "--dump-dom",
           probe.as_uri()]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)
    found = re.search(r'<pre id="checks">(.*?)</pre>', done.stdout, re.S)
    assert found, f"no result from {BROWSER}: {done.stderr[-500:]}"
    return json.loads(found.group(1).replace("&quot;", '"').replace("&amp;", "&"))


@pytest.mark.slow
@pytest.mark.skipif(BROWSER is None, reason="no Chromium installed")
@pytest.mark.parametrize("width", [pytest.param(1280, id="desktop"),
                                   pytest.param(700, id="narrow")])
def test_report_in_a_browser(tmp_path, width):
    cfg, results, meas, nuc, _ = write_report_campaign(tmp_path)
    rotation = {"status": "ambiguous", "period_h": 7.3, "period_err_h": 0.02,
                "method": "fourier", "allowed_periods": [{"period_h": 7.3, "delta_chi2": 0.0},
                                                         {"period_h": 14.6, "delta_chi2": 1.1}]}
    size = {"radius_km": 4.430079686443301, "radius_lo_km": 3.823134282234735,
            "radius_hi_km": 5.46106160083403, "albedo": 0.04, "H_mag": 13.988077888028439,
            "H_err_mag": 0.004834461797408374, "band": "R", "mass_kg_lo": 7.022e13,
            "mass_kg_hi": 6.822e14}
    path = run_report_stage(load_config(cfg), meas, nuc, {"rotation": rotation, "size": size},
                            results)
    page = path.read_text(encoding="utf-8")
    # numbers rounded to their errors, human labels, no Python class names
    assert "3.8–5.5 km" in page and "3.823134" not in page
    assert "ambiguous" in page and "What to look at first" in page
    assert not re.search(r"\b[A-Z][a-z]+(Warning|Error)\b", page)
    checks = _browse(page, tmp_path, width)
    assert checks["images"] >= 8
    assert checks["broken"] == []
    assert checks["over"] == []
    assert not checks["wide"]
    assert checks["imgWide"] == []
    assert checks["sections"] >= 6


@pytest.mark.slow
@pytest.mark.skipif(BROWSER is None, reason="no Chromium installed")
def test_the_checks_catch_a_broken_image_and_overflowing_text(tmp_path):
    page = ("<!DOCTYPE html><html><head><meta charset='utf-8'></head><body><main>"
            "<p style='width:80px;white-space:nowrap'>a line far too long for its box</p>"
            "<img alt='missing' src='data:image/png;base64,AAAA'></main></body></html>")
    checks = _browse(page, tmp_path, 800)
    assert checks["broken"] == ["missing"]
    assert len(checks["over"]) == 1 and "far too long" in checks["over"][0]
