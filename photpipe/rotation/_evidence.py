"""Evidence beside the adopted period: the named aliases, each method's peaks and relation."""

import warnings
from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.rotation.aliases import describe_relation, periodogram_peaks, window_peaks
from photpipe.rotation.errors import RotationWarning
from photpipe.rotation.fit import fit_fourier_series

__all__ = ["Evidence", "gather_evidence"]


@dataclass(frozen=True)
class Evidence:
    """The window peaks, aliases, candidates and per-method summary of a search."""

    window: QTable
    aliases: QTable
    candidates: QTable
    methods_summary: dict
    flags: tuple


def gather_evidence(points, fit, periodograms, grid, *, alias_delta_chi2, n_candidates,
                    oversample):
    """Return the aliases with their Δχ², every method's best peaks and how they relate.

    Warns ``alias_ambiguous`` when an alias fits within ``alias_delta_chi2`` and
    ``methods_disagree`` when a method's best period is unrelated to the adopted one.
    """
    t, y, dy = points.t, points.y, points.dy
    flags = []
    half_width = 1.0 / (2 * grid.baseline_d)
    window = window_peaks(t, sites=points.lightcurve.site,
                          f_max=min(3.5, grid.f_max - grid.f0 + 0.5))
    aliases = _aliases(t, y, dy, fit, window, grid.f0, grid.f_max, half_width)
    if len(aliases) and float(aliases["delta_chi2"][0]) < alias_delta_chi2:
        flags.append("alias_ambiguous")
        warnings.warn(
            f"the alias '{aliases['name'][0]}' ({aliases['period_h'][0].to_value(u.h):.4f} h) "
            f"fits nearly as well (Δχ² = {float(aliases['delta_chi2'][0]):.1f}): more nights "
            f"or another site are needed to decide", RotationWarning, stacklevel=3)
    tolerance = max(3 * fit.frequency_err, 0.5 / grid.baseline_d)
    candidates = _candidates(periodograms, fit.frequency, tolerance, window, n_candidates,
                             distance=max(1, oversample // 2))
    summary = {}
    for name, pg in periodograms.items():
        f_best = pg.best_frequency
        summary[name] = {"period_h": 24.0 / f_best,
                         "relation": describe_relation(f_best, fit.frequency,
                                                       tolerance=tolerance, window=window),
                         "fap": float(pg.fap[pg.best_index]), **pg.info}
    if any(s["relation"] == "unrelated" for s in summary.values()):
        flags.append("methods_disagree")
        warnings.warn("the methods' best periods are not the same, a harmonic or an alias of "
                      "each other: see the candidates table", RotationWarning, stacklevel=3)
    return Evidence(window=window, aliases=aliases, candidates=candidates,
                    methods_summary=summary, flags=tuple(flags))


def _candidates(periodograms, adopted, tolerance, window, n_candidates, distance):
    rows = []
    for name, pg in periodograms.items():
        for rank, i in enumerate(periodogram_peaks(pg.score, n_peaks=n_candidates,
                                                   distance=distance), start=1):
            f = float(pg.frequency[i])
            rows.append((name, rank, f, 24.0 / f, float(pg.statistic[i]), float(pg.fap[i]),
                         describe_relation(f, adopted, tolerance=tolerance, window=window)))
    names = ["method", "rank", "frequency_per_day", "period_h", "statistic", "fap", "relation"]
    cols = list(zip(*rows)) if rows else [[] for _ in names]
    table = QTable(dict(zip(names, [np.array(c) for c in cols])))
    table["frequency_per_day"] = np.asarray(table["frequency_per_day"], dtype=float) / u.day
    table["period_h"] = np.asarray(table["period_h"], dtype=float) * u.h
    return table


def _aliases(t, y, dy, fit, window, f_min, f_max, half_width):
    rows = []
    scale2 = fit.error_scale**2
    for row in window:
        fw = float(row["frequency"].to_value(1 / u.day))
        for sign, text in ((1, "+"), (-1, "-")):
            f = fit.frequency + sign * fw
            if not f_min <= f <= f_max:
                continue
            alt = fit_fourier_series(t, y, dy, f, fit.order, search_half_width=half_width)
            rows.append((f"adopted {text} {row['name']}", alt.frequency, 24 / alt.frequency,
                         (alt.chi2 - fit.chi2) / scale2))
    rows.sort(key=lambda r: r[3])
    names = ["name", "frequency_per_day", "period_h", "delta_chi2"]
    cols = list(zip(*rows)) if rows else [[] for _ in names]
    table = QTable(dict(zip(names, [np.array(c) for c in cols])))
    table["name"] = np.asarray(table["name"], dtype=str)
    table["frequency_per_day"] = np.asarray(table["frequency_per_day"], dtype=float) / u.day
    table["period_h"] = np.asarray(table["period_h"], dtype=float) * u.h
    table["delta_chi2"] = np.asarray(table["delta_chi2"], dtype=float)
    return table
