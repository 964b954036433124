"""The options of the nucleus fit: as given (`FitOptions`) and checked against the frame.

`fit_nucleus` takes its tuning keywords by name (the campaign passes the ``[nucleus]`` keys) and
sorts them into one `FitOptions`; `checked_options` turns them, with the frame, the PSF and the
zero point, into the plain floats the fit's steps use.
"""

import dataclasses
import inspect
from dataclasses import dataclass

import numpy as np
from astropy import units as u

from photpipe._quantity import as_positive_value, as_value
from photpipe.frames.types import CalibratedFrame

from .psf import PSFModel

__all__ = ["FitOptions", "DETECTION_SIGMA", "checked_options"]

#: Default significance F/σ_F below which the nucleus is an upper limit. At 3σ an honest error
#: bar calls a pure coma a nucleus in 0.13 % of frames (the one-sided normal tail, Abramowitz
#: & Stegun 1964, 26.2.17), and a limit is 3σ above the estimate (common practice).
DETECTION_SIGMA = 3.0


@dataclass(frozen=True)
class FitOptions:
    """How `~photpipe.nucleus.fit_nucleus` fits (its keywords by name, with their defaults).

    Attributes
    ----------
    gamma : "free" or float
        Coma index: fitted within `GAMMA_BOUNDS`, or held fixed (1 for a steady-state coma).
    cutout : int
        Side of the fitted box, pixels (odd).
    bootstrap : int
        Residual-bootstrap refits (0: none). When run, the larger of its scatter and the adopted
        error is reported.
    modulation : int
        Highest azimuthal order of the coma modulation (0 for an axisymmetric coma).
    max_shift : float
        Largest move of the nucleus from the start found within ``search_radius``, pixels.
    search_radius : float or None
        Radius around (x0, y0) searched for the comet's peak, pixels (default max(3 FWHM, 8)).
    detection_sigma : float
        Significance F/σ_F below which the nucleus is an upper limit of max(F, 0) +
        ``detection_sigma`` σ_F (default `DETECTION_SIGMA`).
    fraction_radius : float
        Radius, in FWHM, of the circle in which ``nucleus_fraction`` is measured.
    star_mask_radius : float or None
        Radius of the star masks, pixels (default 3 FWHM).
    profile : bool
        Also run the 1-D profile fit.
    max_nfev : int
        Evaluation budget of the main fit; running out flags ``no_convergence``.
    """

    gamma: object = "free"
    cutout: int = 101
    bootstrap: int = 0
    modulation: int = 0
    max_shift: float = 2.0
    search_radius: float | None = None
    detection_sigma: float = DETECTION_SIGMA
    fraction_radius: float = 1.0
    star_mask_radius: float | None = None
    profile: bool = True
    max_nfev: int = 400

    @classmethod
    def from_keywords(cls, **keywords):
        """Options from keywords by name.

        Raises
        ------
        TypeError
            A keyword that is not an option (named, with the known ones).

        Examples
        --------
        >>> FitOptions.from_keywords(gamma=1.0).cutout
        101
        """
        known = [f.name for f in dataclasses.fields(cls)]
        unknown = sorted(set(keywords) - set(known))
        if unknown:
            msg = f"unknown nucleus fit option(s) {unknown}; known: {known}"
            raise TypeError(msg)
        return cls(**keywords)


def option_parameters():
    """The options as keyword-only signature parameters, with their defaults."""
    return [inspect.Parameter(f.name, inspect.Parameter.KEYWORD_ONLY, default=f.default)
            for f in dataclasses.fields(FitOptions)]


@dataclass(frozen=True)
class Checked:
    """Checked options of one fit (plain floats), with the frame's name, scale and zero point."""

    name: str
    scale: float
    exptime: float
    zp: float | None
    zp_err: float
    free_gamma: bool
    gamma: float
    cutout: int
    modulation: int
    max_shift: float
    search_radius: float
    detection_sigma: float
    fraction_radius: float
    star_radius: float
    max_nfev: int


def checked_options(frame, psf, x0, y0, *, pixel_scale, zero_point, zero_point_err, options):
    """The options of one fit checked at the edge, as plain floats (`Checked`)."""
    gamma, cutout, detection_sigma = options.gamma, options.cutout, options.detection_sigma
    search_radius, star_mask_radius = options.search_radius, options.star_mask_radius
    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    if not isinstance(psf, PSFModel):
        msg = f"'psf' must be a PSFModel, got {type(psf).__name__}"
        raise TypeError(msg)
    name = frame.name
    scale = as_positive_value(pixel_scale, u.arcsec / u.pix, "pixel_scale")
    x0 = as_value(x0, u.pix, "x0", allow_dimensionless=True)
    y0 = as_value(y0, u.pix, "y0", allow_dimensionless=True)
    if not (np.isfinite(x0) and np.isfinite(y0)):
        msg = f"frame {name!r}: nucleus position must be finite, got ({x0}, {y0})"
        raise ValueError(msg)
    if not isinstance(cutout, (int, np.integer)) or cutout % 2 != 1 or cutout < 21:
        msg = f"'cutout' must be an odd integer >= 21, got {cutout!r}"
        raise ValueError(msg)
    free_gamma = isinstance(gamma, str)
    if free_gamma and gamma != "free":
        msg = f"'gamma' must be 'free' or a number in (0, 2), got {gamma!r}"
        raise ValueError(msg)
    if not free_gamma and not 0.0 < float(gamma) < 2.0:
        msg = f"'gamma' must lie in (0, 2), got {gamma}"
        raise ValueError(msg)
    if not (np.isfinite(detection_sigma) and detection_sigma > 0):
        msg = f"'detection_sigma' must be positive, got {detection_sigma}"
        raise ValueError(msg)
    zp = None if zero_point is None else as_value(zero_point, u.mag, "zero_point",
                                                  allow_dimensionless=True)
    if zp is not None and not np.isfinite(zp):
        zp = None
    zp_err = 0.0 if zero_point_err is None else as_value(zero_point_err, u.mag, "zero_point_err",
                                                         allow_dimensionless=True)
    exptime = as_positive_value(frame.info.exptime, u.s, f"{name}: exptime")
    fwhm = float(psf.fwhm_pix)
    return Checked(
        name=name, scale=scale, exptime=exptime, zp=zp,
        zp_err=float(zp_err) if np.isfinite(zp_err) else 0.0, free_gamma=free_gamma,
        gamma=1.0 if free_gamma else float(gamma), cutout=int(cutout),
        modulation=int(options.modulation), max_shift=float(options.max_shift),
        search_radius=float(max(3.0 * fwhm, 8.0) if search_radius is None else search_radius),
        detection_sigma=float(detection_sigma), fraction_radius=float(options.fraction_radius),
        star_radius=float(3.0 * fwhm if star_mask_radius is None else star_mask_radius),
        max_nfev=int(options.max_nfev))


