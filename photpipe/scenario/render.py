"""Render one raw frame of a synthetic scenario, with the truth that made it.

A science frame is built the way a CCD builds it: sky, stars and comet (electrons per second for a
flat response of 1) times the exposure and the flat-field response, plus dark current, Poisson
noise, cosmic-ray hits, read noise, conversion to ADU by the gain, the bias, and the ADC ceiling.
Bias, dark and flat frames are the same machine with the light turned off or made uniform.
"""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.io import fits
from astropy.table import QTable
from astropy.time import Time
from astropy.wcs import WCS
from astropy.wcs.utils import skycoord_to_pixel

from photpipe._quantity import as_positive_value, as_value

from .comet import add_stamp, coma_k_from_afrho, render_comet
from .psf import moffat_stamp

__all__ = ["FrameTruth", "render_frame", "make_wcs", "HEADER_KIND_VALUES"]

#: What the generator writes in IMAGETYP for each kind (one common convention among several).
HEADER_KIND_VALUES = {"bias": "Bias Frame", "dark": "Dark Frame", "flat": "Flat Field",
                      "science": "Light Frame"}


@dataclass(frozen=True)
class FrameTruth:
    """The truth behind one rendered frame.

    Attributes
    ----------
    kind : str
        bias, dark, flat or science.
    time : `~astropy.time.Time`
        Mid-exposure time.
    exptime : `~astropy.units.Quantity` ['time']
    wcs : `~astropy.wcs.WCS` or None
        The true WCS (the header one may be offset on purpose).
    signal : ndarray
        Noise-free calibrated image, electrons over the exposure: sky + stars + comet (science),
        the uniform illumination (flat), zeros otherwise.
    bias : ndarray
        Bias in ADU.
    dark_rate : ndarray
        Dark current, electron/s.
    flat : ndarray
        Relative response.
    hot, cosmic, saturated : ndarray of bool
        Injected hot pixels, cosmic-ray hits, saturated pixels.
    stars : `~astropy.table.QTable` or None
        ``id, x, y, flux_e, mag`` of the stars on the frame (0-based pixels).
    comet_x, comet_y : float
        Nucleus position (0-based pixels), NaN when there is no comet.
    nucleus_flux_e : float
        Nucleus signal over the exposure.
    coma_k_e : float
        Coma strength K over the exposure (Σ = K/ρ, ρ in pixels, electrons per pixel).
    afrho_cm : float
        The A(θ)fρ the coma was made from (NaN if given as K).
    zero_point : float
        Magnitude giving 1 electron/s.
    fwhm_pix : float
    sky_e : float
        Sky per pixel over the exposure.
    """

    kind: str
    time: Time
    exptime: u.Quantity
    wcs: WCS | None
    signal: np.ndarray
    bias: np.ndarray
    dark_rate: np.ndarray
    flat: np.ndarray
    hot: np.ndarray
    cosmic: np.ndarray
    saturated: np.ndarray
    stars: QTable | None = None
    comet_x: float = np.nan
    comet_y: float = np.nan
    nucleus_flux_e: float = 0.0
    coma_k_e: float = 0.0
    afrho_cm: float = np.nan
    zero_point: float = np.nan
    fwhm_pix: float = np.nan
    sky_e: float = 0.0
    extra: dict = field(default_factory=dict)


def make_wcs(shape, center, pixel_scale, *, rotation=0.0 * u.deg, offset_pix=(0.0, 0.0)):
    """A TAN WCS with north up and east left, optionally rotated and shifted.

    Parameters
    ----------
    shape : tuple of int
        (ny, nx).
    center : `~astropy.coordinates.SkyCoord`
        Sky position at the detector centre.
    pixel_scale : `~astropy.units.Quantity` ['angle']
    rotation : `~astropy.units.Quantity` ['angle'], optional
        Rotation of the sky on the detector.
    offset_pix : tuple of float, optional
        Shift of the reference pixel (x, y), to model a header that is off.

    Returns
    -------
    wcs : `~astropy.wcs.WCS`
    """
    ny, nx = shape
    s = as_positive_value(pixel_scale, u.deg, "pixel_scale")
    th = as_value(rotation, u.rad, "rotation")
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [center.icrs.ra.deg, center.icrs.dec.deg]
    w.wcs.crpix = [nx / 2 + 0.5 + offset_pix[0], ny / 2 + 0.5 + offset_pix[1]]
    w.wcs.cd = [[-s * np.cos(th), s * np.sin(th)], [s * np.sin(th), s * np.cos(th)]]
    w.wcs.radesys = "ICRS"
    w.wcs.equinox = 2000.0
    return w


def _cosmic_rays(shape, n, rng):
    """Electrons deposited by ``n`` cosmic-ray hits: short tracks of 1-5 pixels."""
    ny, nx = shape
    hits = np.zeros(shape)
    for _ in range(n):
        x, y = rng.integers(2, nx - 2), rng.integers(2, ny - 2)
        length = rng.integers(1, 6)
        dx, dy = rng.choice([-1, 0, 1], 2)
        for _step in range(length):
            if 0 <= x < nx and 0 <= y < ny:
                hits[y, x] += rng.uniform(1500.0, 9000.0)
            x, y = x + dx, y + dy
    return hits


