"""Plate solving from the reference catalogue: a frame's WCS from its stars alone, offline.

The plan: project the catalogue stars around a first guess of the pointing (from the header, or
the comet's predicted place) onto the tangent plane in detector pixels (the instrument's pixel
scale); match the brightest detections to them by triangles of neighbouring stars, any rotation,
mirror images included (`photpipe.photometry._asterisms`); pair every star under the best
transform; fit a TAN WCS to the pairs by linear least squares on the tangent plane (SIP terms
with astropy's ``fit_wcs_from_points`` when the residuals show distortion); and verify the
solution: enough pairs, a small scatter, and a chance-coincidence probability far below one.
"""

import math
from dataclasses import asdict, dataclass

import numpy as np
from astropy import units as u
from astropy.coordinates import Angle, SkyCoord
from astropy.wcs import WCS
from scipy.spatial import cKDTree
from scipy.stats import poisson

from photpipe._quantity import as_positive_value, as_value

from ._asterisms import count_inliers, propose_transforms
from .astrometry import pair_nearest

__all__ = ["PlateSolveError", "PlateSolution", "pointing_from_header", "solve_plate",
           "fit_tan_wcs", "tangent_plane", "POINTING_KEYWORDS"]

#: Header keyword pairs that may hold the pointing, tried in this order.
POINTING_KEYWORDS = (("RA", "DEC"), ("OBJCTRA", "OBJCTDEC"), ("RA_OBJ", "DEC_OBJ"),
                     ("TELRA", "TELDEC"), ("RA-OBJ", "DEC-OBJ"), ("CRVAL1", "CRVAL2"))


class PlateSolveError(ValueError):
    """The frame's stars could not be matched to the catalogue with confidence."""


@dataclass(frozen=True)
class PlateSolution:
    """A verified plate solution.

    Attributes
    ----------
    wcs : `~astropy.wcs.WCS`
        TAN (or TAN-SIP) WCS, 0-based pixel convention of astropy's ``*_values`` methods.
    n_matched : int
        Detection-catalogue pairs used in the final fit.
    rms_arcsec, median_arcsec : float
        RMS and median of the pairs' residuals on the sky.
    scale_arcsec : float
        Fitted pixel scale (geometric mean of the two axes).
    rotation_deg : float
        Position angle of the detector's +y axis east of north.
    mirrored : bool
        True when the sky appears mirrored (east clockwise from north on the pixel grid).
    log10_false : float
        log10 of the probability that so many pairs arose by chance (Poisson, trials included).
    sip_degree : int
        Degree of the SIP distortion fitted (0: none).
    offset_arcsec : float
        Distance from the first-guess pointing to the solved frame centre.
    """

    wcs: WCS
    n_matched: int
    rms_arcsec: float
    median_arcsec: float
    scale_arcsec: float
    rotation_deg: float
    mirrored: bool
    log10_false: float
    sip_degree: int
    offset_arcsec: float

    def to_dict(self):
        """The quality figures as a plain dict (the WCS left out)."""
        out = asdict(self)
        out.pop("wcs")
        return out

    def header_cards(self):
        """FITS cards recording the solution's quality (keyword, value, comment)."""
        return [("SOLVED", True, "photpipe plate solution from reference stars"),
                ("SOLVNSTR", self.n_matched, "stars matched in the plate solution"),
                ("SOLVRMS", round(self.rms_arcsec, 4), "[arcsec] rms of the solution"),
                ("SOLVMED", round(self.median_arcsec, 4), "[arcsec] median residual"),
                ("SOLVFALS", round(self.log10_false, 2), "log10 chance-match probability"),
                ("SOLVSIP", self.sip_degree, "SIP degree of the solution"),
                ("SOLVOFF", round(self.offset_arcsec, 2), "[arcsec] solved centre - guess")]


def _angle(value, *, hours):
    if isinstance(value, str):
        text = value.strip()
        if not text:
            return None
        try:
            return Angle(float(text), u.deg)
        except ValueError:
            pass
        return Angle(text, u.hourangle if hours else u.deg)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    return Angle(float(value), u.deg)


