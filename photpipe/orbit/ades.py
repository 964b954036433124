"""Read and write optical astrometry in ADES, the IAU's Astrometry Data Exchange Standard.

Both of its forms are handled: PSV (pipe-separated values with ``#``/``!`` header lines) and
XML (``<ades><obsBlock><obsContext/><obsData><optical/>...``). Field names are the standard's
(ADES description, IAU Commission 20 / MPC, 2017 and later): ``permID``, ``provID``,
``trkSub``, ``mode``, ``stn``, ``obsTime``, ``ra``, ``dec``, ``rmsRA`` (arcsec, of α cos δ),
``rmsDec``, ``rmsCorr``, ``astCat``, and for a site given in the record ``sys``, ``ctr``,
``pos1``-``pos3``.
"""

import os
import xml.etree.ElementTree as ET
from dataclasses import dataclass, field

import numpy as np
from astropy.table import QTable
from astropy.time import Time

from photpipe._files import replacing

__all__ = ["AstrometryReading", "read_ades", "write_ades_psv", "write_ades_xml",
           "write_night_ades", "ADES_FIELDS", "OBSERVATION_COLUMNS"]

#: ADES fields written, in order (identification, then the measurement and its errors).
ADES_FIELDS = ("permID", "provID", "trkSub", "mode", "stn", "obsTime", "ra", "dec", "rmsRA",
               "rmsDec", "rmsCorr", "astCat", "sys", "ctr", "pos1", "pos2", "pos3", "remarks")

#: Columns of the observation table the orbit fit takes (one row per observation).
OBSERVATION_COLUMNS = ("obs_id", "object", "stn", "time", "ra_deg", "dec_deg", "rms_ra_arcsec",
                       "rms_dec_arcsec", "rms_corr", "ast_cat", "mode", "sys", "pos1", "pos2",
                       "pos3", "source")

_ID_FIELDS = ("permID", "provID", "trkSub")


@dataclass
class AstrometryReading:
    """Observations read from ADES files, and what could not be used.

    Attributes
    ----------
    table : `~astropy.table.QTable`
        One row per usable observation, columns `OBSERVATION_COLUMNS`; ``source`` is
        ``file:line`` (PSV) or ``file:#k`` (the k-th ``optical`` element of an XML file).
    problems : list of str
        One line per skipped record or file, naming it and the reason.
    """

    table: QTable
    problems: list = field(default_factory=list)


def _records_psv(path, text):
    names, out = None, []
    for lineno, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped[0] in "#!":
            names = None if stripped[0] == "#" and out else names
            continue
        values = [v.strip() for v in line.split("|")]
        if names is None:
            names = values
            continue
        if len(values) != len(names):
            out.append((f"{path}:{lineno}", None,
                        f"{len(values)} fields where the header line has {len(names)}"))
            continue
        out.append((f"{path}:{lineno}", dict(zip(names, values)), None))
    return out


def _records_xml(path, text):
    try:
        root = ET.fromstring(text)
    except ET.ParseError as exc:
        msg = f"{path}: not readable as ADES XML: {exc}"
        raise ValueError(msg) from exc
    out = []
    for k, elem in enumerate(root.iter("optical"), start=1):
        rec = {child.tag: (child.text or "").strip() for child in elem}
        out.append((f"{path}:#{k}", rec, None))
    return out


def _number(rec, name, *, required=True, default=np.nan):
    text = rec.get(name, "")
    if text == "":
        if required:
            raise ValueError(f"no {name}")
        return default
    try:
        value = float(text)
    except ValueError:
        raise ValueError(f"{name} {text!r} is not a number") from None
    if not np.isfinite(value):
        raise ValueError(f"{name} {text!r} is not finite")
    return value


