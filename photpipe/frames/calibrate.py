"""Calibrating a science frame: bias, dark, flat, electrons, variance and quality planes."""

import functools
import os
import re
import warnings

import numpy as np
from astropy import units as u
from astropy.io import fits
from astropy.wcs import WCS, FITSFixedWarning

from ._fitsfile import stored_image
from .cosmics import find_cosmic_rays
from .errors import FrameError
from .ingest import read_frame_info
from .noise import DIGITISATION_SIGMA_ADU
from .types import CalibratedFrame, FrameInfo, Quality

__all__ = ["calibrate_frame", "prepare_calibration", "apply_calibration", "Prepared"]


class Prepared:
    """Per-pixel factors of one (bias, dark, flat, exposure, detector) combination.

    They depend only on the masters, the exposure time and the detector, so they are computed
    once per process and reused for every frame of the same exposure.

    Attributes
    ----------
    gain : float
        ``G`` in electron/adu.
    offset : ndarray
        ``bias + dark_rate * t`` in adu.
    gain_over_flat : ndarray
        ``G / F`` (NaN where the flat is unusable).
    poisson_factor : ndarray
        ``G / F**2``: variance in electron**2 per adu of signal.
    constant_var : ndarray
        Variance terms independent of the frame's signal, in electron**2 (see `apply_calibration`).
    flat_relvar : ndarray
        ``var(F) / F**2``.
    quality : ndarray of uint16
        Quality bits of the masters.
    """

    def __init__(self, bias, bias_var, dark_rate, dark_var, flat, flat_var, quality, *,
                 exptime, gain, read_noise, dark_exptime=None):
        t, g = float(exptime), float(gain)
        if dark_rate is None:
            dark_rate = np.zeros_like(bias)
            offset_var = bias_var
        else:
            # offset = (1 - t/t_d) B + (t/t_d) mean(dark frames): the master bias enters twice,
            # with opposite signs, so its noise is counted once with that weight. The dark
            # master's variance includes the bias term var_B / t_d**2, taken out here.
            t_d = float(dark_exptime)
            own = np.maximum(dark_var - bias_var / t_d**2, 0.0)
            offset_var = (1.0 - t / t_d) ** 2 * bias_var + t**2 * own
        dark_adu = dark_rate * t
        usable = np.isfinite(flat) & (flat > 0) & np.isfinite(bias) & np.isfinite(dark_adu)
        f = np.where(usable, flat, np.nan).astype(np.float32)
        self.gain = g
        self.offset = (bias + dark_adu).astype(np.float32)
        self.gain_over_flat = (g / f).astype(np.float32)
        self.poisson_factor = (g / f**2).astype(np.float32)
        const = (g * np.maximum(dark_adu, 0.0) + float(read_noise) ** 2
                 + (g * DIGITISATION_SIGMA_ADU) ** 2 + g**2 * offset_var)
        self.constant_var = (const / f**2).astype(np.float32)
        self.flat_relvar = (flat_var / f**2).astype(np.float32)
        q = np.asarray(quality, np.uint16).copy()
        q[~usable] |= np.uint16(Quality.NONFINITE)
        self.quality = q
        for arr in (self.offset, self.gain_over_flat, self.poisson_factor, self.constant_var,
                    self.flat_relvar, self.quality):
            arr.setflags(write=False)


@functools.lru_cache(maxsize=2)
def _prepared_cached(bias_path, dark_path, flat_path, exptime, gain, read_noise, dark_exptime,
                     stamps):
    from .masters import load_master

    bias = load_master(bias_path)
    dark = None if dark_path is None else load_master(dark_path)
    flat = load_master(flat_path)
    quality = bias.quality | flat.quality
    if dark is not None:
        quality = quality | dark.quality
    return Prepared(bias.value, bias.variance, None if dark is None else dark.value,
                    None if dark is None else dark.variance, flat.value, flat.variance,
                    quality, exptime=exptime, gain=gain, read_noise=read_noise,
                    dark_exptime=dark_exptime)