def pointing_from_header(header):
    """The telescope pointing a header states, or None.

    Keyword pairs are tried in `POINTING_KEYWORDS` order. A number is taken as degrees; a
    sexagesimal string as hours for right ascension and degrees for declination (the usual
    convention of acquisition programs: ``'12 34 56.7'``, ``'+12:34:56'``). ``CRVAL1/2`` count
    only when the header's CTYPE1 says RA.

    Examples
    --------
    >>> c = pointing_from_header({"OBJCTRA": "01 00 00", "OBJCTDEC": "-30 30 00"})
    >>> round(float(c.ra.deg), 6), round(float(c.dec.deg), 6)
    (15.0, -30.5)
    >>> pointing_from_header({"OBJECT": "x"}) is None
    True
    """
    for kra, kdec in POINTING_KEYWORDS:
        if kra not in header or kdec not in header:
            continue
        if kra == "CRVAL1" and not str(header.get("CTYPE1", "")).upper().startswith("RA"):
            continue
        try:
            ra = _angle(header[kra], hours=True)
            dec = _angle(header[kdec], hours=False)
        except (ValueError, TypeError, u.UnitsError):
            continue
        if ra is None or dec is None or not (np.isfinite(ra.deg) and abs(dec.deg) <= 90):
            continue
        return SkyCoord(ra.wrap_at(360 * u.deg), dec, frame="icrs")
    return None


def tangent_plane(ra_deg, dec_deg, center_ra_deg, center_dec_deg):
    """Gnomonic standard coordinates (ξ, η) in degrees about a tangent point.

    Notes
    -----
    ξ = cos δ sin Δα / cos c, η = (cos δ₀ sin δ - sin δ₀ cos δ cos Δα) / cos c, with
    cos c = sin δ₀ sin δ + cos δ₀ cos δ cos Δα (Calabretta & Greisen 2002, A&A 395, 1077, TAN).

    Examples
    --------
    >>> xi, eta = tangent_plane(10.0, 0.0, 10.0, 0.0)
    >>> float(xi), float(eta)
    (0.0, 0.0)
    """
    a = np.radians(np.asarray(ra_deg, float) - center_ra_deg)
    d = np.radians(np.asarray(dec_deg, float))
    d0 = math.radians(center_dec_deg)
    cosc = math.sin(d0) * np.sin(d) + math.cos(d0) * np.cos(d) * np.cos(a)
    with np.errstate(divide="ignore", invalid="ignore"):
        xi = np.cos(d) * np.sin(a) / cosc
        eta = (math.cos(d0) * np.sin(d) - math.sin(d0) * np.cos(d) * np.cos(a)) / cosc
    bad = cosc <= 0
    return np.degrees(np.where(bad, np.nan, xi)), np.degrees(np.where(bad, np.nan, eta))


def fit_tan_wcs(xy, ra_deg, dec_deg, tangent):
    """Least-squares TAN WCS with its tangent point fixed at ``tangent`` (ra, dec in degrees).

    (ξ, η) = CD (p - p₀) is linear in the six numbers of CD and p₀, so the fit is one linear
    least-squares solve (Calabretta & Greisen 2002 for the TAN projection).

    Returns
    -------
    wcs : `~astropy.wcs.WCS`
    """
    xi, eta = tangent_plane(ra_deg, dec_deg, *tangent)
    xy = np.asarray(xy, float)
    design = np.column_stack([xy[:, 0], xy[:, 1], np.ones(len(xy))])
    cx, *_ = np.linalg.lstsq(design, xi, rcond=None)
    cy, *_ = np.linalg.lstsq(design, eta, rcond=None)
    cd = np.array([[cx[0], cx[1]], [cy[0], cy[1]]])
    p0 = -np.linalg.solve(cd, [cx[2], cy[2]])
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [tangent[0] % 360.0, tangent[1]]
    w.wcs.crpix = p0 + 1.0  # FITS pixels are 1-based
    w.wcs.cd = cd
    w.wcs.radesys = "ICRS"
    w.wcs.set()
    return w


def _residuals_arcsec(wcs, xy, ra, dec):
    rx, ry = wcs.world_to_pixel_values(ra, dec)
    scale = _scale_arcsec(wcs)
    return np.hypot(np.asarray(rx) - xy[:, 0], np.asarray(ry) - xy[:, 1]) * scale


def _scale_arcsec(wcs):
    cd = wcs.wcs.cd if wcs.wcs.has_cd() else np.diag(wcs.wcs.cdelt) @ wcs.wcs.get_pc()
    return float(np.sqrt(abs(np.linalg.det(cd))) * 3600.0)


def _orientation(wcs):
    cd = wcs.wcs.cd if wcs.wcs.has_cd() else np.diag(wcs.wcs.cdelt) @ wcs.wcs.get_pc()
    mirrored = bool(np.linalg.det(cd) > 0)  # the usual sky (east left, north up) has det < 0
    # position angle of +y: the direction (dξ, dη) = CD[:, 1]; east is +ξ
    rot = float(np.degrees(np.arctan2(cd[0, 1], cd[1, 1])) % 360.0)
    return rot, mirrored


