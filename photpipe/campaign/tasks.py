"""The work done on one science frame, in a worker process.

:func:`process_frame` is a picklable top-level function of plain data: a dict describing the frame
and a dict of what every frame of the night shares (the master calibrations, stage options). It
calls the stages' public functions only, catches each stage's failure, records it, and goes on
with what can still be done. It never touches the campaign store: it returns a
:class:`~photpipe.campaign.FrameRecord` for the parent process to store.
"""

import functools
import hashlib
import os
import traceback

import numpy as np
from astropy import units as u

from photpipe import frames as frame_stage
from photpipe import nucleus as nucleus_stage
from photpipe import photometry as photometry_stage
from photpipe import schema

from . import frame_views
from .records import FrameRecord

__all__ = ["process_frame", "frame_reference_stars", "FRAME_ERRORS"]

#: Exceptions a stage raises for bad input; anything else is reported with its traceback's last
#: line, since it points at a bug rather than at the data.
FRAME_ERRORS = (ValueError, TypeError, KeyError, OSError, RuntimeError, ArithmeticError)

#: Geometry columns of ``observing_geometry`` -> stored column (from the schema).
_GEOMETRY_MAP = schema.stage_names("geometry")


def _reason(exc, info):
    """One line for the skip list: the stage's own message, or the type and place of a bug.

    A leading frame name or path is dropped: the skip list names the frame already, and equal
    reasons can then be counted together.
    """
    text = getattr(exc, "problem", None) or str(exc) or type(exc).__name__
    for prefix in (info.path, os.path.basename(info.path), info.name, f"frame {info.name!r}"):
        if text.startswith(f"{prefix}: "):
            text = text[len(prefix) + 2:]
            break
    if isinstance(exc, FRAME_ERRORS):
        return text
    where = traceback.extract_tb(exc.__traceback__)[-1]
    return f"{type(exc).__name__}: {text} (at {os.path.basename(where.filename)}:{where.lineno})"


@functools.lru_cache(maxsize=2)
def _reference_store(path, mtime_ns):
    """The campaign's reference-star store, opened once per worker process (and file version)."""
    return photometry_stage.ReferenceStarStore(path)


#: Room around a frame's corners when asking the store for its stars: twice the largest header
#: WCS error the photometry stage searches (its ``max_wcs_offset``, 30 arcsec by default).
_FOOTPRINT_MARGIN = 60 * u.arcsec


def frame_reference_stars(frame, path, *, margin=_FOOTPRINT_MARGIN):
    """Reference stars of one calibrated frame's footprint, from the store at ``path``.

    Raises
    ------
    ValueError
        ``"no matching stars: ..."`` when the frame lies outside the catalogue's coverage, or
        when the frame has no celestial WCS.
    """
    store = _reference_store(path, os.stat(path).st_mtime_ns)
    stars = store.for_frame(frame.wcs, frame.data.shape, margin=margin)
    if len(stars) == 0:
        center, radius = photometry_stage.frame_cone(frame.wcs, frame.data.shape,
                                                     margin=margin)
        msg = (f"no matching stars: the reference-star catalogue has no star within "
               f"{radius.to_value(u.deg):.3f} deg of the frame centre (RA "
               f"{center.ra.deg:.4f}, Dec {center.dec.deg:.4f} deg); the frame lies outside "
               "its coverage")
        raise ValueError(msg)
    return stars


def _calibrations_used(masters, info):
    bias, dark, flat, _ = masters.choose(info)
    used = []
    for master in (bias, dark, flat):
        if master is None:
            continue
        row = {"kind": master.kind, "path": master.path, "n_inputs": master.n_frames}
        if master.kind == "dark":
            row["exptime_s"] = master.key[3] / 1000.0
        if master.kind == "flat":
            row["filter"] = str(master.key[3])
        used.append(row)
    return tuple(used)


def _geometry_dict(row):
    if row is None:
        return None
    return {out: row[name][0] for name, out in _GEOMETRY_MAP.items() if name in row.colnames}


