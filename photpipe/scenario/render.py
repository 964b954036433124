"""Render one raw frame of a synthetic scenario, with the truth that made it.

A science frame is built the way a CCD builds it: sky, stars and comet (electrons per second for a
flat response of 1) times the exposure and the flat-field response, plus dark current, Poisson
noise, cosmic-ray hits, read noise, conversion to ADU by the gain, the bias, and the ADC ceiling.
Bias, dark and flat frames are the same machine with the light turned off or made uniform.

`render_frame` runs named steps: the light of the sky, the stars and the comet (`SceneSpec`,
with its `Seeing`), the detector that turns it into ADU (`DetectorSpec`), and the header
(`HeaderSpec`). A comet that moves (`CometSpec` ``ra_rate, dec_rate``) trails during a long
exposure under sidereal tracking, and the stars trail when the telescope follows the comet
(``SceneSpec.tracking``); both use the trailed PSF of the single-frame cases
(`~photpipe.scenario.psf.TrailedMoffat`). The trail is worked out here from the rate and the true
WCS, independently of the pipeline's own (`photpipe.nucleus.motion`).
"""

from dataclasses import dataclass, field
from types import SimpleNamespace

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
from .psf import TrailedMoffat

__all__ = ["FrameTruth", "render_frame", "make_wcs", "HEADER_KIND_VALUES", "Seeing", "SceneSpec",
           "DetectorSpec", "HeaderSpec", "TRACKING"]

#: What the telescope follows during an exposure: the stars (the comet trails) or the comet
#: (the stars trail).
TRACKING = ("sidereal", "comet")

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
    comet_trail, star_trail : tuple of float
        Motion (dx, dy) in pixels of the comet and of the stars during the exposure (centred
        on the mid-exposure position).
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
    comet_trail: tuple = (0.0, 0.0)
    star_trail: tuple = (0.0, 0.0)
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


@dataclass(frozen=True)
class Seeing:
    """The PSF of a frame: a Moffat (1969) profile.

    Attributes
    ----------
    fwhm : `~astropy.units.Quantity` ['angle']
        FWHM along the major axis.
    beta : float
        Moffat index.
    ellipticity : float
        1 - b/a.
    angle : `~astropy.units.Quantity` ['angle']
        Position of the major axis, counter-clockwise from the detector's +x.
    """

    fwhm: u.Quantity = 2.5 * u.arcsec
    beta: float = 3.0
    ellipticity: float = 0.0
    angle: u.Quantity = 0.0 * u.deg


@dataclass(frozen=True)
class SceneSpec:
    """What the sky holds in a science frame, and how the telescope followed it.

    Attributes
    ----------
    pointing : `~astropy.coordinates.SkyCoord` or None
        Sky position of the detector centre (needed for a science frame).
    stars : `~astropy.table.QTable` or None
        Stars with ``ra, dec`` and a magnitude column named like ``filter``.
    comet : `CometSpec` or None
        The comet in this frame (its ``ra_rate, dec_rate`` make it move).
    filter : str
        Filter name (science and flat frames).
    zero_point : float
        Magnitude that gives 1 electron/s (includes extinction; airmass is not modelled).
    sky_rate : `~astropy.units.Quantity` [electron / s]
        Sky per pixel.
    seeing : Seeing
    tracking : {"sidereal", "comet"}
        Sidereal: the stars are points and the comet trails; comet: the comet is a point and
        the stars trail the opposite way.
    wcs_rotation : `~astropy.units.Quantity` ['angle']
        Rotation of the sky on the detector (true, and written in the header).
    """

    pointing: SkyCoord | None = None
    stars: QTable | None = None
    comet: object = None
    filter: str = "R"
    zero_point: float = 25.0
    sky_rate: u.Quantity = 5.0 * u.electron / u.s
    seeing: Seeing = Seeing()
    tracking: str = "sidereal"
    wcs_rotation: u.Quantity = 0.0 * u.deg

    def __post_init__(self):
        if self.tracking not in TRACKING:
            msg = f"'tracking' must be one of {TRACKING}, got {self.tracking!r}"
            raise ValueError(msg)