def _initial_transform(det_xy, ref_xy, *, tolerance, min_inliers):
    mats, shifts = propose_transforms(ref_xy, det_xy)
    if len(mats) == 0:
        return None, 0, 0
    counts = count_inliers(mats, shifts, ref_xy, det_xy, tolerance=tolerance)
    best = int(np.argmax(counts))
    if counts[best] < min_inliers:
        return None, int(counts[best]), len(mats)
    return (mats[best], shifts[best]), int(counts[best]), len(mats)


def _false_match_log10(n_pairs, n_det, density, tolerance, trials):
    """log10 P(≥ n_pairs chance pairs) for ``n_det`` detections among stars of ``density``."""
    lam = n_det * min(1.0, density * math.pi * tolerance ** 2)
    p = float(poisson.sf(n_pairs - 1, lam))
    if p <= 0.0:
        # beyond double precision: the log of the leading term, k ln λ - λ - ln k!
        log_p = (n_pairs * math.log(max(lam, 1e-300)) - lam - math.lgamma(n_pairs + 1)) / \
            math.log(10.0)
    else:
        log_p = math.log10(p)
    return log_p + math.log10(max(trials, 1))


def _pair_all(wcs, det_xy, ra, dec, shape, tolerance):
    rx, ry = wcs.world_to_pixel_values(ra, dec)
    ref = np.column_stack([rx, ry])
    ny, nx = shape
    inside = np.isfinite(ref).all(axis=1) & (ref[:, 0] > -2) & (ref[:, 0] < nx + 1) & \
        (ref[:, 1] > -2) & (ref[:, 1] < ny + 1)
    idx = np.flatnonzero(inside)
    i_det, i_ref = pair_nearest(det_xy, ref[idx], tolerance=tolerance)
    return i_det, idx[i_ref], int(inside.sum())


def _fit_with_sip(det_xy, ra, dec, wcs, degree):
    """TAN-SIP about the same tangent point, by one linear least-squares solve.

    (ξ, η) = Σ c_pq u^p v^q (1 ≤ p + q ≤ degree), u, v pixels from CRPIX; the linear terms
    are CD, and CD⁻¹ times the rest are the SIP A and B (Shupe et al. 2005, ASP Conf. Ser.
    347, 491).
    """
    from astropy.wcs import Sip

    xi, eta = tangent_plane(ra, dec, *wcs.wcs.crval)
    uu = det_xy[:, 0] - (wcs.wcs.crpix[0] - 1.0)
    vv = det_xy[:, 1] - (wcs.wcs.crpix[1] - 1.0)
    terms = [(p, q) for n in range(1, degree + 1) for p in range(n, -1, -1) for q in [n - p]]
    design = np.column_stack([uu ** p * vv ** q for p, q in terms])
    cx, *_ = np.linalg.lstsq(design, xi, rcond=None)
    cy, *_ = np.linalg.lstsq(design, eta, rcond=None)
    cd = np.array([[cx[0], cx[1]], [cy[0], cy[1]]])
    higher = np.linalg.solve(cd, np.vstack([cx[2:], cy[2:]]))
    a = np.zeros((degree + 1, degree + 1))
    b = np.zeros((degree + 1, degree + 1))
    for k, (p, q) in enumerate(terms[2:]):
        a[p, q], b[p, q] = higher[0, k], higher[1, k]
    out = WCS(naxis=2)
    out.wcs.ctype = ["RA---TAN-SIP", "DEC--TAN-SIP"]
    out.wcs.crval = wcs.wcs.crval
    out.wcs.crpix = wcs.wcs.crpix
    out.wcs.cd = cd
    out.wcs.radesys = "ICRS"
    out.sip = Sip(a, b, None, None, wcs.wcs.crpix)
    out.wcs.set()
    return out


