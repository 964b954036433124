"""One self-contained HTML page summarising a campaign.

The page carries everything inline: styles in a ``<style>`` element, figures as base64 PNG
``data:`` images, no scripts and no links to other servers, so it reads the same offline, from
an e-mail attachment or from an archive years later. It is written to a temporary file in the
destination folder and renamed over the target, so a reader never sees half a page.
"""

import base64
import html
import io
import math
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import Table
from astropy.time import Time
from matplotlib.figure import Figure

from photpipe import __version__
from photpipe._files import replacing

__all__ = ["write_report", "render_report", "figure_to_data_uri", "SUN_CAUTION"]

#: Shown whenever a frame was taken at a small solar elongation.
SUN_CAUTION = (
    "Some frames of this campaign were taken with the comet within {limit:g}° of the Sun in "
    "the sky (smallest elongation {min_elong:.1f}°). Pointing a telescope or camera close to "
    "the Sun can blind a person in an instant and destroy optics and detectors. Before any "
    "further observing at such elongations follow your observatory's local rules and the "
    "practice of observers experienced with twilight and near-Sun work; never rely on this "
    "software to judge what is safe."
)

_STYLE = """
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; margin: 0;
       color: #1b1b1b; background: #fbfbf8; line-height: 1.45; }
main { max-width: 60rem; margin: 0 auto; padding: 1.5rem 1.25rem 3rem; }
h1 { font-size: 1.6rem; margin: 0 0 0.2rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 0.6rem; border-bottom: 2px solid #0072B2;
     padding-bottom: 0.2rem; }
.sub { color: #555; margin: 0 0 1rem; font-size: 0.9rem; }
.caution { border: 3px solid #D55E00; background: #fff3e8; padding: 0.8rem 1rem;
           margin: 1rem 0; font-weight: 600; }
.caution strong { color: #a23b00; }
dl.summary { display: grid; grid-template-columns: max-content 1fr; gap: 0.25rem 1rem;
             margin: 0; }
dl.summary dt { font-weight: 600; }
dl.summary dd { margin: 0; }
table { border-collapse: collapse; font-size: 0.82rem; margin: 0.4rem 0 0.2rem;
        display: block; overflow-x: auto; }
th, td { border: 1px solid #ccc; padding: 0.2rem 0.45rem; text-align: right;
         white-space: nowrap; }
th { background: #e8eef4; }
th small { font-weight: normal; color: #555; }
td.text { text-align: left; }
.note { color: #555; font-size: 0.82rem; margin: 0.1rem 0 0.8rem; }
figure { margin: 1rem 0; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; background: white; }
figcaption { font-size: 0.85rem; color: #444; }
ul.notes li { margin-bottom: 0.3rem; }
footer { margin-top: 2.5rem; font-size: 0.8rem; color: #666; }
"""


def figure_to_data_uri(fig, *, dpi=110):
    """Render a figure as a ``data:image/png;base64,...`` URI.

    Parameters
    ----------
    fig : `~matplotlib.figure.Figure`
    dpi : float

    Returns
    -------
    uri : str

    Examples
    --------
    >>> from matplotlib.figure import Figure
    >>> fig = Figure(figsize=(1, 1))
    >>> _ = fig.subplots().plot([0, 1])
    >>> figure_to_data_uri(fig).startswith("data:image/png;base64,iVBOR")
    True
    """
    if not isinstance(fig, Figure):
        msg = f"figures must be matplotlib Figure objects, got {type(fig).__name__}"
        raise TypeError(msg)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _format_cell(value):
    if isinstance(value, Time):
        return html.escape(value.utc.iso[:19]), False
    if isinstance(value, u.Quantity):
        value = value.value
    if isinstance(value, bytes | np.bytes_):
        value = value.decode("utf-8", "replace")
    if isinstance(value, str | np.str_):
        return html.escape(str(value)), True
    if isinstance(value, bool | np.bool_):
        return ("yes" if value else "no"), True
    if isinstance(value, int | np.integer):
        return str(int(value)), False
    try:
        f = float(value)
    except (TypeError, ValueError):
        return html.escape(str(value)), True
    if not math.isfinite(f):
        return "—", False
    if f == 0:
        return "0", False
    mag = abs(f)
    text = f"{f:.4g}" if 1e-3 <= mag < 1e6 else f"{f:.3e}"
    return text, False


def _table_html(name, table, max_rows):
    if not isinstance(table, Table):
        msg = f"tables[{name!r}] must be an astropy Table or QTable, got {type(table).__name__}"
        raise TypeError(msg)
    head = []
    for col in table.colnames:
        unit = getattr(table[col], "unit", None)
        label = html.escape(col)
        if unit is not None and str(unit) not in ("", "None"):
            label += f"<br><small>{html.escape(unit.to_string())}</small>"
        head.append(f"<th>{label}</th>")
    rows = []
    for row in table[:max_rows]:
        cells = []
        for col in table.colnames:
            text, is_text = _format_cell(row[col])
            cells.append(f'<td class="text">{text}</td>' if is_text else f"<td>{text}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    out = [f"<table><thead><tr>{''.join(head)}</tr></thead><tbody>{''.join(rows)}</tbody>"
           "</table>"]
    if len(table) == 0:
        out.append('<p class="note">No rows.</p>')
    elif len(table) > max_rows:
        out.append(f'<p class="note">First {max_rows} of {len(table)} rows shown.</p>')
    return "\n".join(out)