@dataclass(frozen=True)
class DetectorSpec:
    """What the detector adds besides the instrument's fixed patterns.

    Attributes
    ----------
    cosmic_rays : bool
        Inject cosmic-ray hits (science and dark frames).
    cosmic_rate : float
        Hits per second per megapixel.
    flat_level : `~astropy.units.Quantity` [electron]
        Illumination of a flat frame per pixel.
    """

    cosmic_rays: bool = True
    cosmic_rate: float = 0.5
    flat_level: u.Quantity = 25000.0 * u.electron


@dataclass(frozen=True)
class HeaderSpec:
    """What the header says beyond the frame's own facts.

    Attributes
    ----------
    wcs_offset_pix : tuple of float
        Error of the header WCS reference pixel (x, y), to model a header that is off.
    object_name : str
        OBJECT keyword (none when empty).
    extra : dict or None
        More header cards.
    kind_values : dict or None
        IMAGETYP value per kind (default `HEADER_KIND_VALUES`).
    """

    wcs_offset_pix: tuple = (0.0, 0.0)
    object_name: str = ""
    extra: dict | None = None
    kind_values: dict | None = None


def render_frame(kind, instrument, *, time, exptime, scene=None, detector=None, header=None,
                 rng=None):
    """Render one raw frame and return it with its truth.

    Parameters
    ----------
    kind : {"bias", "dark", "flat", "science"}
    instrument : `Instrument`
    time : `~astropy.time.Time`
        Mid-exposure time (UTC).
    exptime : `~astropy.units.Quantity` ['time']
    scene : SceneSpec, optional
        The sky (science frames need its ``pointing``; flats take its ``filter``).
    detector : DetectorSpec, optional
    header : HeaderSpec, optional
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
    scene = scene or SceneSpec()
    detector = detector or DetectorSpec()
    header = header or HeaderSpec()
    rng = np.random.default_rng(rng)
    t_exp = as_value(exptime, u.s, "exptime")
    if t_exp < 0:
        msg = f"'exptime' must be >= 0, got {exptime}"
        raise ValueError(msg)
    light = _no_light(instrument.shape)
    if kind == "science":
        light = _science_light(instrument, scene, t_exp)
    elif kind == "flat":
        light.signal += as_positive_value(detector.flat_level, u.electron, "flat_level")
    raw, cosmic, saturated = _read_out(kind, instrument, light.signal, t_exp, detector, rng)
    hdr = _header(kind, instrument, time, t_exp, scene, header, light.wcs is not None)
    hdul = fits.HDUList([fits.PrimaryHDU(raw, header=hdr, uint=True)])
    pat = instrument.patterns
    truth = FrameTruth(
        kind=kind, time=time, exptime=t_exp * u.s, wcs=light.wcs, signal=light.signal,
        bias=pat.bias, dark_rate=pat.dark_rate, flat=pat.flat, hot=pat.hot, cosmic=cosmic,
        saturated=saturated, stars=light.stars, comet_x=light.cx, comet_y=light.cy,
        nucleus_flux_e=light.nucleus_e, coma_k_e=light.coma_k_e, afrho_cm=light.afrho_cm,
        zero_point=scene.zero_point, fwhm_pix=light.fwhm_pix, sky_e=light.sky_e,
        comet_trail=light.comet_trail, star_trail=light.star_trail)
    return hdul, truth


def _no_light(shape):
    """The light of a frame with no sky in it (bias, dark; a flat adds its level)."""
    return SimpleNamespace(signal=np.zeros(shape), wcs=None, stars=None, cx=np.nan, cy=np.nan,
                           nucleus_e=0.0, coma_k_e=0.0, afrho_cm=np.nan, fwhm_pix=np.nan,
                           sky_e=0.0, comet_trail=(0.0, 0.0), star_trail=(0.0, 0.0))


def _science_light(inst, scene, t_exp):
    """Sky, stars and comet in electrons over the exposure, with where everything sits."""
    if scene.pointing is None:
        msg = "a science frame needs a 'pointing' (SkyCoord of the detector centre)"
        raise ValueError(msg)
    light = _no_light(inst.shape)
    light.wcs = make_wcs(inst.shape, scene.pointing, inst.pixel_scale,
                         rotation=scene.wcs_rotation)
    light.fwhm_pix = (as_positive_value(scene.seeing.fwhm, u.arcsec, "fwhm")
                      / inst.pixel_scale.to_value(u.arcsec))
    light.sky_e = as_value(scene.sky_rate, u.electron / u.s, "sky_rate") * t_exp
    light.signal += light.sky_e
    motion = _comet_motion(scene.comet, light.wcs, t_exp)
    if scene.tracking == "comet":
        light.star_trail = (-motion[0], -motion[1])
    else:
        light.comet_trail = motion
    _add_stars(light, scene, t_exp)
    if scene.comet is not None:
        _add_comet(light, scene, inst, t_exp)
    return light


def _psf(seeing, fwhm_pix, trail):
    return TrailedMoffat(fwhm_pix, seeing.beta, seeing.ellipticity,
                         as_value(seeing.angle, u.rad, "angle"), trail)


def _comet_motion(comet, wcs, t_exp):
    """The comet's motion (dx, dy) in pixels over the exposure, from its rate and the true WCS."""
    if comet is None:
        return (0.0, 0.0)
    dra = as_value(comet.ra_rate, u.arcsec / u.s, "ra_rate") * t_exp
    ddec = as_value(comet.dec_rate, u.arcsec / u.s, "dec_rate") * t_exp
    if dra == 0 and ddec == 0:
        return (0.0, 0.0)
    mid = SkyCoord(comet.ra, comet.dec)
    ends = [mid.spherical_offsets_by(s * dra / 2 * u.arcsec, s * ddec / 2 * u.arcsec)
            for s in (-1, 1)]
    (x0, y0), (x1, y1) = (skycoord_to_pixel(e, wcs) for e in ends)
    return (float(x1 - x0), float(y1 - y0))