def _row(rec, default_rms):
    ident = next((rec[k] for k in _ID_FIELDS if rec.get(k)), "")
    if not ident:
        raise ValueError("no permID, provID or trkSub")
    stn = rec.get("stn", "")
    if not stn:
        raise ValueError("no stn")
    text = rec.get("obsTime", "")
    if not text:
        raise ValueError("no obsTime")
    try:
        time = Time(text.rstrip("Z"), format="isot", scale="utc")
    except ValueError:
        raise ValueError(f"obsTime {text!r} is not an ISO 8601 UTC time") from None
    ra, dec = _number(rec, "ra"), _number(rec, "dec")
    if not (0.0 <= ra < 360.0 and -90.0 <= dec <= 90.0):
        raise ValueError(f"ra {ra} / dec {dec} out of range")
    rms = []
    for name in ("rmsRA", "rmsDec"):
        value = _number(rec, name, required=default_rms is None, default=default_rms)
        if not value > 0.0:
            raise ValueError(f"{name} must be positive, got {value}")
        rms.append(value)
    corr = _number(rec, "rmsCorr", required=False, default=0.0)
    if not -1.0 < corr < 1.0:
        raise ValueError(f"rmsCorr must be within -1 and 1, got {corr}")
    pos = [_number(rec, f"pos{k}", required=False) for k in (1, 2, 3)]
    return {"obs_id": rec.get("obsID", "") or "", "object": ident, "stn": stn, "time": time,
            "ra_deg": ra, "dec_deg": dec, "rms_ra_arcsec": rms[0], "rms_dec_arcsec": rms[1],
            "rms_corr": corr, "ast_cat": rec.get("astCat", ""), "mode": rec.get("mode", ""),
            "sys": rec.get("sys", ""), "pos1": pos[0], "pos2": pos[1], "pos3": pos[2]}


def _read_one(path, default_rms, rows, problems):
    try:
        with open(path, encoding="utf-8") as fh:
            text = fh.read()
    except (OSError, UnicodeDecodeError) as exc:
        problems.append(f"{path}: cannot read: {exc}")
        return
    try:
        recs = _records_xml(path, text) if text.lstrip().startswith("<") else \
            _records_psv(path, text)
    except ValueError as exc:
        problems.append(str(exc))
        return
    if not recs:
        problems.append(f"{path}: no optical observations found")
    for source, rec, why in recs:
        if why is None:
            try:
                row = _row(rec, default_rms)
            except ValueError as exc:
                why = str(exc)
        if why is not None:
            problems.append(f"{source}: skipped: {why}")
            continue
        row["source"] = source
        rows.append(row)


def _drop_duplicates(rows, problems):
    seen, kept = {}, []
    for row in rows:
        key = (row["object"], row["stn"], round(row["time"].mjd * 86400.0, 3))
        if key in seen:
            problems.append(f"{row['source']}: skipped: duplicate of {seen[key]} "
                            f"(same object, station and time)")
            continue
        seen[key] = row["source"]
        kept.append(row)
    return kept


def read_ades(paths, *, default_rms_arcsec=None):
    r"""Read optical observations from ADES files (PSV or XML, told apart by their content).

    Parameters
    ----------
    paths : str or sequence of str
        Files to read; each is read on its own, a bad file does not stop the others.
    default_rms_arcsec : float, optional
        Uncertainty given to records without ``rmsRA``/``rmsDec``; by default such records
        are skipped (a position without an uncertainty cannot be weighted honestly).

    Returns
    -------
    AstrometryReading
        The table, sorted by time, and the problems met (missing or malformed fields,
        duplicates, unreadable files), each naming the file and line.

    Examples
    --------
    >>> import os, tempfile
    >>> text = ("# version=2017\n"
    ...         "permID|mode|stn|obsTime|ra|dec|rmsRA|rmsDec|astCat\n"
    ...         "C1|CCD|Z01|2026-01-05T03:00:00.0Z|120.5|10.25|0.3|0.3|Gaia3\n"
    ...         "C1|CCD|Z01|2026-01-05T03:10:00.0Z|120.6|abc|0.3|0.3|Gaia3\n")
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = os.path.join(d, "night.psv")
    ...     _ = open(p, "w").write(text)
    ...     got = read_ades([p])
    >>> len(got.table), got.problems[0].split(": ", 1)[1]
    (1, "skipped: dec 'abc' is not a number")
    """
    if isinstance(paths, (str, os.PathLike)):
        paths = [paths]
    rows, problems = [], []
    for path in paths:
        _read_one(os.fspath(path), default_rms_arcsec, rows, problems)
    rows = _drop_duplicates(rows, problems)
    rows.sort(key=lambda r: r["time"].mjd)
    return AstrometryReading(_table(rows), problems)


