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
import re
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import Table
from astropy.time import Time
from matplotlib.figure import Figure

from photpipe import __version__
from photpipe._files import replacing
from photpipe.report.numbers import KEY_LABELS, decimals_for, key_label, number

__all__ = ["write_report", "render_report", "figure_to_data_uri", "SUN_CAUTION", "SECTIONS"]

_PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948:2003, section 5.2)

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
h3 { font-size: 1rem; margin: 1.2rem 0 0.3rem; }
div.scroll { max-width: 100%; overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.82rem; margin: 0.4rem 0 0.2rem; }
ul.first { background: #eef4f9; border-left: 4px solid #0072B2; padding: 0.6rem 1rem 0.6rem 2rem;
           margin: 0.5rem 0; }
ul.first li { margin-bottom: 0.25rem; }
dl.summary dd { overflow-wrap: anywhere; }
th, td { border: 1px solid #ccc; padding: 0.2rem 0.45rem; text-align: right;
         white-space: nowrap; }
th { white-space: normal; min-width: 4rem; vertical-align: bottom; }
td.text { white-space: normal; max-width: 24rem; overflow-wrap: anywhere; }
th { background: #e8eef4; }
th small { font-weight: normal; color: #555; }
td.text { text-align: left; }
.note { color: #555; font-size: 0.82rem; margin: 0.1rem 0 0.8rem; }
figure { margin: 1rem 0; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; background: white;
             box-sizing: border-box; }
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


def _image_uri(name, fig):
    """A figure object, or the bytes or path of a PNG already drawn, as a data URI."""
    if isinstance(fig, (bytes, bytearray)):
        data = bytes(fig)
    elif isinstance(fig, Path):
        data = fig.read_bytes()
    else:
        return figure_to_data_uri(fig)
    if not data.startswith(_PNG_MAGIC):
        msg = f"figures[{name!r}] is not a PNG image"
        raise TypeError(msg)
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def _unit_text(unit):
    if unit is None or str(unit) in ("", "None"):
        return ""
    return "au" if unit == u.au else unit.to_string()


def _format_cell(value, decimals=None):
    if isinstance(value, Time):
        return html.escape(value.utc.iso[:16]), False
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
    if isinstance(value, (list, tuple)):
        return html.escape(", ".join(str(v) for v in value)), True
    try:
        f = float(value)
    except (TypeError, ValueError):
        return html.escape(str(value)), True
    if not math.isfinite(f):
        return "—", False
    if decimals is not None:
        return (f"{round(f, decimals):.0f}" if decimals <= 0 else f"{f:.{decimals}f}"), False
    return number(f, sig=4), False


def _error_partner(name, names):
    """The column holding the error of ``name``, if the table has one."""
    for unit in ("_cm", "_mag", "_h", "_km", "_au", "_deg", ""):
        if unit and not name.endswith(unit):
            continue
        stem = name[: len(name) - len(unit)] if unit else name
        for cand in (f"{stem}_err{unit}", f"{name} error", f"{name}_err"):
            if cand in names and cand != name:
                return cand
    return None


def _column_decimals(table, max_rows):
    """Decimals per (column, row): a value and its error rounded to the error's 2 digits."""
    out = {}
    for name in table.colnames:
        partner = _error_partner(name, table.colnames)
        if partner is None:
            continue
        errs = table[partner][:max_rows]
        errs = errs.value if isinstance(errs, u.Quantity) else errs
        dec = []
        for e in errs:
            try:
                dec.append(decimals_for(float(e)))
            except (TypeError, ValueError):
                dec.append(None)
        out[name] = out[partner] = dec
    return out


def _header(col, table):
    unit = _unit_text(getattr(table[col], "unit", None))
    if col in KEY_LABELS:
        label, key_unit = KEY_LABELS[col]
        unit = unit or key_unit
    elif "_" in col:
        label = key_label(col)
        if label.endswith(")") and "(" in label:
            label, _, rest = label.rpartition(" (")
            unit = unit or rest[:-1]
    else:
        label = col
    text = html.escape(label)
    if unit:
        text += f"<br><small>{html.escape(unit)}</small>"
    return f"<th>{text}</th>"


def _table_html(name, table, max_rows, *, empty=None):
    if not isinstance(table, Table):
        msg = f"tables[{name!r}] must be an astropy Table or QTable, got {type(table).__name__}"
        raise TypeError(msg)
    if len(table) == 0:
        return f'<p class="note">{html.escape(empty or "No rows.")}</p>'
    head = [_header(col, table) for col in table.colnames]
    decimals = _column_decimals(table, max_rows)
    rows = []
    for i, row in enumerate(table[:max_rows]):
        cells = []
        for col in table.colnames:
            dec = decimals.get(col, [None] * (i + 1))[i]
            fmt = table[col].info.format
            if dec is None and isinstance(fmt, str) and fmt.startswith(".") \
                    and isinstance(row[col], (float, np.floating, u.Quantity)):
                value = row[col].value if isinstance(row[col], u.Quantity) else row[col]
                text, is_text = ("—" if not np.isfinite(value) else format(value, fmt)), False
            else:
                text, is_text = _format_cell(row[col], dec)
            cells.append(f'<td class="text">{text}</td>' if is_text else f"<td>{text}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    out = [f'<div class="scroll"><table><thead><tr>{"".join(head)}</tr></thead>'
           f"<tbody>{''.join(rows)}</tbody></table></div>"]
    if len(table) > max_rows:
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


#: The page's sections in the order of the data, each with the figures and tables it holds.
SECTIONS = (
    ("observations", "Observations and data quality",
     ("quality",), ("Nights observed",)),
    ("photometry", "Comet photometry and coma",
     ("cutouts", "total_magnitude", "afrho_aperture", "profiles", "coma_slope"), ()),
    ("nucleus", "Nucleus", ("nucleus", "nucleus_images"), ()),
    ("activity", "Activity: Afρ against r_h and outbursts",
     ("activity_time", "activity_rh", "outbursts"),
     ("Activity trend", "Outbursts", "Night means for the trend", "Outbursts within a night")),
    ("rotation", "Rotation", ("rotation_periodograms", "rotation_phased", "rotation_residuals"),
     ("Rotation", "Rotation candidates")),
    ("size", "Nucleus size and mass", (), ("Nucleus size and mass",)),
)


_CLASS_PREFIX = re.compile(r"^[A-Z][A-Za-z]*(Warning|Error): ")


def _plain_note(note):
    """A note without a leading Python class name ("PoorResultWarning: ...").

    Examples
    --------
    >>> _plain_note("PoorResultWarning: branch left out")
    'branch left out'
    """
    return _CLASS_PREFIX.sub("", str(note))


def _head(title):
    return ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
            '<meta name="viewport" content="width=device-width, initial-scale=1">',
            f"<title>{title}: campaign report</title>", f"<style>{_STYLE}</style>", "</head>"]


def _figure_html(name, fig, captions):
    uri = _image_uri(name, fig)
    cap = html.escape(captions.get(name, name.replace("_", " ")))
    return (f'<figure id="fig-{html.escape(name)}"><img src="{uri}" alt="{cap}">'
            f"<figcaption>{cap}</figcaption></figure>")


def _longer_stem(name, stem):
    """Whether ``name`` belongs to a longer stem of the page ("nucleus_images", not "nucleus")."""
    return any(len(other) > len(stem) and (name == other or name.startswith(other + "_"))
               for _, _, stems, _ in SECTIONS for other in stems)


def _sections_html(figures, tables, captions, reasons, max_rows):
    parts, used_f, used_t = [], set(), set()
    for key, title, fig_names, table_names in SECTIONS:
        body = []
        for stem in fig_names:
            for name in [n for n in figures if (n == stem or n.startswith(stem + "_"))
                         and n not in used_f and not _longer_stem(n, stem)]:
                body.append(_figure_html(name, figures[name], captions))
                used_f.add(name)
        for name in table_names:
            if name in tables:
                body.append(f"<h3>{html.escape(name)}</h3>")
                body.append(_table_html(name, tables[name], max_rows,
                                        empty=reasons.get(name)))
                used_t.add(name)
        parts.append(f'<section id="{key}"><h2>{html.escape(title)}</h2>')
        if reasons.get(key):
            parts.append(f'<p class="note">{html.escape(reasons[key])}</p>')
        if not body and not reasons.get(key):
            parts.append('<p class="note">Nothing was produced for this stage in this run.</p>')
        parts += body + ["</section>"]
    rest_f = [n for n in figures if n not in used_f]
    rest_t = [n for n in tables if n not in used_t]
    if rest_f or rest_t:
        parts.append('<section id="other"><h2>Other results</h2>')
        parts += [_figure_html(n, figures[n], captions) for n in rest_f]
        for n in rest_t:
            parts += [f"<h3>{html.escape(n)}</h3>",
                      _table_html(n, tables[n], max_rows, empty=reasons.get(n))]
        parts.append("</section>")
    return parts


def render_report(*, campaign_name, summary, tables, figures, notes, elongations=None,
                  caution_elongation=20.0 * u.deg, max_rows=200, captions=None,
                  generated=None, highlights=None, reasons=None):
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
    reasons = reasons or {}
    limit = float(u.Quantity(caution_elongation, u.deg).value)
    min_elong = _min_elongation(elongations)
    generated = generated or datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    title = html.escape(str(campaign_name))
    parts = _head(title) + [
        "<body>", "<main>", f"<h1>{title}</h1>",
        f'<p class="sub">Campaign report made by photpipe {html.escape(__version__)} on '
        f"{html.escape(generated)}.</p>"]
    if min_elong is not None and min_elong < limit:
        text = html.escape(SUN_CAUTION.format(limit=limit, min_elong=min_elong))
        parts.append(f'<div class="caution" role="alert"><strong>Sun caution.</strong> '
                     f"{text}</div>")
    if highlights:
        parts.append('<section id="first"><h2>What to look at first</h2><ul class="first">'
                     + "".join(f"<li>{html.escape(str(h))}</li>" for h in highlights)
                     + "</ul></section>")
    parts += ["<h2>Summary</h2>", _summary_html(summary)]
    parts += _sections_html(figures, tables, captions, reasons, max_rows)
    if notes:
        parts.append("<h2>Notes</h2>")
        parts.append('<ul class="notes">' + "".join(
            f"<li>{html.escape(_plain_note(n))}</li>" for n in notes) + "</ul>")
    parts += ["<footer>All numbers come from the campaign's measurement tables and result "
              "files; every figure and table is embedded in this file, which needs no network "
              "to read.</footer>", "</main>", "</body>", "</html>", ""]
    return "\n".join(parts)


def write_report(path, *, campaign_name, summary, tables, figures, notes, elongations=None,
                 caution_elongation=20.0 * u.deg, max_rows=200, captions=None, highlights=None,
                 reasons=None):
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
    figures : dict of str -> `~matplotlib.figure.Figure`, PNG bytes or `pathlib.Path`
        Embedded as base64 PNG images, each in the section of its stage (`SECTIONS`).
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
    highlights : list of str, optional
        "What to look at first": the headline numbers and their caveats.
    reasons : dict of str -> str, optional
        Why a section (by `SECTIONS` key) or a table (by name) is empty or partial.

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
                         captions=captions, highlights=highlights, reasons=reasons)
    # a report is meant to be shared: readable by all; a missing folder is the caller's error
    with replacing(path, suffix=".tmp", mode=0o644, fsync=True) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