def prepare_calibration(bias, dark, flat, *, exptime, gain, read_noise):
    """The `Prepared` factors for master files ``bias``, ``dark`` (or None), ``flat``.

    Cached per process on the file names and modification times, the exposure and the detector
    values (two combinations are kept: about 90 MB each for a 2048x2048 detector).
    """
    paths = [m.path for m in (bias, dark, flat) if m is not None]
    try:
        stamps = tuple(os.stat(p).st_mtime_ns for p in paths)
    except OSError as exc:
        raise FrameError(exc.filename, "master file is missing") from exc
    return _prepared_cached(bias.path, None if dark is None else dark.path, flat.path,
                            float(exptime), float(gain), float(read_noise),
                            None if dark is None else dark.key[3] / 1000.0, stamps)


def apply_calibration(raw, prepared, *, saturation):
    r"""Calibrate raw adu into electrons with variance and quality planes.

    Parameters
    ----------
    raw : ndarray, shape (ny, nx)
        Raw frame in adu.
    prepared : Prepared
        Factors from the masters.
    saturation : float
        Raw level (adu) at or above which a pixel is SATURATED.

    Returns
    -------
    data, variance : ndarray of float32
        Electrons and electron**2.
    quality : ndarray of uint16

    Notes
    -----
    With ``x = raw - B - R t`` (bias ``B``, dark rate ``R``, exposure ``t``), gain ``G`` and
    normalised flat ``F``:

    .. math::

        d = G x / F, \qquad
        \sigma_d^2 = \frac{G \max(x, 0) + G \max(R t, 0) + N_R^2 + G^2\sigma_f^2
                     + G^2 \sigma_o^2}{F^2} + d^2 \frac{\sigma_F^2}{F^2}

    with, in order, the Poisson noise of the collected source, sky and dark electrons, the read
    noise, the digitisation noise (sigma_f = 1/sqrt(12) adu) and the noise of the masters,
    propagated to first order; per pixel these are the terms of the CCD equation (Merline &
    Howell 1995). The dark electrons' Poisson term uses the master's rate, not the noisy frame.
    :math:`\sigma_o^2 = (1 - t/t_d)^2 \sigma_B^2 + t^2 \sigma_{R,own}^2` is the variance of the
    subtracted offset ``B + R t`` for a rate measured from darks of exposure ``t_d``: the master
    bias enters the rate and the offset with opposite signs, so its noise is counted once with
    that weight (``\sigma_{R,own}`` is the rate's variance without the bias's share).
    """
    data, var, quality, _ = _apply(raw, prepared, saturation)
    return data, var, quality


#: Rows per block in `_apply`: a block of each plane (a few hundred kB) stays in the CPU cache
#: through all the passes, so the whole frame crosses main memory about once.
_BLOCK_PIXELS = 1 << 16