def process_frame(item, shared):
    """Calibrate and measure one science frame; return its `FrameRecord`.

    Parameters
    ----------
    item : dict
        ``night, frame`` (its key in the store), ``site, info`` (`~photpipe.frames.FrameInfo`),
        ``content_hash``,
        ``calibrated_path``, ``geometry`` (one-row QTable of ``observing_geometry`` or None);
        ``tracking`` when the night re-measures the frame in the mode it decided.
    shared : dict
        ``masters`` (`~photpipe.frames.MasterSet`), ``stages`` (frame stages available, in
        order), ``calibration`` / ``photometry`` / ``nucleus`` (keyword options of the stages'
        functions), ``tracking`` ("sidereal" or "comet": which of comet and stars trail),
        ``tracking_check`` (a TRACKING header, else the stars' shapes, may override it; the
        photometry decides, before it measures the stars, and the nucleus follows),
        ``reference_store`` (path of the campaign's
        `~photpipe.photometry.ReferenceStarStore`, or None) and ``reference_problem`` (why
        there is none); ``target_name`` and ``catalogue_name`` label the comet's position.

    Returns
    -------
    FrameRecord
        Results of each stage that succeeded, and ``problems`` naming each stage that did not
        and why. A frame whose calibration fails carries only its problem. With the
        photometry come the coma profile and the comet's sky position with its error
        (`photpipe.orbit.comet_position_row`); with the nucleus fit, its small images.
    """
    info = item["info"]
    stages = tuple(shared["stages"])
    problems = []
    base = dict(night=item["night"], frame=item.get("frame", info.name), path=info.path,
                content_hash=item["content_hash"], kind=info.kind,
                mjd_utc_mid=float(info.time_mid.utc.mjd), filter=info.filter,
                exptime_s=float(info.exptime.to_value(u.s)), site=item.get("site"),
                stages=stages)
    masters = shared["masters"]
    try:
        calibrations = _calibrations_used(masters, info)
        frame = frame_stage.calibrate_frame(info, masters, **shared.get("calibration", {}))
        frame, solve_problem = _plate_solved(frame, item, shared)
        calibrated_path = frame_stage.write_calibrated(frame, item["calibrated_path"])
    except Exception as exc:  # noqa: BLE001 - one frame's failure is recorded, the night goes on
        return FrameRecord(**base, problems=(("calibration", _reason(exc, info)),))

    geometry_row = item.get("geometry")
    record = dict(base, calibrations=calibrations, calibrated_path=str(calibrated_path),
                  geometry=_geometry_dict(geometry_row))
    if "geometry" in stages and geometry_row is None:
        problems.append(("geometry", item.get("geometry_problem") or "no geometry row"))

    photometry = None
    if solve_problem:
        # with a header WCS the frame goes on (a note under "astrometry"); without, no photometry
        problems.append(("astrometry" if frame.wcs is not None else "photometry",
                         solve_problem + ("; the header WCS is used" if frame.wcs is not None
                                          else "")))
    if "photometry" in stages and geometry_row is not None and frame.wcs is not None:
        try:
            photometry = _run_photometry(frame, geometry_row, shared, item)
        except Exception as exc:  # noqa: BLE001
            problems.append(("photometry", _reason(exc, info)))
        else:
            photometry.comet["coma_slope_err"] = photometry.details.get("coma_slope_err", np.nan)
            record["tracking"] = photometry.details.get("tracking")
            record.update(measurements=photometry.comet, stars=_star_rows(photometry.stars),
                          zero_point=_zero_point_row(photometry),
                          profile=frame_views.profile_rows(photometry.profile))
            try:
                record["astrometry"] = _comet_position(frame, photometry, item, shared)
            except Exception as exc:  # noqa: BLE001 - the photometry is kept
                problems.append(("astrometry", f"no comet position: {_reason(exc, info)}"))
    if "nucleus" in stages and photometry is not None:
        try:
            fit, pixel_scale, tracking = _run_nucleus(frame, photometry, item, shared)
        except Exception as exc:  # noqa: BLE001
            problems.append(("nucleus", _reason(exc, info)))
        else:
            record["nucleus"] = _with_tracking_flag(fit.to_row(), tracking,
                                                    shared.get("tracking", "sidereal"))
            record["nucleus_images"] = frame_views.nucleus_cutouts(fit)
            try:
                record["measurements"] = _with_coma_afrho(photometry.comet, fit, pixel_scale)
            except Exception as exc:  # noqa: BLE001 - the fit is kept; only these columns lack
                problems.append(("nucleus", f"coma-only Afρ not formed: {_reason(exc, info)}"))
    return FrameRecord(**record, problems=tuple(problems))


