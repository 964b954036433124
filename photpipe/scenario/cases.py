"""Named hard nights for the nucleus fit: small calibrated frames with the truth that made them.

Each case is a kind of night real observers get (poor seeing, a trailed comet, trailed stars, a
header WCS that is off, a bare nucleus, a pure coma, a faint nucleus...). `render_case` draws one
frame of a case: a comet-centred calibrated frame (electrons, variance plane) with catalogued
field stars for the PSF, fainter stars below the catalogue limit (some blended with the comet),
seeing and PSF ellipticity drawn afresh for every frame, and the comet and stars smeared by their
motion during the exposure.

Rendering, independent of the fitter's (`photpipe.nucleus`): every source is the Moffat (1969)
profile averaged over the pixel on a 9x9 sub-grid (7x7 for the field stars), averaged over its
trail at steps of at most 0.2 pixel; the coma is the exact pixel integral of K/ρ convolved with
that PSF, its core redone on a 7x finer grid (`render_comet`). The noise-free nucleus and coma
images are rendered apart, so the share of the nucleus inside one FWHM is exact by
construction. Against a 15x15 sub-grid and a 13x finer core the core pixels agree to 0.5 % and
apertures of 1-4 FWHM to 0.1 % (tests/scenario/test_night_cases.py).
"""

from dataclasses import dataclass, field, replace

import numpy as np
from astropy import units as u
from astropy.time import Time
from photutils.aperture import CircularAperture

from photpipe.frames.types import CalibratedFrame, FrameInfo

from .comet import add_stamp, render_comet
from .psf import TrailedMoffat

__all__ = ["NightCase", "CaseFrame", "NIGHT_CASES", "render_case", "case_night_size",
           "trail_vector"]

@dataclass(frozen=True)
class NightCase:
    """What kind of night a case is (all lengths in pixels of ``pixel_scale_arcsec``).

    Attributes
    ----------
    name, description : str
    fwhm_arcsec : tuple of float
        Range of the seeing FWHM (major axis), drawn per frame.
    ellipticity : tuple of float
        Range of the PSF ellipticity 1 - b/a, drawn per frame (angle uniform).
    beta : float
        Moffat index.
    sky_e_s : float
        Sky per pixel, electron/s.
    exptime_s : float
    nucleus_e_s : float
        Nucleus signal, electron/s (0 for a pure coma).
    nucleus_fraction : float or None
        Share of the nucleus in the light inside one FWHM of the nucleus; sets the coma
        strength (None: no coma, a bare nucleus; ignored when there is no nucleus).
    coma_k_e_s : float
        Coma strength K (Σ = K/ρ, ρ in pixels, electron/s per pixel) when there is no nucleus.
    rate_arcsec_h : float
        The comet's sky-plane rate.
    tracking : {"sidereal", "comet"}
        Sidereal: the comet trails; comet: the stars trail (backwards).
    wcs_offset_arcsec : float
        Error of the header WCS: the comet's predicted position is off by this much.
    n_faint, n_blended : int
        Stars below the catalogue limit per frame, and how many of them sit within 2-5 FWHM of
        the nucleus.
    frames_per_night : tuple of int
        Range of the number of frames of a night.
    pixel_scale_arcsec, read_noise_e : float
    """

    name: str
    description: str
    fwhm_arcsec: tuple = (2.2, 3.0)
    ellipticity: tuple = (0.0, 0.12)
    beta: float = 3.0
    sky_e_s: float = 4.0
    exptime_s: float = 60.0
    nucleus_e_s: float = 600.0
    nucleus_fraction: float | None = 0.5
    coma_k_e_s: float = 20.0
    rate_arcsec_h: float = 20.0
    tracking: str = "sidereal"
    wcs_offset_arcsec: float = 1.0
    n_faint: int = 6
    n_blended: int = 1
    frames_per_night: tuple = (12, 40)
    pixel_scale_arcsec: float = 1.0
    read_noise_e: float = 8.0
    extra: dict = field(default_factory=dict)

    @property
    def has_nucleus(self):
        """True when the case has a nucleus."""
        return self.nucleus_e_s > 0

    @property
    def has_coma(self):
        """True when the case has a coma."""
        return self.nucleus_fraction is not None or not self.has_nucleus


_BASE = NightCase("nominal", "seeing 2.2-3.0\", nucleus half the light inside one FWHM")

#: The named cases, by name.
NIGHT_CASES = {c.name: c for c in (
    _BASE,
    replace(_BASE, name="wcs_offset", description="header WCS off by 6\"", wcs_offset_arcsec=6.0),
    replace(_BASE, name="poor_seeing", description="seeing 3.0-4.0\", bright sky",
            fwhm_arcsec=(3.0, 4.0), sky_e_s=12.0),
    replace(_BASE, name="comet_trailed",
            description="sidereal tracking, 300 s: the comet trails 1.5-2.5\"",
            exptime_s=300.0, nucleus_e_s=120.0, rate_arcsec_h=24.0, sky_e_s=2.0,
            extra={"rate_range": (18.0, 30.0)}),
    replace(_BASE, name="comet_tracked",
            description="telescope tracking the comet, 240 s: the stars trail 4\"",
            exptime_s=240.0, nucleus_e_s=150.0, rate_arcsec_h=60.0, tracking="comet",
            sky_e_s=2.0),
    replace(_BASE, name="no_nucleus", description="pure coma, no nucleus", nucleus_e_s=0.0,
            coma_k_e_s=25.0),
    replace(_BASE, name="no_coma", description="bare nucleus, no coma", nucleus_fraction=None),
    replace(_BASE, name="faint_nucleus",
            description="nucleus 10 % of the light inside one FWHM", nucleus_fraction=0.1),
)}