def _refine(det_xy, ra, dec, first, *, shape, tolerance_pix, sip_rms_arcsec, sip_degree):
    """Pair every star under ``first``, fit TAN about the frame centre twice, SIP if it helps."""
    ny, nx = shape
    wcs = first
    for tol in (3.0 * tolerance_pix, tolerance_pix, tolerance_pix):
        i_det, i_ref, n_in = _pair_all(wcs, det_xy, ra, dec, shape, tol)
        if len(i_det) < 4:
            return wcs, i_det, i_ref, n_in
        centre = wcs.pixel_to_world_values((nx - 1) / 2.0, (ny - 1) / 2.0)
        wcs = fit_tan_wcs(det_xy[i_det], ra[i_ref], dec[i_ref],
                          (float(centre[0]), float(centre[1])))
    resid = _residuals_arcsec(wcs, det_xy[i_det], ra[i_ref], dec[i_ref])
    if sip_degree and len(i_det) >= 30 and np.sqrt(np.mean(resid ** 2)) > sip_rms_arcsec:
        sip = _fit_with_sip(det_xy[i_det], ra[i_ref], dec[i_ref], wcs, sip_degree)
        r_sip = _residuals_arcsec(sip, det_xy[i_det], ra[i_ref], dec[i_ref])
        if np.sqrt(np.mean(r_sip ** 2)) < 0.8 * np.sqrt(np.mean(resid ** 2)):
            wcs = sip
            i_det, i_ref, n_in = _pair_all(wcs, det_xy, ra, dec, shape, tolerance_pix)
    return wcs, i_det, i_ref, n_in


def solve_plate(det_xy, ref_ra, ref_dec, *, guess, pixel_scale, shape,
                max_offset=16 * u.arcmin, scale_tolerance=0.06, tolerance=1.5 * u.pix,
                n_bright=40, min_matched=8, max_rms=1.0 * u.arcsec, max_log10_false=-6.0,
                sip_degree=3, sip_rms=0.15 * u.arcsec):
    """Solve a frame's WCS from its detected stars and the reference catalogue.

    Parameters
    ----------
    det_xy : ndarray, shape (n, 2)
        Detected star positions (0-based pixels), brightest first.
    ref_ra, ref_dec : array-like (deg)
        Catalogue stars around the guess, brightest first (at least the cone of radius
        ``max_offset`` plus the frame's half-diagonal).
    guess : `~astropy.coordinates.SkyCoord`
        First guess of the sky position of the frame centre.
    pixel_scale : `~astropy.units.Quantity` ['angle']
        Instrument pixel scale (per pixel), good to about ``scale_tolerance``.
    shape : tuple of int
        ``(ny, nx)``.
    max_offset : `~astropy.units.Quantity` ['angle'], optional
        Largest distance of the true centre from the guess that is searched.
    scale_tolerance : float, optional
        Relative error of ``pixel_scale`` allowed.
    tolerance : `~astropy.units.Quantity` ['angle' or pix], optional
        Pairing radius of the final match.
    n_bright : int, optional
        Detections that take part in the triangle match.
    min_matched : int, optional
        Fewest pairs a solution needs.
    max_rms : `~astropy.units.Quantity` ['angle'], optional
        Largest rms residual accepted.
    max_log10_false : float, optional
        Largest log10 chance-match probability accepted.
    sip_degree : int, optional
        SIP degree fitted when the TAN residuals exceed ``sip_rms`` (0: never).

    Returns
    -------
    PlateSolution

    Raises
    ------
    PlateSolveError
        With a one-line reason (too few stars, no consistent match, poor fit, chance match).
    """
    det_xy = np.asarray(det_xy, dtype=float).reshape(-1, 2)
    ra = np.asarray(ref_ra, dtype=float)
    dec = np.asarray(ref_dec, dtype=float)
    scale = as_positive_value(pixel_scale, u.arcsec, "pixel_scale")
    tol_pix = (as_value(tolerance, u.pix, "tolerance") if u.Quantity(tolerance).unit == u.pix
               else as_positive_value(tolerance, u.arcsec, "tolerance") / scale)
    off_deg = as_positive_value(max_offset, u.deg, "max_offset")
    ny, nx = shape
    if len(det_xy) < 4:
        msg = f"only {len(det_xy)} stars detected; a plate solution needs at least 4"
        raise PlateSolveError(msg)
    g_ra, g_dec = float(guess.icrs.ra.deg), float(guess.icrs.dec.deg)
    xi, eta = tangent_plane(ra, dec, g_ra, g_dec)
    half_diag = 0.5 * math.hypot(nx, ny) * scale / 3600.0
    near = np.isfinite(xi) & (np.hypot(xi, eta) <= half_diag + off_deg)
    if near.sum() < 4:
        msg = (f"only {int(near.sum())} catalogue stars within {half_diag + off_deg:.2f} deg "
               f"of the pointing RA {g_ra:.4f}, Dec {g_dec:.4f}")
        raise PlateSolveError(msg)
    # as many catalogue stars per unit area as bright detections on the frame, twice over;
    # a second try with twice the stars when the brightest disagree (colours, variables)
    area_ratio = (math.pi * (half_diag + off_deg) ** 2) / (nx * ny * (scale / 3600.0) ** 2)
    trials = 0
    for n_try in (n_bright, 2 * n_bright):
        n_use = min(len(det_xy), n_try)
        n_ref = int(min(near.sum(), max(3 * n_use, 2.0 * n_use * area_ratio), 3000))
        sel = np.flatnonzero(near)[:n_ref]
        ref_pix = np.column_stack([xi[sel], eta[sel]]) * 3600.0 / scale
        found, votes, tried = _initial_transform(det_xy[:n_use], ref_pix,
                                                 tolerance=max(2.0 * tol_pix, 2.0),
                                                 min_inliers=min(6, n_use))
        trials += tried
        if found is not None or n_use == len(det_xy):
            break
    if found is None:
        msg = (f"no consistent match of {n_use} bright stars to {n_ref} catalogue stars "
               f"(best {votes} agreeing); pointing off by more than "
               f"{off_deg * 60:.0f} arcmin, wrong pixel scale, or too few stars")
        raise PlateSolveError(msg)
    mat, shift = found
    s = math.sqrt(abs(np.linalg.det(mat)))
    if abs(s - 1.0) > scale_tolerance:
        msg = f"match implies a pixel scale {scale / s:.3f} arcsec, not {scale:.3f}"
        raise PlateSolveError(msg)
    # first WCS: pixels = M (ξ, η)/scale + t  ->  (ξ, η) = scale M⁻¹ (p - t), tangent at guess
    inv = np.linalg.inv(mat) * scale / 3600.0
    first = WCS(naxis=2)
    first.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    first.wcs.crval = [g_ra, g_dec]
    first.wcs.crpix = shift + 1.0
    first.wcs.cd = inv
    first.wcs.set()
    wcs, i_det, i_ref, n_in = _refine(det_xy, ra, dec, first, shape=shape,
                                      tolerance_pix=tol_pix,
                                      sip_rms_arcsec=as_value(sip_rms, u.arcsec, "sip_rms"),
                                      sip_degree=int(sip_degree))
    return _verified(wcs, det_xy, ra, dec, i_det, i_ref, n_in, guess=guess, shape=shape,
                     tol_pix=tol_pix, trials=trials, min_matched=min_matched,
                     max_rms=as_positive_value(max_rms, u.arcsec, "max_rms"),
                     max_log10_false=max_log10_false)


