"""Steps of a frame's photometry that make its results: profile, magnitudes, Afρ, the rows."""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe._quantity import as_value
from photpipe.frames.types import Quality

from ._notes import add_flag
from .afrho import afrho as afrho_of
from .afrho import afrho_uncertainty
from .airmass import frame_airmass, header_airmass
from .dust_phase import PHASE_FLAG, dust_phase, phase_beyond_checked
from .profile import annulus_means, profile_slope, sector_selection
from .result import MEASUREMENT_COLUMNS
from .solar import solar_magnitude

__all__ = ["SOLAR_COLOURS", "coma_profile", "Magnitudes", "magnitudes", "row_flags",
           "comet_rows"]

#: Colours of the Sun used for the comet when a colour term is fitted and no comet colour is
#: given (dust reflects sunlight nearly neutrally). B-V = 0.65 and V-R = 0.36 (Vega; Ramírez et
#: al. 2012, ApJ 752, 5, and Holmberg et al. 2006, MNRAS 367, 449; from memory).
SOLAR_COLOURS = {"B-V": 0.65, "V-R": 0.36}

_ARCSEC_PER_RAD = 180.0 / np.pi * 3600.0
_MAG_FACTOR = 2.5 / np.log(10.0)


def _sky_axes(wcs, x, y):
    """Pixel displacement per arcsec toward north and toward east at (x, y)."""
    c = wcs.pixel_to_world(x, y)
    n = c.directional_offset_by(0 * u.deg, 1 * u.arcsec)
    e = c.directional_offset_by(90 * u.deg, 1 * u.arcsec)
    xn, yn = wcs.world_to_pixel(n)
    xe, ye = wcs.world_to_pixel(e)
    return np.array([[float(xn) - x, float(xe) - x], [float(yn) - y, float(ye) - y]])


def _sector_columns(prep, ap, centre, wcs, keep, edges, conv, sb_unit, notes, n_bins):
    """Sunward and tailward profiles (NaN with flag ``no_sun_pa`` without the Sun's PA)."""
    cols = {}
    pa_sun = prep.geo["pa_sun"]
    if not np.isfinite(pa_sun):
        notes.flag("no_sun_pa")
        for label in ("sun", "tail"):
            cols[f"sb_{label}"] = np.full(n_bins, np.nan) * sb_unit
            cols[f"sb_{label}_err"] = np.full(n_bins, np.nan) * sb_unit
            cols[f"n_pix_{label}"] = np.zeros(n_bins, int)
        return cols
    xc, yc = centre.x, centre.y
    axes = _sky_axes(wcs, xc, yc)
    ne = np.linalg.solve(axes, np.vstack([(ap.xx - xc).ravel(), (ap.yy - yc).ravel()]))
    pa = np.degrees(np.arctan2(ne[1], ne[0])).reshape(ap.rho.shape) % 360.0
    var = ap.var
    for label, direction in (("sun", pa_sun), ("tail", pa_sun + 180.0)):
        sel = sector_selection(pa[keep], direction, prep.half_width)
        _, s_sb, s_err, s_n = annulus_means(ap.sub[keep], var[keep], ap.rho[keep], edges,
                                            select=sel, sky_error=ap.sky.error)
        cols[f"sb_{label}"] = s_sb * conv * sb_unit
        cols[f"sb_{label}_err"] = s_err * conv * sb_unit
        cols[f"n_pix_{label}"] = s_n
    return cols


def coma_profile(prep, lay, ap, centre, zp, fwhm, wcs, opts, notes):
    """Azimuthal and sector surface-brightness profiles and the log-log slope of the coma."""
    scale = prep.scale
    km_per_pix = scale / _ARCSEC_PER_RAD * prep.delta_km
    edges = np.geomspace(max(0.5, 0.5 * fwhm), lay.ann_in, int(opts.profile.profile_bins) + 1)
    keep = ~ap.masked
    var = ap.var
    rho_mean, sb, sb_err, count = annulus_means(ap.sub[keep], var[keep], ap.rho[keep], edges,
                                                sky_error=ap.sky.error)
    conv = 1.0 / (prep.exptime * scale**2)
    sb_unit = u.electron / (u.s * u.arcsec**2)
    cols = {"rho_km": rho_mean * km_per_pix * u.km, "rho_arcsec": rho_mean * scale * u.arcsec,
            "rho_pix": rho_mean * u.pix, "sb": sb * conv * sb_unit,
            "sb_err": sb_err * conv * sb_unit, "n_pix": count}
    with np.errstate(invalid="ignore", divide="ignore"):
        cols["sb_mag"] = np.where(sb > 0, zp.zp - 2.5 * np.log10(sb * conv), np.nan) \
            * u.mag / u.arcsec**2
    cols.update(_sector_columns(prep, ap, centre, wcs, keep, edges, conv, sb_unit, notes,
                                len(sb)))
    slope, slope_err, n_slope = profile_slope(rho_mean * km_per_pix, sb, sb_err,
                                              rho_range=tuple(prep.slope_range))
    notes.details["coma_slope_err"] = slope_err
    if n_slope < 3:
        notes.flag("profile_short", f"{n_slope} annuli")
    notes.lap("profile")
    return QTable(cols), slope