def _add_stars(light, scene, t_exp):
    """Add the stars on (and just off) the frame; keep a table of those on it."""
    stars = scene.stars
    if stars is None or not len(stars):
        return
    psf = _psf(scene.seeing, light.fwhm_pix, light.star_trail)
    ny, nx = light.signal.shape
    sx, sy = skycoord_to_pixel(SkyCoord(stars["ra"], stars["dec"]), light.wcs)
    mags = np.asarray(u.Quantity(stars[scene.filter]).to_value(u.mag))
    flux = 10 ** (-0.4 * (mags - scene.zero_point)) * t_exp
    margin = psf.size
    near = (sx > -margin) & (sx < nx + margin) & (sy > -margin) & (sy < ny + margin)
    for x, y, f in zip(sx[near], sy[near], flux[near]):
        add_stamp(light.signal, x, y, f, psf.stamp)
    inside = (sx >= 0) & (sx <= nx - 1) & (sy >= 0) & (sy <= ny - 1)
    light.stars = QTable({"id": stars["id"][inside], "x": sx[inside], "y": sy[inside],
                          "flux_e": flux[inside], "mag": mags[inside] * u.mag})


def _add_comet(light, scene, inst, t_exp):
    """Add the nucleus and the K/ρ coma through the (trailed) PSF."""
    comet = scene.comet
    cx, cy = (float(v) for v in skycoord_to_pixel(SkyCoord(comet.ra, comet.dec), light.wcs))
    light.cx, light.cy = cx, cy
    if comet.nucleus_mag is not None:
        light.nucleus_e = 10 ** (-0.4 * (comet.nucleus_mag.to_value(u.mag)
                                         - scene.zero_point)) * t_exp
    if comet.afrho is not None:
        light.afrho_cm = comet.afrho.to_value(u.cm)
        k = coma_k_from_afrho(comet.afrho, r_h=comet.r_h, delta=comet.delta,
                              pixel_scale=inst.pixel_scale, zero_point=scene.zero_point,
                              m_sun=comet.m_sun)
        light.coma_k_e = k.to_value(u.electron / u.s) * t_exp
    elif comet.coma_k is not None:
        light.coma_k_e = comet.coma_k.to_value(u.electron / u.s) * t_exp
    psf = _psf(scene.seeing, light.fwhm_pix, light.comet_trail)
    light.signal += render_comet(light.signal.shape, cx, cy, nucleus_flux=light.nucleus_e,
                                 coma_k=light.coma_k_e, psf_kernel=psf.stamp(0.0, 0.0),
                                 stamp_of=psf.stamp, fine_kernel_of=psf.fine_kernel)