def _verified(wcs, det_xy, ra, dec, i_det, i_ref, n_in, *, guess, shape, tol_pix, trials,
              min_matched, max_rms, max_log10_false):
    ny, nx = shape
    n = len(i_det)
    if n < min_matched:
        msg = f"only {n} stars matched (at least {min_matched} needed) among {n_in} " \
              f"catalogue stars on the frame"
        raise PlateSolveError(msg)
    resid = _residuals_arcsec(wcs, det_xy[i_det], ra[i_ref], dec[i_ref])
    rms = float(np.sqrt(np.mean(resid ** 2)))
    if rms > max_rms:
        msg = f"plate solution residuals {rms:.2f} arcsec rms exceed {max_rms:.2f} arcsec"
        raise PlateSolveError(msg)
    # chance pairs: each detection in the fit's region meets a catalogue star within the
    # tolerance with probability density x area (Poisson; the trials are the proposals tried)
    n_det = int(np.sum((det_xy[:, 0] >= 0) & (det_xy[:, 0] < nx) &
                       (det_xy[:, 1] >= 0) & (det_xy[:, 1] < ny)))
    density = n_in / float(nx * ny)
    log_false = _false_match_log10(n, min(n_det, 4 * n_in), density, tol_pix, trials)
    if log_false > max_log10_false:
        msg = f"{n} pairs could be chance coincidences (log10 p = {log_false:.1f})"
        raise PlateSolveError(msg)
    rot, mirrored = _orientation(wcs)
    centre = wcs.pixel_to_world_values((nx - 1) / 2.0, (ny - 1) / 2.0)
    c = SkyCoord(float(centre[0]) * u.deg, float(centre[1]) * u.deg, frame="icrs")
    sip = 0 if wcs.sip is None else int(wcs.sip.a_order)
    return PlateSolution(wcs=wcs, n_matched=n, rms_arcsec=rms,
                         median_arcsec=float(np.median(resid)), scale_arcsec=_scale_arcsec(wcs),
                         rotation_deg=rot, mirrored=mirrored, log10_false=float(log_false),
                         sip_degree=sip, offset_arcsec=float(c.separation(guess).arcsec))


def nearest_distance(xy):
    """Median nearest-neighbour distance of a point set (a scale for tolerances)."""
    if len(xy) < 2:
        return float("nan")
    d, _ = cKDTree(xy).query(xy, k=2)
    return float(np.median(d[:, 1]))
