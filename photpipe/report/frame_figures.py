"""Figures of single frames for the page: Σ(ρ) profiles and the nucleus fit's images.

For each night shown (all, or the first, middle and last of a long campaign), the frames of best
and of median seeing are chosen from the nucleus fits' FWHM (the frame in the middle of the night
when there are no fits). Their profiles come from the night's ``profiles.ecsv`` and their images
from ``<night>/nucleus_images/<frame>.fits``, both written by the campaign.
"""

from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.report.headline import night_date

__all__ = ["frame_figure_jobs", "representative_frames"]

_MAX_NIGHTS = 3


def _column(table, name, unit=None):
    col = table[name]
    if unit is not None and hasattr(col, "unit") and col.unit is not None:
        return np.asarray(u.Quantity(col).to_value(unit), dtype=float)
    return np.asarray(getattr(col, "value", col), dtype=float)


def representative_frames(nucleus):
    """Per night: the best-seeing frame and the median-seeing one (from ``fwhm_arcsec``).

    Parameters
    ----------
    nucleus : `~astropy.table.Table`
        With ``frame``, ``mjd_utc_mid``, ``fwhm_arcsec`` and optionally ``night``.

    Returns
    -------
    chosen : list of (str, str, dict)
        ``(night, date, {"best": (frame, fwhm), "median": (frame, fwhm)})``, nights in time
        order; one entry when both are the same frame.

    Examples
    --------
    >>> from astropy.table import QTable
    >>> t = QTable({"night": ["n1"] * 3, "frame": ["a", "b", "c"],
    ...             "mjd_utc_mid": [61010.1, 61010.2, 61010.3], "fwhm_arcsec": [3.0, 2.1, 2.6]})
    >>> representative_frames(t)[0][2]
    {'best': ('b', 2.1), 'median': ('c', 2.6)}
    """
    if nucleus is None or len(nucleus) == 0:
        return []
    mjd = _column(nucleus, "mjd_utc_mid")
    fwhm = _column(nucleus, "fwhm_arcsec", u.arcsec) if "fwhm_arcsec" in nucleus.colnames \
        else np.full(len(nucleus), np.nan)
    nights = (np.asarray(nucleus["night"]).astype(str) if "night" in nucleus.colnames
              else np.floor(mjd - 0.5).astype(int).astype(str))
    frames = [str(f) for f in np.asarray(nucleus["frame"])]
    order = sorted(set(nights), key=lambda n: np.nanmin(mjd[nights == n]))
    if len(order) > _MAX_NIGHTS:
        order = [order[0], order[len(order) // 2], order[-1]]
    chosen = []
    for night in order:
        sel = np.flatnonzero((nights == night) & np.isfinite(mjd))
        ok = sel[np.isfinite(fwhm[sel])]
        if ok.size == 0:
            middle = sel[np.argsort(mjd[sel])][sel.size // 2]
            picks = {"median": (frames[middle], float("nan"))}
        else:
            ranked = ok[np.argsort(fwhm[ok], kind="stable")]
            best, median = ranked[0], ranked[ranked.size // 2]
            picks = {"best": (frames[best], float(fwhm[best]))}
            if median != best:
                picks["median"] = (frames[median], float(fwhm[median]))
        chosen.append((night, night_date(mjd[sel]), picks))
    return chosen


def _night_folder(out_dir, night, frame, sub):
    direct = Path(out_dir) / night / sub / f"{frame}.fits"
    if direct.is_file():
        return direct
    found = sorted(Path(out_dir).glob(f"*/{sub}/{frame}.fits"))
    return found[0] if found else None


def _profile(out_dir, night, frame):
    from astropy.io import ascii  # noqa: F401 - registers the ECSV reader

    from photpipe.campaign.frame_views import profile_for_figure

    for path in [Path(out_dir) / night / "profiles.ecsv",
                 *sorted(Path(out_dir).glob("*/profiles.ecsv"))]:
        if not path.is_file():
            continue
        table = QTable.read(path, format="ascii.ecsv")
        rows = table[np.asarray(table["frame"]).astype(str) == frame]
        if len(rows):
            return profile_for_figure(rows)
    return None


def _seeing(label, fwhm):
    return f"{label} seeing, FWHM {fwhm:.2f}\"" if np.isfinite(fwhm) else "middle of the night"


def frame_figure_jobs(nucleus, out_dir):
    """Figure jobs ``name -> (caption, build)`` for the chosen frames' profiles and images."""
    from photpipe.campaign.frame_views import read_nucleus_images
    from photpipe.report.images import nucleus_images_figure, profile_figure

    if out_dir is None:
        return {}
    jobs = {}
    for night, date, picks in representative_frames(nucleus):
        frame, fwhm = picks.get("median") or picks["best"]
        label = "median" if "median" in picks else "best"
        profile = _profile(out_dir, night, frame)
        if profile is not None and len(profile):
            jobs[f"profiles_{date}"] = (
                f"Coma surface brightness Σ(ρ) of frame {frame} of {date} ({_seeing(label, fwhm)}"
                "): all azimuths and the sectors toward the projected Sun and away from it, ρ in "
                "km at the comet, log axes; the dashed line is Σ ∝ 1/ρ (a steady coma, Jewitt & "
                "Meech 1987). Inside about one FWHM the profile is the PSF's.",
                lambda p=profile, f=frame, d=date: profile_figure(
                    p, title=f"Σ(ρ), {f}, {d}"))
        for label, (frame, fwhm) in picks.items():
            path = _night_folder(out_dir, night, frame, "nucleus_images")
            if path is None:
                continue
            jobs[f"nucleus_images_{date}_{label}"] = (
                f"Nucleus + coma fit of frame {frame} of {date} ({_seeing(label, fwhm)}): the "
                "data, the PSF-convolved model and data minus model (electrons; masked stars "
                "blank). A good fit leaves noise without structure at the centre.",
                lambda p=path, f=frame, d=date: _images_figure(p, f, d, nucleus_images_figure,
                                                               read_nucleus_images))
    return jobs


def _images_figure(path, frame, date, draw, read):
    images = read(path)
    return draw(images["data"], images["model"], images["residual"],
                title=f"{frame}, {date}, FWHM {images['fwhm_arcsec']:.2f}\"")
