"""Synthetic calibrated frames for the photometry tests, made with photpipe.scenario.

The scenario renders the noise-free signal (sky, Moffat stars, exact 1/ρ coma convolved with the
PSF) and the truth. Here it is turned straight into an ideal calibrated frame: the signal plus
Gaussian noise of variance signal + read noise², with that variance as the variance plane, so the
photometry tests do not depend on the calibration stage.
"""

from dataclasses import dataclass

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.time import Time
from astropy.wcs import WCS

from photpipe.frames.types import CalibratedFrame, FrameInfo, Quality
from photpipe.scenario import (
    CometSpec,
    DetectorSpec,
    HeaderSpec,
    Instrument,
    SceneSpec,
    Seeing,
    make_star_field,
    render_frame,
)

POINTING = SkyCoord(52.0 * u.deg, 18.0 * u.deg)


@dataclass
class Synthetic:
    frame: CalibratedFrame
    stars: object
    geometry: dict
    truth: object
    instrument: Instrument


def make_synthetic(*, shape=(640, 640), pixel_scale=1.0 * u.arcsec, afrho=150 * u.cm,
                   nucleus_mag=None, r_h=1.5 * u.au, delta=1.0 * u.au, phase=30.0 * u.deg,
                   n_stars=150, mag_range=(12.5, 18.5), zero_point=25.0, exptime=60 * u.s,
                   sky_rate=5.0 * u.electron / u.s, fwhm=2.5 * u.arcsec, wcs_offset_pix=(0, 0),
                   wcs_rotation=0 * u.deg, comet_offset_arcsec=(0.0, 0.0), read_noise=8.0,
                   seed=11, header_rotation=None, extra_stars=None, tracking="sidereal",
                   rate=(0.0, 0.0) * u.arcsec / u.h, header_extra=None):
    rng = np.random.default_rng(seed)
    inst = Instrument(shape=shape, pixel_scale=pixel_scale, hot_pixel_fraction=0.0,
                      dead_pixel_fraction=0.0, read_noise=read_noise * u.electron)
    radius = 0.75 * max(shape) * pixel_scale
    stars = make_star_field(POINTING, radius.to(u.deg), n_stars=n_stars, mag_range=mag_range,
                            rng=rng)
    if extra_stars is not None:
        from astropy.table import vstack
        for name in ("ra", "dec"):
            stars[name] = u.Quantity(stars[name], u.deg)
            extra_stars[name] = u.Quantity(extra_stars[name], u.deg)
        stars = vstack([stars, extra_stars])
    comet_pos = POINTING.spherical_offsets_by(comet_offset_arcsec[0] * u.arcsec,
                                              comet_offset_arcsec[1] * u.arcsec)
    comet = None
    if afrho is not None or nucleus_mag is not None:
        comet = CometSpec(ra=comet_pos.ra, dec=comet_pos.dec, nucleus_mag=nucleus_mag,
                          afrho=afrho, r_h=r_h, delta=delta, m_sun=-27.15, ra_rate=rate[0],
                          dec_rate=rate[1])
    scene = SceneSpec(pointing=POINTING, stars=stars, comet=comet, filter="R",
                      zero_point=zero_point, sky_rate=sky_rate, seeing=Seeing(fwhm=fwhm),
                      wcs_rotation=wcs_rotation, tracking=tracking)
    hdul, truth = render_frame("science", inst, time=Time("2026-11-30T04:00:00"),
                               exptime=exptime, scene=scene,
                               detector=DetectorSpec(cosmic_rays=False),
                               header=HeaderSpec(wcs_offset_pix=wcs_offset_pix,
                                                 extra=header_extra), rng=rng)
    header = hdul[0].header
    if header_rotation is not None:
        # write a header WCS rotated with respect to the true one (a small pointing-model error)
        from photpipe.scenario import make_wcs
        header.update(make_wcs(shape, POINTING, pixel_scale, rotation=header_rotation,
                               offset_pix=wcs_offset_pix).to_header())
    signal = truth.signal
    var = signal + read_noise**2
    data = (signal + rng.normal(0.0, 1.0, shape) * np.sqrt(var)).astype(np.float32)
    quality = np.where(truth.saturated, Quality.SATURATED, 0).astype(np.uint16)
    info = FrameInfo(path="night1/sci_0001.fits", kind="science",
                     time_mid=Time("2026-11-30T04:00:00"), exptime=exptime, filter="R",
                     gain=inst.gain, read_noise=read_noise * u.electron,
                     saturation=inst.saturation, binning=(1, 1), shape=shape,
                     object_name="C/2026 Q1", header=header)
    frame = CalibratedFrame(info=info, data=data, variance=var.astype(np.float32),
                            quality=quality, wcs=WCS(header))
    geometry = {"r_h": r_h, "delta": delta, "phase": phase, "elong": 95.0 * u.deg,
                "ra": comet_pos.ra.to(u.deg), "dec": comet_pos.dec.to(u.deg),
                "pa_sun": 250.0 * u.deg, "pa_neg_velocity": 120.0 * u.deg,
                "ra_rate": rate[0].to(u.arcsec / u.h), "dec_rate": rate[1].to(u.arcsec / u.h)}
    return Synthetic(frame=frame, stars=stars, geometry=geometry, truth=truth, instrument=inst)


def measure_recording(*args, **kwargs):
    """Run measure_comet_frame and return (result, list of PhotometryWarning messages)."""
    import warnings

    from photpipe.photometry import PhotometryWarning, measure_comet_frame

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", PhotometryWarning)
        result = measure_comet_frame(*args, **kwargs)
    messages = [str(w.message) for w in caught if issubclass(w.category, PhotometryWarning)]
    others = [w for w in caught if not issubclass(w.category, PhotometryWarning)]
    if others:
        raise AssertionError(f"unexpected warnings: {[str(w.message) for w in others]}")
    return result, messages