def _with_coma_afrho(comet, fit, pixel_scale):
    """The measurement rows with the coma's own Afρ beside the totals' (the nucleus taken out)."""
    if len(comet) == 0:
        return comet
    # the fitted flux (not a limit) is taken out, none when at or below zero; a nucleus left
    # out (core unusable) leaves the coma's own light unknown
    if not np.isfinite(fit.nucleus_flux_e):
        msg = f"the nucleus was left out ({','.join(fit.flags)})"
        raise ValueError(msg)
    flux = max(fit.nucleus_flux_e, 0.0) / fit.exptime_s * u.electron / u.s
    flux_err = fit.nucleus_flux_err_e / fit.exptime_s * u.electron / u.s
    coma = nucleus_stage.coma_only_afrho(comet, flux, fit.psf, pixel_scale=pixel_scale,
                                         nucleus_flux_err=flux_err)
    out = comet.copy(copy_data=False)
    for name in coma.colnames:
        out[name] = coma[name]
    return out


def _comet_position(frame, photometry, item, shared):
    """The comet's sky position with its error (`photpipe.orbit.comet_position_row`)."""
    from photpipe import orbit

    details = photometry.details
    comet = photometry.comet
    if len(comet) == 0 or "centroid_mask" not in details:
        msg = "the photometry stage gave no comet centre"
        raise ValueError(msg)
    x = float(u.Quantity(comet["x_pix"][0]).value)
    y = float(u.Quantity(comet["y_pix"][0]).value)
    star_xy, star_flux = _catalogue_light(frame, photometry, shared)
    moffat = details.get("psf_moffat") or {}
    cov = orbit.centre_of_light_covariance(
        frame.data, frame.variance, x, y, sky=details["centroid_sky"],
        box=details["centroid_box_pix"], mask=details["centroid_mask"], star_xy=star_xy,
        star_flux=star_flux,
        moffat=(moffat["alpha_pix"], moffat["beta"]) if "alpha_pix" in moffat else None)
    fit = details.get("wcs_correction") or {}
    location = frame.info.site if frame.info.site is not None else shared.get("site_location")
    return orbit.comet_position_row(
        x, y, cov, wcs=photometry.wcs, star_rms_pix=fit.get("rms", np.nan),
        n_stars=fit.get("n_matched", 0), time_mid=frame.info.time_mid,
        station=item.get("site") or "own",
        object_id=shared.get("target_name") or frame.info.object_name or "comet",
        catalogue=shared.get("catalogue_name") or "unknown",
        location=location)


def _catalogue_light(frame, photometry, shared):
    """Pixel positions and fluxes (electrons) of the catalogue's stars on the frame."""
    path = shared.get("reference_store")
    if path is None:
        return None, None
    stars = frame_reference_stars(frame, path)
    band = _band(frame, shared)[0]
    if band not in stars.colnames:
        return None, None
    ra = u.Quantity(stars["ra"], u.deg).value
    dec = u.Quantity(stars["dec"], u.deg).value
    x, y = photometry.wcs.world_to_pixel_values(ra, dec)
    mag = np.asarray(u.Quantity(stars[band]).value, dtype=float)
    flux = float(frame.info.exptime.to_value(u.s)) * 10 ** (-0.4 * (mag - photometry.zero_point.zp))
    return np.column_stack([x, y]), flux


def _band(frame, shared):
    """The frame's catalogue band and solar band, from its FILTER ([filters])."""
    band = dict(shared.get("photometry", {})).get("band", "R")
    entry = photometry_stage.band_for_frame(frame.info.filter, filter_map=shared.get("filters"),
                                            default_band=band)
    return entry.band, entry.sun