def case_night_size(case, rng):
    """Number of frames of one night of ``case`` (uniform over its range)."""
    lo, hi = case.frames_per_night
    return int(np.random.default_rng(rng).integers(lo, hi + 1))


def trail_vector(rate_arcsec_h, position_angle_deg, exptime_s, pixel_scale_arcsec):
    """Motion (dx, dy) in pixels during an exposure: rate × exptime along a position angle.

    The position angle is counted from north (+y) through east (-x, the usual sky image with
    north up and east left).

    Examples
    --------
    >>> [round(v, 6) for v in trail_vector(36.0, 90.0, 300.0, 1.5)]
    [-2.0, 0.0]
    """
    length = rate_arcsec_h * exptime_s / 3600.0 / pixel_scale_arcsec
    pa = np.deg2rad(position_angle_deg)
    return (float(-length * np.sin(pa)), float(length * np.cos(pa)))


@dataclass(frozen=True, eq=False)
class CaseFrame:
    """One rendered frame of a case and its truth.

    Attributes
    ----------
    case : NightCase
    frame : `~photpipe.frames.CalibratedFrame`
        Data (signal + noise, electrons), variance, no quality bits.
    signal : ndarray
        The noise-free image.
    x, y : float
        True nucleus position (0-based pixels).
    x_start, y_start : float
        Where the pipeline would start the nucleus fit: the true position moved by the header
        WCS error and a centroid error.
    star_xy : ndarray, shape (n, 2)
        Catalogued field stars (their detected positions).
    faint_xy : ndarray, shape (m, 2)
        Stars below the catalogue limit (not in ``star_xy``).
    nucleus_flux_e, coma_k_e : float
        Nucleus signal over the exposure and coma K (electrons per pixel at ρ = 1 pixel).
    nucleus_fraction : float
        Share of the nucleus in the noise-free comet light inside one FWHM (NaN without one).
    fwhm_pix, beta, ellipticity, angle_deg, sky_e : float
    comet_trail, star_trail : tuple of float
        Motion (dx, dy) of the comet and of the stars during the exposure, pixels.
    rate_arcsec_h, exptime_s, pixel_scale_arcsec : float
    """

    case: NightCase
    frame: CalibratedFrame
    signal: np.ndarray
    x: float
    y: float
    x_start: float
    y_start: float
    star_xy: np.ndarray
    faint_xy: np.ndarray
    nucleus_flux_e: float
    coma_k_e: float
    nucleus_fraction: float
    fwhm_pix: float
    beta: float
    ellipticity: float
    angle_deg: float
    sky_e: float
    comet_trail: tuple
    star_trail: tuple
    rate_arcsec_h: float
    exptime_s: float
    pixel_scale_arcsec: float


def _aperture_sum(image, x, y, radius):
    w = CircularAperture((x, y), r=radius).to_mask(method="exact").to_image(image.shape)
    return float(np.sum(w * image))


def _place_stars(rng, shape, x, y, fwhm, n, min_dist, margin):
    ny, nx = shape
    out = []
    while len(out) < n:
        sx, sy = rng.uniform(margin, nx - margin), rng.uniform(margin, ny - margin)
        if np.hypot(sx - x, sy - y) < min_dist:
            continue
        if any(np.hypot(sx - a, sy - b) < 4 * fwhm for a, b in out):
            continue
        out.append((sx, sy))
    return np.array(out).reshape(-1, 2)