@dataclass(frozen=True)
class Magnitudes:
    """Per aperture: magnitude, Afρ and A(0)fρ with errors, and ρ in km and arcsec."""

    mag: np.ndarray
    mag_err: np.ndarray
    afrho: np.ndarray
    afrho_err: np.ndarray
    a0frho: np.ndarray
    a0frho_err: np.ndarray
    rho_km: np.ndarray
    rho_arcsec: np.ndarray


def magnitudes(prep, lay, ap, cal, opts, notes):
    """Magnitudes of the aperture sums, then Afρ and A(0°)fρ."""
    c, zp, geo = opts.calibration, cal.zp, prep.geo
    comet_colour = SOLAR_COLOURS.get(c.colour, 0.0) if c.comet_colour is None else c.comet_colour
    ct_mag = zp.colour_term * comet_colour if cal.use_colour else 0.0
    ct_err = (zp.colour_term_err * comet_colour) if cal.use_colour else 0.0
    flux, flux_err = ap.flux, ap.flux_err
    with np.errstate(invalid="ignore", divide="ignore"):
        mag = np.where(flux > 0, zp.zp - 2.5 * np.log10(flux / prep.exptime) + ct_mag, np.nan)
        mag_err = np.sqrt((_MAG_FACTOR * flux_err / flux) ** 2 + zp.zp_err**2 + ct_err**2)
    mag_err = np.where(flux > 0, mag_err, np.nan)
    rho_km = np.concatenate([prep.km_radii, prep.arcsec_radii / _ARCSEC_PER_RAD * prep.delta_km])
    rho_as = np.concatenate([lay.r_km * prep.scale, prep.arcsec_radii])
    try:
        m_sun = solar_magnitude(c.solar_band or c.band, c.mag_system).to_value(u.mag)
    except ValueError:
        m_sun = np.nan
        notes.flag("no_solar_magnitude", f"band {c.solar_band or c.band!r}, {c.mag_system}")
    if np.isfinite(m_sun):
        af = afrho_of(np.where(np.isfinite(mag), mag, 99.0), m_sun, geo["r_h"] * u.au,
                      geo["delta"] * u.au, rho_km * u.km)
        af = np.where(np.isfinite(mag), af.to_value(u.cm), np.nan)
        af_err = afrho_uncertainty(af * u.cm, np.nan_to_num(mag_err, nan=0.0)).to_value(u.cm)
        af_err = np.where(np.isfinite(mag), af_err, np.nan)
        p = opts.profile
        phi = dust_phase(geo["phase"] * u.deg, method=p.dust_phase_function,
                         table=p.phase_function_table, coefficient=p.phase_coefficient)
        if np.any(phase_beyond_checked(geo["phase"] * u.deg, method=p.dust_phase_function,
                                       table=p.phase_function_table)):
            notes.flag(PHASE_FLAG, f"{geo['phase']:.1f} deg")
        a0, a0_err = af / phi, af_err / phi
    else:
        af = af_err = a0 = a0_err = np.full(len(lay.radii), np.nan)
    return Magnitudes(mag, mag_err, af, af_err, a0, a0_err, rho_km, rho_as)