def render_frame(kind, instrument, *, time, exptime, filter="R", pointing=None, stars=None,
                 comet=None, zero_point=25.0, sky_rate=5.0 * u.electron / u.s,
                 fwhm=2.5 * u.arcsec, moffat_beta=3.0, ellipticity=0.0,
                 cosmic_rays=True, cosmic_rate=0.5, wcs_offset_pix=(0.0, 0.0),
                 wcs_rotation=0.0 * u.deg, flat_level=25000.0 * u.electron,
                 object_name="", header_extra=None, kind_values=None, rng=None):
    """Render one raw frame and return it with its truth.

    Parameters
    ----------
    kind : {"bias", "dark", "flat", "science"}
    instrument : `Instrument`
    time : `~astropy.time.Time`
        Mid-exposure time (UTC).
    exptime : `~astropy.units.Quantity` ['time']
    filter : str, optional
        Filter name (science and flat frames).
    pointing : `~astropy.coordinates.SkyCoord`, optional
        Sky position of the detector centre (science frames).
    stars : `~astropy.table.QTable`, optional
        Stars with ``ra, dec`` and a magnitude column named like ``filter``.
    comet : `CometSpec`, optional
        The comet in this frame.
    zero_point : float, optional
        Magnitude that gives 1 electron/s (includes extinction; the generator does not model
        airmass).
    sky_rate : `~astropy.units.Quantity` [electron / s], optional
        Sky per pixel.
    fwhm : `~astropy.units.Quantity` ['angle'], optional
    moffat_beta, ellipticity : float, optional
        PSF shape.
    cosmic_rays : bool, optional
        Inject cosmic-ray hits (science and dark frames).
    cosmic_rate : float, optional
        Hits per second per megapixel.
    wcs_offset_pix : tuple of float, optional
        Error of the header WCS reference pixel (x, y).
    wcs_rotation : `~astropy.units.Quantity` ['angle'], optional
        Rotation of the sky on the detector (true, and written in the header).
    flat_level : `~astropy.units.Quantity` [electron], optional
        Illumination of a flat frame per pixel.
    object_name : str, optional
        OBJECT keyword.
    header_extra : dict, optional
        More header cards.
    kind_values : dict, optional
        IMAGETYP value per kind (default `HEADER_KIND_VALUES`).
    rng : `numpy.random.Generator` or int, optional

    Returns
    -------
    hdul : `~astropy.io.fits.HDUList`
        Primary HDU with the raw frame as unsigned 16-bit ADU.
    truth : `FrameTruth`

    Examples
    --------
    >>> import numpy as np, astropy.units as u
    >>> from astropy.time import Time
    >>> from photpipe.scenario import Instrument
    >>> hdul, truth = render_frame("bias", Instrument(shape=(32, 32)),
    ...                            time=Time("2026-12-01T03:00:00"), exptime=0 * u.s, rng=1)
    >>> hdul[0].header["IMAGETYP"], hdul[0].data.dtype.name
    ('Bias Frame', 'uint16')
    """
    if kind not in HEADER_KIND_VALUES:
        msg = f"'kind' must be one of {sorted(HEADER_KIND_VALUES)}, got {kind!r}"
        raise ValueError(msg)
    rng = np.random.default_rng(rng)
    inst = instrument
    pat = inst.patterns
    shape = inst.shape
    t_exp = as_value(exptime, u.s, "exptime")
    if t_exp < 0:
        msg = f"'exptime' must be >= 0, got {exptime}"
        raise ValueError(msg)
    gain = inst.gain.to_value(u.electron / u.adu)
    rn = inst.read_noise.to_value(u.electron)
    pix_arcsec = inst.pixel_scale.to_value(u.arcsec)
    fwhm_pix = as_positive_value(fwhm, u.arcsec, "fwhm") / pix_arcsec

    signal = np.zeros(shape)
    star_table = None
    wcs_true = None
    cx = cy = np.nan
    nucleus_e = coma_k_e = 0.0
    afrho_cm = np.nan
    sky_e = 0.0
    if kind == "science":
        if pointing is None:
            msg = "a science frame needs a 'pointing' (SkyCoord of the detector centre)"
            raise ValueError(msg)
        wcs_true = make_wcs(shape, pointing, inst.pixel_scale, rotation=wcs_rotation)
        sky_e = as_value(sky_rate, u.electron / u.s, "sky_rate") * t_exp
        signal += sky_e
        size = int(2 * np.ceil(6 * fwhm_pix) + 1)

        def stamp_of(dx, dy):
            return moffat_stamp(size, dx, dy, fwhm_pix, moffat_beta, ellipticity=ellipticity)

        if stars is not None and len(stars):
            coords = SkyCoord(stars["ra"], stars["dec"])
            sx, sy = skycoord_to_pixel(coords, wcs_true)
            mags = np.asarray(u.Quantity(stars[filter]).to_value(u.mag))
            flux = 10 ** (-0.4 * (mags - zero_point)) * t_exp
            margin = size
            on = ((sx > -margin) & (sx < shape[1] + margin)
                  & (sy > -margin) & (sy < shape[0] + margin))
            for x, y, f in zip(sx[on], sy[on], flux[on]):
                add_stamp(signal, x, y, f, stamp_of)
            inside = (sx >= 0) & (sx <= shape[1] - 1) & (sy >= 0) & (sy <= shape[0] - 1)
            star_table = QTable({"id": stars["id"][inside], "x": sx[inside], "y": sy[inside],
                                 "flux_e": flux[inside], "mag": mags[inside] * u.mag})
        if comet is not None:
            pos = SkyCoord(comet.ra, comet.dec)
            cx, cy = (float(v) for v in skycoord_to_pixel(pos, wcs_true))
            if comet.nucleus_mag is not None:
                nucleus_e = 10 ** (-0.4 * (comet.nucleus_mag.to_value(u.mag) - zero_point)) * t_exp
            if comet.afrho is not None:
                afrho_cm = comet.afrho.to_value(u.cm)
                k = coma_k_from_afrho(comet.afrho, r_h=comet.r_h, delta=comet.delta,
                                      pixel_scale=inst.pixel_scale, zero_point=zero_point,
                                      m_sun=comet.m_sun)
                coma_k_e = k.to_value(u.electron / u.s) * t_exp
            elif comet.coma_k is not None:
                coma_k_e = comet.coma_k.to_value(u.electron / u.s) * t_exp
            def fine_kernel_of(n):
                return moffat_stamp(size * n, 0.0, 0.0, fwhm_pix * n, moffat_beta,
                                    ellipticity=ellipticity, oversample=1)

            kernel = stamp_of(0.0, 0.0)
            signal += render_comet(shape, cx, cy, nucleus_flux=nucleus_e, coma_k=coma_k_e,
                                   psf_kernel=kernel, stamp_of=stamp_of,
                                   fine_kernel_of=fine_kernel_of)
    elif kind == "flat":
        signal += as_positive_value(flat_level, u.electron, "flat_level")

    electrons = np.zeros(shape)
    if kind != "bias":
        expected = pat.flat * signal + pat.dark_rate * t_exp
        electrons = rng.poisson(expected).astype(float)
    cosmic = np.zeros(shape, bool)
    if cosmic_rays and kind in ("science", "dark") and t_exp > 0:
        n_hits = rng.poisson(cosmic_rate * t_exp * shape[0] * shape[1] / 1e6)
        hits = _cosmic_rays(shape, n_hits, rng)
        cosmic = hits > 0
        electrons += hits
    electrons += rng.normal(0.0, rn, shape)
    adu = electrons / gain + pat.bias
    sat_level = inst.saturation.to_value(u.adu)
    saturated = adu >= sat_level
    raw = np.clip(np.round(np.minimum(adu, sat_level)), 0, 65535).astype(np.uint16)

    hdr = fits.Header()
    values = dict(HEADER_KIND_VALUES, **(kind_values or {}))
    start = time - (t_exp / 2) * u.s
    hdr["IMAGETYP"] = (values[kind], "kind of frame")
    hdr["DATE-OBS"] = (start.utc.isot, "UTC start of exposure")
    hdr["EXPTIME"] = (t_exp, "[s] exposure time")
    if kind in ("science", "flat"):
        hdr["FILTER"] = (filter, "filter name")
    hdr["GAIN"] = (gain, "[electron/adu] detector gain")
    hdr["RDNOISE"] = (rn, "[electron] read noise")
    hdr["SATURATE"] = (sat_level, "[adu] saturation level")
    hdr["XBINNING"] = 1
    hdr["YBINNING"] = 1
    hdr["INSTRUME"] = inst.name
    if object_name:
        hdr["OBJECT"] = object_name
    if wcs_true is not None:
        w_hdr = make_wcs(shape, pointing, inst.pixel_scale, rotation=wcs_rotation,
                         offset_pix=wcs_offset_pix)
        hdr.update(w_hdr.to_header())
    for key, value in (header_extra or {}).items():
        hdr[key] = value
    hdul = fits.HDUList([fits.PrimaryHDU(raw, header=hdr, uint=True)])

    truth = FrameTruth(
        kind=kind, time=time, exptime=t_exp * u.s, wcs=wcs_true, signal=signal, bias=pat.bias,
        dark_rate=pat.dark_rate, flat=pat.flat, hot=pat.hot, cosmic=cosmic, saturated=saturated,
        stars=star_table, comet_x=cx, comet_y=cy, nucleus_flux_e=nucleus_e, coma_k_e=coma_k_e,
        afrho_cm=afrho_cm, zero_point=zero_point, fwhm_pix=fwhm_pix, sky_e=sky_e)
    return hdul, truth
