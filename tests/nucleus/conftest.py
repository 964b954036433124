"""Fixtures of the nucleus tests: frames from noise-free images, two independent comet renderers."""

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.time import Time
from photutils.aperture import CircularAperture
from scipy.signal import fftconvolve

from photpipe.frames.types import CalibratedFrame, FrameInfo
from photpipe.models.coma import coma_image
from photpipe.models.moffat import moffat_kernel, moffat_surface

READ_NOISE = 5.0


def frame_from_signal(signal, rng, *, read_noise=READ_NOISE, exptime=100.0, name="synthetic",
                      quality=None):
    """A CalibratedFrame: signal + Gaussian noise of variance signal + read_noise²."""
    var = np.clip(signal, 0, None) + read_noise**2
    data = signal + rng.normal(size=signal.shape) * np.sqrt(var)
    info = FrameInfo(f"night1/{name}.fits", "science", Time("2026-12-01T03:00:00"),
                     exptime * u.s, "R", 1.0 * u.electron / u.adu, read_noise * u.electron,
                     60000 * u.adu, (1, 1), signal.shape)
    q = np.zeros(signal.shape, np.uint16) if quality is None else quality
    return CalibratedFrame(info, data.astype(np.float64), var, q)


def oracle_comet(shape, x0, y0, *, nucleus_flux, coma_k, fwhm, beta=3.0, sky=0.0, n=7,
                 pad=25):
    """Slow, plain rendering: everything on a grid n times finer, then summed into pixels.

    The coma is the exact integral of K/ρ over each fine pixel, blurred with the Moffat sampled on
    the fine grid; the nucleus is the Moffat sampled on the fine grid. Independent of the
    production renderer (no core refinement, no FFT plan, no Gauss-Legendre).
    """
    ny, nx = shape
    big = ((ny + 2 * pad) * n, (nx + 2 * pad) * n)
    fx, fy = (x0 + pad + 0.5) * n - 0.5, (y0 + pad + 0.5) * n - 0.5
    # K/ρ with ρ in coarse pixels is K n / ρ_fine; a fine pixel has 1/n² of the area
    scene = coma_image(big, fx, fy, coma_k / n)
    ksize = (2 * pad + 1) * n
    kern = moffat_kernel(ksize, fwhm=fwhm * n, beta=beta)
    img = fftconvolve(scene, kern, mode="same")
    c = np.arange(big[1]) - fx
    r = np.arange(big[0]) - fy
    point = moffat_surface(c[None, :], r[:, None], fwhm=fwhm * n, beta=beta)
    img += nucleus_flux * point / point.sum()
    img = img[pad * n:(pad + ny) * n, pad * n:(pad + nx) * n]
    return img.reshape(ny, n, nx, n).sum(axis=(1, 3)) + sky


def coma_k_for_fraction(fraction, nucleus_flux, fwhm, *, beta=3.0, radius_fwhm=1.0):
    """K that makes the nucleus ``fraction`` of the flux inside radius_fwhm × FWHM."""
    size = 81
    c = size // 2
    img_n = oracle_comet((size, size), c, c, nucleus_flux=1.0, coma_k=0.0, fwhm=fwhm, beta=beta,
                         n=5)
    img_c = oracle_comet((size, size), c, c, nucleus_flux=0.0, coma_k=1.0, fwhm=fwhm, beta=beta,
                         n=5)
    w = CircularAperture((c, c), r=radius_fwhm * fwhm).to_mask(method="exact").to_image(
        (size, size))
    pn, pc = np.sum(w * img_n), np.sum(w * img_c)
    return nucleus_flux * pn * (1.0 - fraction) / (fraction * pc)


def scenario_comet_frame(*, nucleus_flux_e, coma_k_e, fwhm_pix=4.0, seed=0, n_stars=0,
                         shape=(161, 161), sky_rate=2.0, exptime=100.0):
    """Noise-free signal and truth from the project's synthetic-sky generator."""
    from photpipe.scenario import (
        CometSpec,
        DetectorSpec,
        Instrument,
        SceneSpec,
        Seeing,
        make_star_field,
        render_frame,
    )

    scale = 0.8
    inst = Instrument(shape=shape, pixel_scale=scale * u.arcsec, hot_pixel_fraction=0.0,
                      dead_pixel_fraction=0.0, vignetting=0.0)
    pointing = SkyCoord(40.0 * u.deg, 12.0 * u.deg)
    zp = 25.0
    t = Time("2026-12-01T03:00:00")
    mag = zp - 2.5 * np.log10(nucleus_flux_e / exptime) if nucleus_flux_e > 0 else None
    # put the nucleus off the pixel grid: about (+0.3, -0.2) pixel from the detector centre
    off = SkyCoord(pointing.ra + 0.3 * scale / 3600 / np.cos(np.deg2rad(12.0)) * u.deg,
                   pointing.dec + 0.2 * scale / 3600 * u.deg)
    comet = CometSpec(ra=off.ra, dec=off.dec,
                      nucleus_mag=None if mag is None else mag * u.mag,
                      coma_k=coma_k_e / exptime * u.electron / u.s)
    stars = None
    if n_stars:
        stars = make_star_field(pointing, 0.6 * shape[0] * scale / 3600 * u.deg,
                                n_stars=n_stars, mag_range=(13.0, 16.0), rng=seed)
    scene = SceneSpec(pointing=pointing, stars=stars, comet=comet, zero_point=zp,
                      sky_rate=sky_rate * u.electron / u.s,
                      seeing=Seeing(fwhm=fwhm_pix * scale * u.arcsec))
    _, truth = render_frame("science", inst, time=t, exptime=exptime * u.s, scene=scene,
                            detector=DetectorSpec(cosmic_rays=False), rng=seed)
    return truth


@pytest.fixture
def make_frame():
    return frame_from_signal


@pytest.fixture
def oracle():
    return oracle_comet


@pytest.fixture
def scenario():
    return scenario_comet_frame


@pytest.fixture
def k_for_fraction():
    return coma_k_for_fraction


@pytest.fixture(scope="session")
def star_frame():
    """A scenario frame of stars only (Moffat FWHM 4 px, β = 3), noise added, and its truth."""
    truth = scenario_comet_frame(nucleus_flux_e=0.0, coma_k_e=0.0, n_stars=60, seed=4,
                                 shape=(241, 241))
    frame = frame_from_signal(truth.signal, np.random.default_rng(4))
    xy = np.column_stack([truth.stars["x"], truth.stars["y"]])
    return frame, xy, truth