def row_flags(prep, frame, lay, ap, cut, centre, opts, notes):
    """Each aperture's flags: the frame's, plus edge, masked star, saturation, bad pixels."""
    ny, nx = prep.data.shape
    geo, flags, messages = prep.geo, notes.flags, notes.messages
    elong_min = as_value(opts.site.min_elongation, u.deg, "min_elongation")
    if np.isfinite(geo["elong"]) and geo["elong"] < elong_min:
        notes.flag("low_elongation", f"{geo['elong']:.1f} deg")
    quality = frame.quality[cut.box]
    cut_data = prep.data[cut.box]
    xc, yc, rho, star_mask = centre.x, centre.y, ap.rho, cut.star_mask
    out = []
    for k, r in enumerate(lay.radii):
        fl = list(flags)
        if (xc - r < -0.5 or xc + r > nx - 0.5 or yc - r < -0.5 or yc + r > ny - 0.5):
            add_flag(fl, messages, "edge", f"aperture {r:.1f} pix")
        inside = rho <= r
        if np.any(star_mask & inside):
            add_flag(fl, messages, "star_in_aperture", f"aperture {r:.1f} pix")
        qbits = quality[inside]
        # saturation under a masked field star is that star's, reported as star_in_aperture
        if np.any((quality[inside & ~star_mask] & np.uint16(Quality.SATURATED)) != 0):
            add_flag(fl, messages, "saturated", f"aperture {r:.1f} pix")
        if np.any((qbits & np.uint16(Quality.NONFINITE | Quality.BAD)) != 0) or not np.all(
                np.isfinite(cut_data[inside])):
            add_flag(fl, messages, "nan_pixels", f"aperture {r:.1f} pix")
        if not ap.flux[k] > 0:
            add_flag(fl, messages, "nonpositive_flux", f"aperture {r:.1f} pix")
        for f in fl:
            if f not in flags:
                flags.append(f)
        out.append(",".join(fl))
    notes.messages[:] = list(dict.fromkeys(messages))
    return out


def comet_rows(prep, frame, centre, ap, mags, zp, slope, flags, wcs, opts, notes):
    """The measurement rows (``MEASUREMENT_COLUMNS``), with the airmass."""
    ra_c, dec_c = (float(v) for v in wcs.pixel_to_world_values(centre.x, centre.y))
    n = len(mags.mag)
    airmass = header_airmass(frame.info.header)
    site = opts.site
    if not np.isfinite(airmass) and site.site is not None:
        airmass, altitude = frame_airmass(frame.info.time_mid, site.site, ra_c * u.deg,
                                          dec_c * u.deg, formula=site.airmass_formula)
        notes.details["altitude_deg"] = float(altitude.to_value(u.deg))
        # a fact about the row, not a problem: recorded in the rows' flags without a warning
        flags = [",".join([f for f in fl.split(",") if f] + ["airmass_computed"])
                 for fl in flags]
    geo = prep.geo
    comet = QTable({
        "frame": [prep.name] * n,
        "mjd_utc_mid": np.full(n, frame.info.time_mid.utc.mjd) * u.d,
        "filter": [str(frame.info.filter or "")] * n,
        "exptime_s": np.full(n, prep.exptime) * u.s,
        "airmass": np.full(n, airmass),
        "zp_mag": np.full(n, zp.zp) * u.mag,
        "zp_err_mag": np.full(n, zp.zp_err) * u.mag,
        "n_stars": np.full(n, zp.n_stars),
        "x_pix": np.full(n, centre.x) * u.pix,
        "y_pix": np.full(n, centre.y) * u.pix,
        "ra_deg": np.full(n, ra_c) * u.deg,
        "dec_deg": np.full(n, dec_c) * u.deg,
        "r_h_au": np.full(n, geo["r_h"]) * u.au,
        "delta_au": np.full(n, geo["delta"]) * u.au,
        "phase_deg": np.full(n, geo["phase"]) * u.deg,
        "elong_deg": np.full(n, geo["elong"]) * u.deg,
        "rho_km": mags.rho_km * u.km,
        "rho_arcsec": mags.rho_arcsec * u.arcsec,
        "mag": mags.mag * u.mag,
        "mag_err": mags.mag_err * u.mag,
        "afrho_cm": np.asarray(mags.afrho) * u.cm,
        "afrho_err_cm": np.asarray(mags.afrho_err) * u.cm,
        "a0frho_cm": np.asarray(mags.a0frho) * u.cm,
        "a0frho_err_cm": np.asarray(mags.a0frho_err) * u.cm,
        "coma_slope": np.full(n, slope),
        "coma_apcorr_mag": 2.5 * np.log10(ap.coma_factor) * u.mag,
        "flags": flags,
    })
    notes.lap("rows")
    return comet[list(MEASUREMENT_COLUMNS)]