def _table(rows):
    cols = {name: [r[name] for r in rows] for name in OBSERVATION_COLUMNS}
    times = Time([r["time"] for r in rows]) if rows else Time([], format="mjd", scale="utc")
    cols["time"] = times
    table = QTable()
    for name in OBSERVATION_COLUMNS:
        if name == "time":
            table[name] = times
        elif name in ("ra_deg", "dec_deg", "rms_ra_arcsec", "rms_dec_arcsec", "rms_corr",
                      "pos1", "pos2", "pos3"):
            table[name] = np.asarray(cols[name], dtype=float)
        else:
            table[name] = np.asarray(cols[name], dtype=str)
    return table


def _format(name, value):
    if value is None or (isinstance(value, float) and not np.isfinite(value)):
        return ""
    if name == "obsTime":
        return value.utc.isot[:23] + "Z" if isinstance(value, Time) else str(value)
    if name in ("ra", "dec"):
        return f"{float(value):.9f}"
    if name in ("rmsRA", "rmsDec", "rmsCorr"):
        return f"{float(value):.4f}"
    if name in ("pos1", "pos2"):
        return f"{float(value):.7f}"
    if name == "pos3":
        return f"{float(value):.2f}"
    return str(value)


def _used_fields(records):
    return [f for f in ADES_FIELDS if any(_format(f, r.get(f)) for r in records)]


def write_ades_psv(records, path, *, observatory=None):
    """Write ADES records (dicts keyed by ADES field names) as PSV.

    Parameters
    ----------
    records : sequence of dict
        One dict per observation, keys from `ADES_FIELDS` (``obsTime`` a Time or ISO text).
    path : str
        Destination; written to a temporary name and renamed.
    observatory : dict, optional
        ``{"mpcCode": ..., "name": ...}`` for the ``# observatory`` header.
    """
    names = _used_fields(records)
    lines = ["# version=2017"]
    if observatory:
        lines.append("# observatory")
        lines += [f"! {k} {v}" for k, v in observatory.items()]
    table = [[_format(n, r.get(n)) for n in names] for r in records]
    widths = [max([len(n)] + [len(row[i]) for row in table]) for i, n in enumerate(names)]
    lines.append("|".join(n.ljust(w) for n, w in zip(names, widths)))
    lines += ["|".join(v.ljust(w) for v, w in zip(row, widths)) for row in table]
    with replacing(path) as tmp, open(tmp, "w", encoding="utf-8") as fh:
        fh.write("\n".join(lines) + "\n")


def write_ades_xml(records, path, *, observatory=None):
    """Write ADES records as XML (one ``obsBlock``); arguments as `write_ades_psv`."""
    root = ET.Element("ades", version="2017")
    block = ET.SubElement(root, "obsBlock")
    context = ET.SubElement(block, "obsContext")
    obs_elem = ET.SubElement(context, "observatory")
    for k, v in (observatory or {}).items():
        ET.SubElement(obs_elem, k).text = str(v)
    data = ET.SubElement(block, "obsData")
    for rec in records:
        opt = ET.SubElement(data, "optical")
        for name in ADES_FIELDS:
            text = _format(name, rec.get(name))
            if text:
                ET.SubElement(opt, name).text = text
    ET.indent(root)
    with replacing(path) as tmp:
        ET.ElementTree(root).write(tmp, encoding="UTF-8", xml_declaration=True)


def write_night_ades(records, folder, night, *, observatory=None):
    """Write one night's records as ``<folder>/<night>_astrometry.psv`` and ``.xml``.

    Returns
    -------
    paths : tuple of str
        The PSV and XML files written.
    """
    base = os.path.join(os.fspath(folder), f"{night}_astrometry")
    write_ades_psv(records, base + ".psv", observatory=observatory)
    write_ades_xml(records, base + ".xml", observatory=observatory)
    return base + ".psv", base + ".xml"