def render_case(case, seed, *, shape=(161, 161), n_catalogued=12, oversample=9,
                core_oversample=7):
    """Render one frame of a named case.

    Parameters
    ----------
    case : str or NightCase
        A key of `NIGHT_CASES` or a case.
    seed : int
        Seed of everything drawn (seeing, shape, positions, stars, noise).
    shape : tuple of int, optional
        (ny, nx): a cutout-sized frame centred near the comet.
    n_catalogued : int, optional
        Catalogued field stars (bright enough for the PSF, at least 25 pixels from the comet).
    oversample : int, optional
        Sub-pixels per pixel side of the nucleus's PSF stamp (odd).
    core_oversample : int, optional
        Refinement of the coma's core (odd, see `render_comet`).

    Returns
    -------
    CaseFrame

    Examples
    --------
    >>> cf = render_case("no_coma", 1, shape=(101, 101), n_catalogued=4)
    >>> cf.coma_k_e, cf.frame.data.shape
    (0.0, (101, 101))
    """
    if isinstance(case, str):
        if case not in NIGHT_CASES:
            msg = f"unknown night case {case!r}; known: {sorted(NIGHT_CASES)}"
            raise ValueError(msg)
        case = NIGHT_CASES[case]
    rng = np.random.default_rng(seed)
    scale = case.pixel_scale_arcsec
    fwhm = rng.uniform(*case.fwhm_arcsec) / scale
    ell = rng.uniform(*case.ellipticity)
    angle = rng.uniform(0.0, np.pi)
    rate = rng.uniform(*case.extra["rate_range"]) if "rate_range" in case.extra \
        else case.rate_arcsec_h
    motion = trail_vector(rate, rng.uniform(0.0, 360.0), case.exptime_s, scale)
    if case.tracking == "comet":
        comet_trail, star_trail = (0.0, 0.0), (-motion[0], -motion[1])
    else:
        comet_trail, star_trail = motion, (0.0, 0.0)
    ny, nx = shape
    x = (nx - 1) / 2 + rng.uniform(-0.5, 0.5)
    y = (ny - 1) / 2 + rng.uniform(-0.5, 0.5)
    t = case.exptime_s
    sky = case.sky_e_s * t

    comet_psf = TrailedMoffat(fwhm, case.beta, ell, angle, comet_trail)
    nuc_img = render_comet(shape, x, y, nucleus_flux=1.0, coma_k=0.0,
                           psf_kernel=comet_psf.stamp(0.0, 0.0),
                           stamp_of=lambda dx, dy: comet_psf.stamp(dx, dy, oversample=oversample))
    coma_img = np.zeros(shape)
    if case.has_coma:
        coma_img = render_comet(shape, x, y, nucleus_flux=0.0, coma_k=1.0,
                                psf_kernel=comet_psf.stamp(0.0, 0.0), stamp_of=None,
                                fine_kernel_of=comet_psf.fine_kernel,
                                core_oversample=core_oversample)
    flux = case.nucleus_e_s * t
    k = 0.0
    fraction = np.nan
    if case.has_nucleus and case.nucleus_fraction is not None:
        pn = flux * _aperture_sum(nuc_img, x, y, fwhm)
        pc = _aperture_sum(coma_img, x, y, fwhm)
        k = pn * (1.0 - case.nucleus_fraction) / (case.nucleus_fraction * pc)
        fraction = case.nucleus_fraction
    elif case.has_nucleus:
        fraction = 1.0
    else:
        k = case.coma_k_e_s * t
        fraction = 0.0
    signal = sky + flux * nuc_img + k * coma_img

    star_psf = TrailedMoffat(fwhm, case.beta, ell, angle, star_trail)

    reach = star_psf.size // 2
    bright = _place_stars(rng, shape, x, y, fwhm, n_catalogued, 25.0, reach // 2 + 3)
    # catalogued stars: S/N a few hundred (common for 13-16 mag field stars at these exposures)
    for sx, sy in bright:
        f = rng.uniform(0.5, 4.0) * max(flux, 2e4)
        add_stamp(signal, sx, sy, f, lambda dx, dy: star_psf.stamp(dx, dy, oversample=7))
    faint = []
    for i in range(case.n_faint):
        if i < case.n_blended:
            r, th = rng.uniform(2.0, 5.0) * fwhm, rng.uniform(0, 2 * np.pi)
            sx, sy = x + r * np.cos(th), y + r * np.sin(th)
        else:
            sx, sy = rng.uniform(5, nx - 5), rng.uniform(5, ny - 5)
        f = rng.uniform(0.05, 0.3) * max(flux, 2e3)
        add_stamp(signal, sx, sy, f, lambda dx, dy: star_psf.stamp(dx, dy, oversample=7))
        faint.append((sx, sy))

    var = np.clip(signal, 0, None) + case.read_noise_e**2
    data = signal + rng.normal(size=shape) * np.sqrt(var)
    info = FrameInfo(f"cases/{case.name}_{seed:04d}.fits", "science",
                     Time("2026-12-01T03:00:00") + seed * u.min, t * u.s, "R",
                     1.0 * u.electron / u.adu, case.read_noise_e * u.electron, 60000 * u.adu,
                     (1, 1), shape)
    frame = CalibratedFrame(info, data, var, np.zeros(shape, np.uint16))
    off = rng.normal(size=2)
    off = case.wcs_offset_arcsec / scale * off / np.hypot(*off)
    centroid = rng.normal(0.0, 0.3, 2)
    star_xy = bright + rng.normal(0.0, 0.05, bright.shape)
    return CaseFrame(case=case, frame=frame, signal=signal, x=x, y=y,
                     x_start=float(x + off[0] + centroid[0]),
                     y_start=float(y + off[1] + centroid[1]), star_xy=star_xy,
                     faint_xy=np.array(faint).reshape(-1, 2), nucleus_flux_e=flux, coma_k_e=k,
                     nucleus_fraction=float(fraction), fwhm_pix=float(fwhm), beta=case.beta,
                     ellipticity=float(ell), angle_deg=float(np.rad2deg(angle)), sky_e=sky,
                     comet_trail=comet_trail, star_trail=star_trail, rate_arcsec_h=float(rate),
                     exptime_s=t, pixel_scale_arcsec=scale)