def _apply(raw, prepared, saturation, *, bscale=1.0, bzero=0.0):
    """Calibrate ``raw`` (physical adu = ``raw * bscale + bzero``) block by block of rows."""
    ny, nx = raw.shape
    data = np.empty((ny, nx), np.float32)
    var = np.empty((ny, nx), np.float32)
    quality = np.empty((ny, nx), np.uint16)
    rows = max(1, _BLOCK_PIXELS // max(nx, 1))
    sat = np.float32(saturation) if np.isfinite(saturation) else None
    inv_gain = np.float32(1.0 / prepared.gain)
    check_finite = raw.dtype.kind == "f"
    zero = np.float32(0.0)
    buf = np.empty((rows, nx), np.float32)
    mask = np.empty((rows, nx), bool)
    n_saturated = 0
    for r0 in range(0, ny, rows):
        r1 = min(ny, r0 + rows)
        d, v, q = data[r0:r1], var[r0:r1], quality[r0:r1]
        x, m = buf[: r1 - r0], mask[: r1 - r0]
        # adu: stored value (any dtype, any byte order) to native float32 in the same pass as
        # BSCALE/BZERO; exact for 16-bit integers
        if bscale != 1.0:
            np.multiply(raw[r0:r1], np.float32(bscale), out=x, dtype=np.float32,
                        casting="unsafe")
            x += np.float32(bzero)
        elif bzero != 0.0:
            np.add(raw[r0:r1], np.float32(bzero), out=x, dtype=np.float32, casting="unsafe")
        else:
            np.copyto(x, raw[r0:r1], casting="unsafe")
        np.copyto(q, prepared.quality[r0:r1])
        if sat is not None:
            np.greater_equal(x, sat, out=m)
            k = int(np.count_nonzero(m))
            if k:
                n_saturated += k
                np.bitwise_or(q, np.uint16(Quality.SATURATED), out=q, where=m)
        if check_finite:
            np.isfinite(x, out=m)
            np.logical_not(m, out=m)
            np.bitwise_or(q, np.uint16(Quality.NONFINITE), out=q, where=m)
        np.subtract(x, prepared.offset[r0:r1], out=d)
        gof = prepared.gain_over_flat[r0:r1]
        d *= gof
        # Poisson term G max(x, 0) / F² = max(d, 0) (G/F) / G: from the block of G/F already in
        # cache, instead of reading a G/F² plane from memory
        np.maximum(d, zero, out=v)
        v *= gof
        v *= inv_gain
        v += prepared.constant_var[r0:r1]
        np.square(d, out=x)
        x *= prepared.flat_relvar[r0:r1]
        v += x
    return data, var, quality, n_saturated


#: Header keywords of the primary (unlettered) celestial WCS and its SIP / TPV distortions
#: (Greisen & Calabretta 2002, A&A 395, 1061; Calabretta & Greisen 2002, A&A 395, 1077;
#: Shupe et al. 2005, ASP Conf. Ser. 347, 491). Only these are handed to WCS: formatting the
#: whole header for wcslib cost more than the rest of reading a frame.
_WCS_KEYWORD = re.compile(r"(WCSAXES|CTYPE\d|CRVAL\d|CRPIX\d|CDELT\d|CUNIT\d|CROTA\d|CD\d_\d"
                          r"|PC\d_\d|PV\d_\d+|PS\d_\d+|LONPOLE|LATPOLE|RADESYS|RADECSYS"
                          r"|EQUINOX|EPOCH|NAXIS\d?|WCSNAME|MJDREF[IF]?|DATEREF|MJD-OBS|DATE-OBS"
                          r"|[AB]P?_ORDER|[AB]P?_\d+_\d+|[AB]P?_DMAX)")


def _wcs_header(header):
    """The WCS keywords of ``header``, as a new small header."""
    out = fits.Header()
    for card in header.cards:
        if _WCS_KEYWORD.fullmatch(card.keyword):
            out.append(card)
    return out


def _read_wcs(header):
    try:
        with warnings.catch_warnings():
            # astropy reports header keywords it normalised (dates, units); not a problem here
            warnings.simplefilter("ignore", FITSFixedWarning)
            wcs = WCS(_wcs_header(header), naxis=2)
    except Exception as exc:  # noqa: BLE001 - any unreadable WCS means "no WCS"
        return None, f"header WCS unreadable ({type(exc).__name__}: {exc})"
    if not wcs.has_celestial:
        return None, "no celestial WCS in the header"
    return wcs.celestial, None


def calibrate_frame(frame, masters, *, detect_cosmics=True, cosmic_method="lacosmic",
                    cosmic_options=None, kind_map=None, max_saturated_fraction=0.5):
    """Calibrate one science frame with a night's masters.

    Parameters
    ----------
    frame : FrameInfo or str or path-like
        The raw frame (a path is read with `read_frame_info`).
    masters : MasterSet
        From `build_masters`; the masters are chosen by the rules of
        :mod:`photpipe.frames.plan`.
    detect_cosmics : bool, optional
        Flag cosmic-ray hits (COSMIC_RAY bit). The data values are left as they are.
    cosmic_method : str, optional
        Key of `~photpipe.frames.cosmics.COSMIC_METHODS`.
    cosmic_options : dict, optional
        Passed to the cosmic-ray method (for L.A.Cosmic: ``sigclip``, ``objlim``, ...).
    kind_map : KindMap, optional
        Used when ``frame`` is a path.
    max_saturated_fraction : float, optional
        A frame with a larger fraction of saturated pixels is refused.

    Returns
    -------
    CalibratedFrame
        ``data`` in electrons over the exposure (float32), ``variance`` in electron**2,
        ``quality`` bits, ``wcs`` from the header, ``history`` of the steps.

    Raises
    ------
    FrameError
        No matching masters, unreadable data, a shape that differs from the masters, or too
        many saturated pixels.

    Notes
    -----
    See `apply_calibration` for the equations. Quality bits: the masters' BAD, HOT,
    LOW_FLAT and NONFINITE bits, SATURATED where the raw value is at or above SATURATE,
    COSMIC_RAY from L.A.Cosmic (van Dokkum 2001, PASP 113, 1420). Pixels where the flat is
    zero, negative or not finite get NaN data and variance.
    """
    info = frame if isinstance(frame, FrameInfo) else read_frame_info(frame, kind_map=kind_map)
    bias, dark, flat, flags = masters.choose(info)
    gain = info.gain.to_value(u.electron / u.adu)
    read_noise = info.read_noise.to_value(u.electron)
    t = info.exptime.to_value(u.s)
    prepared = prepare_calibration(bias, dark, flat, exptime=t, gain=gain,
                                   read_noise=read_noise)
    saturation = info.saturation.to_value(u.adu)
    with stored_image(info.path, sections=info.sections) as (raw, bscale, bzero):
        if raw.shape != tuple(info.shape):
            raise FrameError(info.path, f"image shape {raw.shape} differs from its header's "
                                        f"{tuple(info.shape)}")
        if prepared.offset.shape != raw.shape:
            raise FrameError(info.path, f"image shape {raw.shape} differs from the masters' "
                                        f"{prepared.offset.shape}")
        size = raw.size
        data, var, quality, n_sat = _apply(raw, prepared, saturation, bscale=bscale,
                                           bzero=bzero)
    frac = n_sat / size
    if frac >= 1.0:
        raise FrameError(info.path, f"every pixel is saturated (raw >= {saturation:g} adu)")
    if frac > max_saturated_fraction:
        raise FrameError(info.path, f"{100 * frac:.1f}% of pixels are saturated (raw >= "
                                    f"{saturation:g} adu), more than the "
                                    f"{100 * max_saturated_fraction:g}% allowed")
    history = [f"bias: subtracted {bias.describe()}"]
    if dark is None:
        history.append("dark: none available, dark current not removed (flag no_dark)")
    else:
        dt = dark.key[3] / 1000.0
        how = f"rate scaled from {dt:g} s to {t:g} s" if "dark_scaled" in flags else \
            f"rate times {t:g} s"
        history.append(f"dark: subtracted {dark.describe()}, {how}")
    history.append(f"flat: divided by {flat.describe()}")
    history.append(f"units: times gain {gain:g} electron/adu -> electrons; variance from "
                   f"Poisson + read noise {read_noise:g} electron + digitisation + masters")
    history.append(f"saturated: {n_sat} pixels at or above {saturation:g} adu")
    if detect_cosmics:
        ignore = quality != 0
        saturated = (quality & np.uint16(Quality.SATURATED)) > 0
        hits = find_cosmic_rays(data, var, ignore, read_noise=read_noise, saturated=saturated,
                                method=cosmic_method, **dict(cosmic_options or {}))
        quality[hits] |= np.uint16(Quality.COSMIC_RAY)
        history.append(f"cosmic rays: {int(hits.sum())} pixels flagged by {cosmic_method}"
                       + (f" {dict(cosmic_options)}" if cosmic_options else ""))
    wcs, why = _read_wcs(info.header)
    if why:
        history.append(f"wcs: {why}")
    for flag in flags:
        history.append(f"flag: {flag}")
    history.append(f"raw: {os.path.basename(info.path)}")
    return CalibratedFrame(info=info, data=data, variance=var, quality=quality, wcs=wcs,
                           history=history, flags=tuple(flags))