def _plate_solved(frame, item, shared):
    """The frame with a plate-solved WCS where ``[photometry] plate_solve`` asks for one.

    Returns the frame (solved, or as it was) and the reason a solution failed, or None.
    """
    options = shared.get("plate_solve") or {}
    mode = options.get("mode", "never")
    path = shared.get("reference_store")
    has_wcs = frame.wcs is not None and frame.wcs.has_celestial
    if mode == "never" or (mode == "missing" and has_wcs) or path is None:
        return frame, None
    geometry = item.get("geometry")
    comet = None
    if geometry is not None and "ra" in geometry.colnames:
        from astropy.coordinates import SkyCoord

        comet = SkyCoord(u.Quantity(geometry["ra"][0], u.deg), u.Quantity(geometry["dec"][0],
                                                                          u.deg))
    known = _star_trail_length(frame, geometry, item, shared)
    # the stars may trail though nothing said so yet (the stars' shapes decide later): a
    # failed solution is tried once more with the trail the comet's rate would give them
    lengths = [known] if known or item.get("tracking") else [0.0, _star_trail_length(
        frame, geometry, {"tracking": "comet"}, shared)]
    for i, length in enumerate(lengths):
        try:
            store = _reference_store(path, os.stat(path).st_mtime_ns)
            solved, _, _ = photometry_stage.solve_frame_from_store(
                frame, store, band=_band(frame, shared)[0], pixel_scale=frame.info.pixel_scale,
                comet_position=comet, mode=mode,
                max_offset=options.get("max_offset", 16 * u.arcmin), trail_length=length)
        except Exception as exc:  # noqa: BLE001 - the frame keeps its header WCS, if any
            if i + 1 < len(lengths) and lengths[i + 1] >= 2.0:
                continue
            return frame, f"no plate solution: {_reason(exc, frame.info)}"
        return solved, None
    return frame, None


def _run_photometry(frame, geometry_row, shared, item=None):
    path = shared.get("reference_store")
    if path is None:
        msg = (shared.get("reference_problem")
               or "no reference-star file is configured ([photometry] reference_stars)")
        raise ValueError(msg)
    options = dict(shared.get("photometry", {}))
    options["band"], options["solar_band"] = _band(frame, shared)
    options.update(_tracking_options(item or {}, shared))
    if frame.info.site is not None:
        options["site"] = frame.info.site  # the header's own site, for the airmass
    elif shared.get("site_location") is not None:
        options.setdefault("site", shared["site_location"])  # airmass when the header has none
    stars = frame_reference_stars(frame, path)
    return photometry_stage.measure_comet_frame(frame, stars, geometry_row[0], **options)


#: Field-star table of the photometry stage -> stored column (from the schema).
_STAR_MAP = schema.stage_names("stars")


def _star_rows(stars):
    if stars is None:
        return None
    names = [n for n in _STAR_MAP if n in stars.colnames]
    return [{_STAR_MAP[n]: row[n] for n in names} for row in stars]


def _zero_point_row(photometry):
    zp = photometry.zero_point
    row = {"zp_mag": zp.zp, "zp_err_mag": zp.zp_err, "colour_term": zp.colour_term,
           "colour_term_err": zp.colour_term_err, "n_stars": zp.n_stars,
           "n_rejected": zp.n_rejected, "rms_mag": zp.rms, "chi2_red": zp.chi2_red,
           "band": zp.band, "aperture_correction": zp.aperture_correction,
           "flags": ",".join(photometry.flags)}
    fwhm_pix = photometry.details.get("fwhm_pix")
    scale = _pixel_scale_arcsec(photometry.wcs)
    if fwhm_pix is not None and scale is not None:
        row["gauss_fwhm_arcsec"] = float(fwhm_pix) * scale
    if len(photometry.comet) and "airmass" in photometry.comet.colnames:
        row["airmass"] = photometry.comet["airmass"][0]
    return row


def _pixel_scale_arcsec(wcs):
    if wcs is None:
        return None
    from astropy.wcs.utils import proj_plane_pixel_scales

    return float(np.mean(proj_plane_pixel_scales(wcs.celestial)) * 3600.0)


def _seed(text):
    """A reproducible seed from a frame's content hash, so a re-run draws the same numbers."""
    return int(hashlib.sha256(text.encode()).hexdigest()[:16], 16)


def _exposure_trails(wcs, geometry_row, frame, tracking):
    """The comet's and the stars' motion during the exposure, pixels (none without a rate)."""
    if geometry_row is None or "ra_rate" not in geometry_row.colnames:
        return (0.0, 0.0), (0.0, 0.0)
    row = geometry_row[0]
    return nucleus_stage.exposure_trails(wcs, u.Quantity(row["ra"]), u.Quantity(row["dec"]),
                                         u.Quantity(row["ra_rate"]),
                                         u.Quantity(row["dec_rate"]), frame.info.exptime,
                                         tracking=tracking)