def _summary_html(summary):
    items = []
    for key, value in summary.items():
        text, _ = _format_cell(value) if not isinstance(value, str) else (html.escape(value),
                                                                           True)
        items.append(f"<dt>{html.escape(str(key))}</dt><dd>{text}</dd>")
    return f'<dl class="summary">{"".join(items)}</dl>'


def _min_elongation(elongations):
    if elongations is None:
        return None
    if isinstance(elongations, u.Quantity):
        values = np.atleast_1d(elongations.to_value(u.deg))
    else:
        msg = "'elongations' must be an astropy Quantity in degrees"
        raise TypeError(msg)
    values = values[np.isfinite(values)]
    return float(values.min()) if values.size else None


def render_report(*, campaign_name, summary, tables, figures, notes, elongations=None,
                  caution_elongation=20.0 * u.deg, max_rows=200, captions=None,
                  generated=None):
    """Build the HTML text of the campaign page (see `write_report`).

    Returns
    -------
    text : str

    Examples
    --------
    >>> from astropy import units as u
    >>> page = render_report(campaign_name="Test", summary={"nights": 3}, tables={},
    ...                      figures={}, notes=[], elongations=[12.0, 50.0] * u.deg)
    >>> "within 20° of the Sun" in page and "http" not in page
    True
    """
    if not isinstance(summary, dict):
        msg = f"'summary' must be a dict, got {type(summary).__name__}"
        raise TypeError(msg)
    captions = captions or {}
    limit = float(u.Quantity(caution_elongation, u.deg).value)
    min_elong = _min_elongation(elongations)
    generated = generated or datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    title = html.escape(str(campaign_name))
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>{title}: campaign report</title>", f"<style>{_STYLE}</style>",
             "</head>", "<body>", "<main>", f"<h1>{title}</h1>",
             f'<p class="sub">Campaign report made by photpipe {html.escape(__version__)} on '
             f"{html.escape(generated)}.</p>"]
    if min_elong is not None and min_elong < limit:
        text = html.escape(SUN_CAUTION.format(limit=limit, min_elong=min_elong))
        parts.append(f'<div class="caution" role="alert"><strong>Sun caution.</strong> '
                     f"{text}</div>")
    parts += ["<h2>Summary</h2>", _summary_html(summary)]
    if figures:
        parts.append("<h2>Figures</h2>")
        for name, fig in figures.items():
            uri = figure_to_data_uri(fig)
            cap = html.escape(captions.get(name, name))
            parts.append(f'<figure id="fig-{html.escape(name)}"><img src="{uri}" '
                         f'alt="{cap}"><figcaption>{cap}</figcaption></figure>')
    for name, table in tables.items():
        parts.append(f"<h2>{html.escape(name)}</h2>")
        parts.append(_table_html(name, table, max_rows))
    if notes:
        parts.append("<h2>Notes</h2>")
        parts.append('<ul class="notes">' + "".join(
            f"<li>{html.escape(str(n))}</li>" for n in notes) + "</ul>")
    parts += ["<footer>All numbers come from the campaign's measurement tables; every figure "
              "and table is embedded in this file, which needs no network to read.</footer>",
              "</main>", "</body>", "</html>", ""]
    return "\n".join(parts)


def write_report(path, *, campaign_name, summary, tables, figures, notes, elongations=None,
                 caution_elongation=20.0 * u.deg, max_rows=200, captions=None):
    """Write the campaign's one-page, self-contained HTML report.

    Parameters
    ----------
    path : str or path-like
        Destination file; its folder must exist.
    campaign_name : str
    summary : dict
        Key facts shown as a list (name -> value; Quantities, Times and numbers formatted).
    tables : dict of str -> `~astropy.table.Table`
        Each shown as a section with units in the header; long tables show ``max_rows`` rows.
    figures : dict of str -> `~matplotlib.figure.Figure`
        Embedded as base64 PNG images.
    notes : list of str
        Free-text remarks (warnings, assumptions, what was left out).
    elongations : `~astropy.units.Quantity` ['angle'], optional
        Solar elongations of the frames; when any is below ``caution_elongation`` the page opens
        with a caution about pointing optics near the Sun that defers to local rules and
        experienced practice.
    caution_elongation : `~astropy.units.Quantity` ['angle']
        Default 20°.
    max_rows : int
    captions : dict of str -> str, optional
        Caption per figure name (default the name).

    Returns
    -------
    path : `pathlib.Path`

    Raises
    ------
    TypeError
        For a table or figure of the wrong kind.
    OSError
        ``"<path>: cannot write (<reason>)"``, if the folder is missing (it is not made) or not
        writable; no partial file is left behind.

    Examples
    --------
    >>> import tempfile, os
    >>> out = os.path.join(tempfile.mkdtemp(), "report.html")
    >>> write_report(out, campaign_name="Demo", summary={}, tables={}, figures={},
    ...              notes=["nothing yet"]).name
    'report.html'
    """
    path = Path(path)
    text = render_report(campaign_name=campaign_name, summary=summary, tables=tables,
                         figures=figures, notes=notes, elongations=elongations,
                         caution_elongation=caution_elongation, max_rows=max_rows,
                         captions=captions)
    # a report is meant to be shared: readable by all; a missing folder is the caller's error
    with replacing(path, suffix=".tmp", mode=0o644, fsync=True) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
