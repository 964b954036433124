"""The campaign's results for an observer to read: figures, the HTML page and the headline.

- `photpipe.report.figures`: activity, lightcurve, coma and data-quality figures.
- `photpipe.report.images`: surface-brightness profiles, comet cut-outs, nucleus model images.
- `photpipe.report.content`: what the page holds, built from the campaign's tables and results.
- `photpipe.report.page`: the one self-contained HTML page.
- `photpipe.report.numbers`: numbers rounded to their errors, human labels for result keys.
- `photpipe.report.headline`: the headline lines printed at the end of a run.
"""

from photpipe.report.headline import headline_lines, size_line
from photpipe.report.page import SUN_CAUTION, figure_to_data_uri, render_report, write_report

__all__ = ["write_report", "render_report", "figure_to_data_uri", "SUN_CAUTION",
           "headline_lines", "size_line"]