def _star_trail_length(frame, geometry, item, shared):
    """The stars' trail (pixels) where the frame is known to follow the comet, else 0.

    Known before the stars are measured: the night's decided mode, a TRACKING header (when
    checks are on) or the configured mode; the length is the comet's rate × exposure over
    the pixel scale (the plate solution needs no direction).
    """
    options = _tracking_options(item, shared)
    mode = options["tracking"]
    if options["tracking_check"]:
        mode = nucleus_stage.tracking_from_header(frame.info.header) or mode
    if mode != "comet" or geometry is None or "ra_rate" not in geometry.colnames:
        return 0.0
    scale = frame.info.pixel_scale
    if scale is None:
        scale = _pixel_scale_arcsec(frame.wcs)
        if scale is None:
            return 0.0
        scale = scale * u.arcsec
    rate = np.hypot(u.Quantity(geometry["ra_rate"][0]).to_value(u.arcsec / u.s),
                    u.Quantity(geometry["dec_rate"][0]).to_value(u.arcsec / u.s))
    length = rate * frame.info.exptime.to_value(u.s) / u.Quantity(scale).to_value(u.arcsec)
    return float(length) if np.isfinite(length) else 0.0


def _tracking_options(item, shared):
    """The photometry's tracking keywords: the night's decided mode, else the configuration's.

    A frame the night re-measures in its decided mode (``item["tracking"]``) keeps that mode
    (no per-frame check).
    """
    forced = item.get("tracking")
    if forced is not None:
        return {"tracking": forced, "tracking_check": False}
    return {"tracking": shared.get("tracking", "sidereal"),
            "tracking_check": bool(shared.get("tracking_check", True))}


def _frame_tracking(photometry, item, shared):
    """How this frame was tracked, as the photometry decided it (before the stars)."""
    if item.get("tracking") is not None:
        return nucleus_stage.TrackingVerdict(item["tracking"], "night")
    verdict = photometry.details.get("tracking_verdict")
    if verdict is None:
        return nucleus_stage.TrackingVerdict(shared.get("tracking", "sidereal"),
                                             "configuration")
    return verdict


def _with_tracking_flag(row, verdict, configured):
    """The nucleus row, flagged where the header or the stars overrode the configured mode."""
    if verdict.source != "configuration" and verdict.mode != configured:
        flag = "tracking_comet" if verdict.mode == "comet" else "tracking_sidereal"
        row["flags"] = ",".join(f for f in (row["flags"], flag) if f)
    return row


def _run_nucleus(frame, photometry, item, shared):
    options = dict(shared.get("nucleus", {}))
    comet = photometry.comet
    if len(comet) == 0:
        msg = "the photometry stage gave no comet position"
        raise ValueError(msg)
    x0 = float(u.Quantity(comet["x_pix"][0]).value)
    y0 = float(u.Quantity(comet["y_pix"][0]).value)
    stars = photometry.stars
    star_xy = np.column_stack([u.Quantity(stars["x"]).value, u.Quantity(stars["y"]).value]) \
        if stars is not None and len(stars) else np.zeros((0, 2))
    scale = _pixel_scale_arcsec(photometry.wcs or frame.wcs)
    if scale is None:
        msg = "no WCS to give the pixel scale"
        raise ValueError(msg)
    pixel_scale = scale * u.arcsec / u.pix
    psf_options = dict(shared.get("psf", {}))  # a copy: shared options stay as given
    fwhm_pix = photometry.details.get("fwhm_pix")
    if fwhm_pix is not None and np.isfinite(fwhm_pix):
        psf_options.setdefault("fallback_fwhm", float(fwhm_pix))
    tracking = _frame_tracking(photometry, item, shared)
    trails = _exposure_trails(photometry.wcs or frame.wcs, item.get("geometry"), frame,
                              tracking.mode)
    psf = nucleus_stage.measure_psf(frame, star_xy, exclude_xy=(x0, y0),
                                    star_trail=trails[1], **psf_options)
    zp = photometry.zero_point
    fit = nucleus_stage.fit_nucleus(
        frame, x0, y0, psf, pixel_scale=pixel_scale, zero_point=zp.zp,
        zero_point_err=zp.zp_err, star_xy=star_xy, comet_trail=trails[0], star_trail=trails[1],
        rng=np.random.default_rng(_seed(item["content_hash"])), **options)
    return fit, pixel_scale, tracking