def _read_out(kind, inst, signal, t_exp, detector, rng):
    """Electrons to raw ADU: flat response, dark, Poisson noise, cosmics, read noise, gain, bias.

    Returns the raw uint16 frame and the masks of cosmic-ray hits and saturated pixels.
    """
    pat = inst.patterns
    shape = inst.shape
    electrons = np.zeros(shape)
    if kind != "bias":
        electrons = rng.poisson(pat.flat * signal + pat.dark_rate * t_exp).astype(float)
    cosmic = np.zeros(shape, bool)
    if detector.cosmic_rays and kind in ("science", "dark") and t_exp > 0:
        n_hits = rng.poisson(detector.cosmic_rate * t_exp * shape[0] * shape[1] / 1e6)
        hits = _cosmic_rays(shape, n_hits, rng)
        cosmic = hits > 0
        electrons += hits
    electrons += rng.normal(0.0, inst.read_noise.to_value(u.electron), shape)
    adu = electrons / inst.gain.to_value(u.electron / u.adu) + pat.bias
    sat_level = inst.saturation.to_value(u.adu)
    saturated = adu >= sat_level
    raw = np.clip(np.round(np.minimum(adu, sat_level)), 0, 65535).astype(np.uint16)
    return raw, cosmic, saturated


def _header(kind, inst, time, t_exp, scene, spec, with_wcs):
    """The raw frame's header: kind, times, filter, detector facts, WCS (as off as asked)."""
    hdr = fits.Header()
    values = dict(HEADER_KIND_VALUES, **(spec.kind_values or {}))
    start = time - (t_exp / 2) * u.s
    hdr["IMAGETYP"] = (values[kind], "kind of frame")
    hdr["DATE-OBS"] = (start.utc.isot, "UTC start of exposure")
    hdr["EXPTIME"] = (t_exp, "[s] exposure time")
    if kind in ("science", "flat"):
        hdr["FILTER"] = (scene.filter, "filter name")
    hdr["GAIN"] = (inst.gain.to_value(u.electron / u.adu), "[electron/adu] detector gain")
    hdr["RDNOISE"] = (inst.read_noise.to_value(u.electron), "[electron] read noise")
    hdr["SATURATE"] = (inst.saturation.to_value(u.adu), "[adu] saturation level")
    hdr["XBINNING"] = 1
    hdr["YBINNING"] = 1
    hdr["INSTRUME"] = inst.name
    if spec.object_name:
        hdr["OBJECT"] = spec.object_name
    if with_wcs:
        w_hdr = make_wcs(inst.shape, scene.pointing, inst.pixel_scale,
                         rotation=scene.wcs_rotation, offset_pix=spec.wcs_offset_pix)
        hdr.update(w_hdr.to_header())
    for key, value in (spec.extra or {}).items():
        hdr[key] = value
    return hdr
