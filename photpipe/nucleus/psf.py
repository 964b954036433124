"""The PSF of a frame, measured from its field stars: analytic Moffat or empirical ePSF."""

import warnings
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np
from astropy import units as u
from photutils.psf import ImagePSF
from scipy.optimize import least_squares

from photpipe._quantity import as_positive_value
from photpipe._warnings import PoorResultWarning
from photpipe.frames.types import CalibratedFrame
from photpipe.models.moffat import moffat_pixel_image, moffat_surface

from ._comet_light import comet_light_image, comet_light_profile
from ._fit_steps import find_peak
from ._residuals import shared_residual_z
from ._stamps import cut_star_stamps, fit_linear, sky_plane
from .psf_epsf import build_epsf_image
from .psf_joint import STAR_OUTLIER_FACTOR
from .psf_moffat import fit_moffat_shape

__all__ = ["PSFModel", "measure_psf", "PSF_BUILDERS", "EPSF_MARGIN", "SHARED_RESIDUAL_SIGMA",
           "STAR_OUTLIER_FACTOR"]

#: The ePSF is chosen only when its residual χ² per degree of freedom is this factor below the
#: Moffat's: it is built from the same stars it is scored on and so partly fits their noise.
EPSF_MARGIN = 0.95

#: With ``epsf="needed"`` the ePSF is built only when the Moffat leaves a residual pattern
#: common to the stars more significant than this many standard deviations.
SHARED_RESIDUAL_SIGMA = 3.0

_EPSF_WHEN = ("needed", "always")


@dataclass(frozen=True, eq=False)
class PSFModel:
    """A frame's point-spread function.

    Attributes
    ----------
    method : str
        ``"moffat"``, ``"epsf"`` or ``"fallback"`` (analytic, from a supplied FWHM).
    fwhm_major_pix : float
        FWHM along the major axis, pixels (for an ePSF: of a Moffat fitted to its image).
    beta : float
        Moffat index.
    ellipticity : float
        1 - b/a.
    angle_deg : float
        Major axis, degrees counter-clockwise from +x.
    n_stars : int
        Stars used.
    flags : tuple of str
        ``psf_fallback`` and the like.
    scores : dict
        Residual χ²/dof of the star fits for each method tried.
    image : ndarray or None
        Oversampled ePSF (``method == "epsf"``).
    oversampling : int
        Oversampling of ``image``.
    shared_residual_z : float
        Significance (standard deviations) of the residual shape the Moffat leaves around all
        the stars; NaN when not measured.
    trail : tuple of float
        (dx, dy), pixels: the motion of the source across the detector during the exposure.
        The model is the core PSF averaged along the segment from -trail/2 to +trail/2
        (`with_trail`); (0, 0) for the core alone.
    fwhm_err_pix, beta_err : float
        Standard errors of the Moffat FWHM and β from the scatter of the star-by-star fits
        (NaN when not measured).
    star_shapes : ndarray, shape (n, 4), or None
        Each star's own Moffat fit (FWHM, β, q1, q2): the nucleus fit resamples them to carry
        the PSF's uncertainty into its error.
    """

    method: str
    fwhm_major_pix: float
    beta: float = 3.0
    ellipticity: float = 0.0
    angle_deg: float = 0.0
    n_stars: int = 0
    flags: tuple = ()
    scores: dict = field(default_factory=dict)
    image: np.ndarray | None = None
    oversampling: int = 1
    shared_residual_z: float = np.nan
    trail: tuple = (0.0, 0.0)
    fwhm_err_pix: float = np.nan
    beta_err: float = np.nan
    star_shapes: np.ndarray | None = field(default=None, repr=False)

    @property
    def fwhm_pix(self):
        """Geometric-mean FWHM sqrt(FWHM_major FWHM_minor), pixels."""
        return self.fwhm_major_pix * np.sqrt(1.0 - self.ellipticity)

    @property
    def trail_length_pix(self):
        """Length of the trail, pixels."""
        return float(np.hypot(*self.trail))

    @property
    def half_size(self):
        """Half side (pixels) of the square where the PSF is rendered (the trail included)."""
        extra = int(np.ceil(0.5 * self.trail_length_pix))
        if self.image is not None:
            return self.image.shape[0] // (2 * self.oversampling) + extra
        return int(np.clip(np.ceil(5.0 * self.fwhm_major_pix), 8, 40)) + extra

    def trail_offsets(self, *, step=0.2):
        """Offsets (dx, dy) along the trail, midpoints of ``n`` equal parts (n = 1 untrailed).

        A uniform motion spreads the light evenly along the segment; the midpoint rule with
        parts of at most ``step`` pixels averages the core PSF over it to far better than
        1e-3 for a FWHM of 2 pixels or more (the core is smooth on that scale).

        Examples
        --------
        >>> PSFModel.from_moffat(3.0).with_trail((1.0, 0.0)).trail_offsets(step=0.5)[:, 0].tolist()
        [-0.25, 0.25]
        """
        n = max(1, int(np.ceil(self.trail_length_pix / step)))
        t = (np.arange(n) + 0.5) / n - 0.5
        return np.column_stack([t * self.trail[0], t * self.trail[1]])

    def with_trail(self, trail):
        """The same core PSF smeared along ``trail`` = (dx, dy) pixels (replacing any trail).

        Examples
        --------
        >>> PSFModel.from_moffat(3.0).with_trail((3.0, 4.0)).trail_length_pix
        5.0
        """
        dx, dy = (float(v) for v in trail)
        if not (np.isfinite(dx) and np.isfinite(dy)):
            msg = f"PSF 'trail' must be finite, got {trail}"
            raise ValueError(msg)
        return replace(self, trail=(dx, dy))

    @cached_property
    def _moffat_norm(self):
        h = self.half_size
        return float(moffat_pixel_image((2 * h + 1, 2 * h + 1), h, h, **self._moffat_args()).sum())

    @cached_property
    def _image_psf(self):
        m = ImagePSF(self.image, oversampling=self.oversampling)
        h = self.half_size
        yy, xx = np.mgrid[-h:h + 1, -h:h + 1]
        norm = float(np.sum(m.evaluate(xx, yy, 1.0, 0.0, 0.0)))
        return m, norm

    def _moffat_args(self):
        return {"fwhm": self.fwhm_major_pix, "beta": self.beta, "ellipticity": self.ellipticity,
                "angle": np.deg2rad(self.angle_deg)}

    def render(self, shape, x0, y0):
        """Unit-flux point source at (x0, y0), integrated over the pixels of an image.

        The flux is normalised within the square of side ``2 * half_size + 1`` (as the kernel
        is), so "flux" means what a large aperture collects.

        Parameters
        ----------
        shape : tuple of int
            (ny, nx) of the image.
        x0, y0 : float
            Position in pixel coordinates (pixel centres at integers).

        Returns
        -------
        image : ndarray, shape (ny, nx)

        Examples
        --------
        >>> psf = PSFModel.from_moffat(3.0, beta=3.0)
        >>> round(float(psf.render((81, 81), 40.3, 39.8).sum()), 3)
        1.0
        """
        ny, nx = shape
        h = self.half_size
        ix, iy = int(np.round(x0)), int(np.round(y0))
        xa, xb = max(ix - h, 0), min(ix + h + 1, nx)
        ya, yb = max(iy - h, 0), min(iy + h + 1, ny)
        out = np.zeros(shape)
        if xb <= xa or yb <= ya:
            return out
        offsets = self.trail_offsets()
        if self.image is None:
            for ox, oy in offsets:
                out[ya:yb, xa:xb] += moffat_pixel_image((yb - ya, xb - xa), x0 + ox - xa,
                                                        y0 + oy - ya, **self._moffat_args())
            out /= self._moffat_norm * len(offsets)
        else:
            m, _ = self._image_psf
            # normalised over the full footprint at this sub-pixel position: interpolating an
            # oversampled ePSF does not keep its sum fixed as the centre moves
            yy, xx = np.mgrid[iy - h:iy + h + 1, ix - h:ix + h + 1]
            stamp = np.zeros(xx.shape)
            for ox, oy in offsets:
                one = m.evaluate(xx - x0 - ox, yy - y0 - oy, 1.0, 0.0, 0.0)
                stamp += one / one.sum()
            stamp /= len(offsets)
            out[ya:yb, xa:xb] = stamp[ya - (iy - h):yb - (iy - h), xa - (ix - h):xb - (ix - h)]
        return out

    def kernel(self, size, *, oversample=1):
        """Centred, unit-sum kernel for convolving pixel-integrated scenes.

        Parameters
        ----------
        size : int
            Side in pixels (odd).
        oversample : int, optional
            Samples per pixel side.

        Returns
        -------
        kernel : ndarray, shape (size * oversample, size * oversample)

        Notes
        -----
        The analytic PSF is sampled at the points (see `moffat_kernel`), averaged along the
        trail when there is one; the ePSF is an
        effective PSF, already integrated over a pixel, so its kernel carries the pixel box once
        more (a variance of 1/12 pixel² per axis, small beside the PSF's).

        Examples
        --------
        >>> k = PSFModel.from_moffat(3.0).kernel(21)
        >>> k.shape, round(float(k.sum()), 12)
        ((21, 21), 1.0)
        """
        if size % 2 != 1:
            msg = f"kernel 'size' must be odd, got {size}"
            raise ValueError(msg)
        n = size * oversample
        c = (np.arange(n) + 0.5) / oversample - size / 2.0
        k = np.zeros((n, n))
        for ox, oy in self.trail_offsets():
            if self.image is None:
                k += moffat_surface(c[None, :] - ox, c[:, None] - oy, **self._moffat_args())
            else:
                m, _ = self._image_psf
                k += np.clip(m.evaluate(c[None, :] - ox, c[:, None] - oy, 1.0, 0.0, 0.0), 0.0,
                             None)
        return k / k.sum()

    @classmethod
    def from_moffat(cls, fwhm, *, beta=3.0, ellipticity=0.0, angle_deg=0.0, method="moffat",
                    n_stars=0, flags=(), scores=None):
        """Analytic Moffat PSF of a given major-axis FWHM (pixels).

        Examples
        --------
        >>> PSFModel.from_moffat(3.2, method="fallback", flags=("psf_fallback",)).flags
        ('psf_fallback',)
        """
        fwhm = float(fwhm)
        if not (np.isfinite(fwhm) and fwhm > 0):
            msg = f"PSF 'fwhm' must be finite and positive, got {fwhm}"
            raise ValueError(msg)
        return cls(method=method, fwhm_major_pix=fwhm, beta=float(beta),
                   ellipticity=float(ellipticity), angle_deg=float(angle_deg), n_stars=n_stars,
                   flags=tuple(flags), scores=dict(scores or {}))

    def to_dict(self):
        """Summary as a plain dict (no image)."""
        return {"method": self.method, "fwhm_pix": float(self.fwhm_pix),
                "trail_x_pix": self.trail[0], "trail_y_pix": self.trail[1],
                "fwhm_err_pix": self.fwhm_err_pix, "beta_err": self.beta_err,
                "fwhm_major_pix": self.fwhm_major_pix, "beta": self.beta,
                "ellipticity": self.ellipticity, "angle_deg": self.angle_deg,
                "n_stars": self.n_stars, "flags": ",".join(self.flags),
                "shared_residual_z": self.shared_residual_z,
                **{f"score_{k}": v for k, v in self.scores.items()}}


def _moffat_from_fit(shape, stamps, trail=(0.0, 0.0)):
    """The Moffat PSF of the joint fit (``shape``: the dict of `fit_moffat_shape`)."""
    psf = PSFModel.from_moffat(shape["fwhm"], beta=shape["beta"],
                               ellipticity=shape["ellipticity"],
                               angle_deg=np.rad2deg(shape["angle"]), n_stars=shape["n_used"])
    return replace(psf, trail=tuple(float(v) for v in trail), fwhm_err_pix=shape["fwhm_err"],
                   beta_err=shape["beta_err"], star_shapes=shape["star_shapes"])


def _moffat_fit_to_image(image, oversampling):
    """Moffat shape of an oversampled ePSF image (for reporting its FWHM and ellipticity)."""
    n = image.shape[0]
    c = (np.arange(n) - (n - 1) / 2.0) / oversampling
    xx, yy = np.meshgrid(c, c)

    def resid(p):
        amp, fwhm, beta, q1, q2 = p
        e = min(float(np.hypot(q1, q2)), 0.9)
        ang = 0.5 * np.arctan2(q2, q1)
        return amp * moffat_surface(xx, yy, fwhm=fwhm, beta=beta, ellipticity=e,
                                    angle=ang).ravel() - image.ravel()

    res = least_squares(resid, [1.0, 3.0, 3.0, 0.0, 0.0],
                        bounds=([0, 0.5, 1.2, -0.6, -0.6], [10, n, 20, 0.6, 0.6]))
    _, fwhm, beta, q1, q2 = res.x
    return float(fwhm), float(beta), float(np.hypot(q1, q2)), float(0.5 * np.arctan2(q2, q1))


def _epsf_from_fit(shape, stamps, trail=(0.0, 0.0)):
    """The empirical PSF: the joint Moffat plus the stars' mean residual (`build_epsf_image`).

    Returns the PSFModel and, for its score, the images made without each star in turn.
    """
    out = build_epsf_image(shape["fit"], stamps)
    fwhm, beta, e, ang = _moffat_fit_to_image(out["image"], out["oversampling"])
    psf = PSFModel(method="epsf", fwhm_major_pix=fwhm, beta=beta, ellipticity=e,
                   angle_deg=float(np.rad2deg(ang)), n_stars=out["n_used"], image=out["image"],
                   oversampling=out["oversampling"])
    return psf, [replace(psf, image=img) for img in out["without"]]


#: PSF builders by name: each takes (shape, stamps, star_trail), ``shape`` being the joint
#: Moffat fit of the stars (`fit_moffat_shape`), and returns a PSFModel (the empirical one also
#: the PSFs made without each star in turn, for its score).
PSF_BUILDERS = {"moffat": _moffat_from_fit, "epsf": _epsf_from_fit}


def _kept(chi2, dof):
    """Stars whose χ²/dof is within `STAR_OUTLIER_FACTOR` times the median of the stars'."""
    red = chi2 / dof
    return red <= STAR_OUTLIER_FACTOR * np.median(red)


def _joint_score(fit):
    """Residual χ²/dof of the joint Moffat fit, and the residual stamps of the stars it counts.

    The joint fit is the stars fitted with the shape held at its best (flux, position and sky
    free): no second fit is needed to score it. Stars with χ²/dof above
    `STAR_OUTLIER_FACTOR` times the median are left out of both.
    """
    keep = _kept(fit.chi2, fit.dof)
    return float(fit.chi2[keep].sum() / fit.dof[keep].sum()), fit.residual[keep]


def _fixed_centre_score(psfs, fit, stamps):
    """Residual χ²/dof of the stars at the joint fit's centres (flux and sky free).

    Star k is scored on ``psfs[k]``, made without it; one rendering and one linear solve per
    star. The empirical PSF is built about those centres, so it is judged at them; the degrees
    of freedom are counted as for the Moffat's.
    """
    chi2 = np.zeros(len(fit.stars))
    for k, i in enumerate(fit.stars):
        st = stamps[i]
        g = np.isfinite(fit.residual[k])
        img = psfs[k].render(st.data.shape, fit.x[k], fit.y[k])[g]
        basis = np.vstack([img, sky_plane(g)])
        coef = fit_linear(basis, st.data[g], st.sigma[g])
        chi2[k] = np.sum(((st.data[g] - coef @ basis) / st.sigma[g]) ** 2)
    keep = _kept(chi2, fit.dof)
    return float(chi2[keep].sum() / fit.dof[keep].sum())


def _fallback(frame_name, fwhm_pix, reason, n_stars):
    if fwhm_pix is None:
        msg = (f"frame {frame_name!r}: cannot measure the PSF ({reason}) and no fallback FWHM "
               "was given")
        raise ValueError(msg)
    warnings.warn(f"frame {frame_name!r}: {reason}; using an analytic Moffat PSF of FWHM "
                  f"{fwhm_pix:.2f} pixels", PoorResultWarning, stacklevel=3)
    return PSFModel.from_moffat(fwhm_pix, beta=3.0, method="fallback", n_stars=n_stars,
                                flags=("psf_fallback",))


def measure_psf(frame, star_xy, *, cutout=25, min_stars=5, methods=("moffat", "epsf"),
                fallback_fwhm=None, pixel_scale=None, fwhm_guess=3.0, exclude_xy=None,
                exclude_radius=15.0, epsf="needed", star_trail=(0.0, 0.0)):
    """Measure a frame's PSF from its field stars and keep the model that fits them best.

    Parameters
    ----------
    frame : `~photpipe.frames.CalibratedFrame`
        Calibrated frame (electrons, sky not subtracted).
    star_xy : array-like, shape (n, 2)
        Star positions (x, y) in pixels, e.g. from the photometry stage's star table.
    cutout : int, optional
        Side of the star stamps in pixels (odd).
    min_stars : int, optional
        Fewer usable stars than this gives the fallback PSF.
    methods : sequence of str, optional
        Keys of `PSF_BUILDERS` to try.
    fallback_fwhm : `~astropy.units.Quantity` ['angle'] or [pix], or float, optional
        FWHM for the analytic fallback (a float is in pixels). Without it, too few stars raise.
    pixel_scale : `~astropy.units.Quantity` [arcsec / pix], optional
        Needed only when ``fallback_fwhm`` is an angle.
    fwhm_guess : float, optional
        Starting FWHM of the star fits, pixels.
    exclude_xy : tuple of float, optional
        A position (the comet) whose surroundings give no PSF stars.
    exclude_radius : float, optional
        Radius around ``exclude_xy`` in pixels.
    epsf : {"needed", "always"}, optional
        With "needed" (the default) and both methods asked for, the ePSF is built only when the
        Moffat leaves a residual shape shared by the stars (more significant than
        ``SHARED_RESIDUAL_SIGMA``, see Notes); "always" builds and scores both.
    star_trail : tuple of float, optional
        (dx, dy), pixels: how far the stars moved on the detector during the exposure (a
        telescope tracking the comet; (0, 0) for sidereal tracking). The stars are fitted as the
        Moffat core averaged along that segment and the core is returned (de-trailed); the
        stamps grow by the trail's length, and the ePSF is not tried (it would hold the trail).

    Returns
    -------
    psf : PSFModel
        The core PSF (no trail); ``scores`` holds the χ²/dof of each method tried.

    Raises
    ------
    TypeError
        If ``frame`` is not a CalibratedFrame.
    ValueError
        If there are too few stars and no fallback FWHM, or a method name or ``epsf`` is
        unknown.

    Notes
    -----
    The Moffat (1969) shape is fitted to all the stars at once (`fit_moffat_shape`: one shape,
    each star's centre, flux and sloping sky, analytic derivatives); that fit is the Moffat's
    score as it stands, since it is the stars refitted with the shape held at its best. The
    empirical PSF is the same Moffat plus a table of the stars' mean residual about it
    (`build_epsf_image`, after Stetson 1987), scored on the stars at the joint fit's centres
    with flux and sky free, each star on the table made without it; it wins only when its
    χ²/dof is below ``EPSF_MARGIN`` times the Moffat's. It is one shape for all the stars, so
    it can do better than the Moffat only by the part of the Moffat's residuals that the stars
    share; when the mean residual over the stars is consistent with their scatter at every
    stamp pixel (`shared_residual_z` within ``SHARED_RESIDUAL_SIGMA``) it could only fit
    noise, which the margin is there to refuse, so by default it is not built. The
    significance is kept as ``shared_residual_z``.

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> from photpipe.frames.types import CalibratedFrame, FrameInfo
    >>> info = FrameInfo("demo.fits", "science", Time("2026-01-01"), 60 * u.s, "R",
    ...                  1 * u.electron / u.adu, 5 * u.electron, 60000 * u.adu, (1, 1), (64, 64))
    >>> data = np.full((64, 64), 100.0, dtype=np.float32)
    >>> frame = CalibratedFrame(info, data, data.copy(), np.zeros((64, 64), np.uint16))
    >>> import warnings
    >>> with warnings.catch_warnings():
    ...     warnings.simplefilter("ignore")
    ...     psf = measure_psf(frame, [], fallback_fwhm=3.0)
    >>> psf.method, psf.flags
    ('fallback', ('psf_fallback',))
    """
    _check_request(frame, methods, epsf)
    fb_pix = _fallback_pixels(fallback_fwhm, pixel_scale)
    cutout, methods, star_trail = _trail_setup(cutout, methods, star_trail)
    stamps, dropped = cut_star_stamps(frame, star_xy, size=cutout, exclude_xy=exclude_xy,
                                      exclude_radius=exclude_radius)
    if exclude_xy is not None:
        stamps = _without_comet_light(frame, stamps, exclude_xy, star_xy, cutout, fwhm_guess)
    if len(stamps) < min_stars:
        return _too_few_stars(frame.name, stamps, dropped, min_stars, fb_pix, fwhm_guess,
                              star_trail)
    candidates, scores, shared_z = _fit_candidates(stamps, methods, fwhm_guess, star_trail, epsf)
    if not candidates:
        return _fallback(frame.name, fb_pix, "no PSF model could be fitted to the stars",
                         len(stamps))
    return _best_model(candidates, scores, shared_z)


def _without_comet_light(frame, stamps, comet_xy, star_xy, cutout, fwhm_guess):
    """The stamps less the comet's light under them (`photpipe.nucleus._comet_light`).

    The comet's centre is its peak within max(8, 3 FWHM) pixels of ``comet_xy`` (a header
    WCS can be several arcsec off, and the coma's curvature at a star goes as ρ^-3); the
    catalogued stars' discs of half a stamp are left out of the annuli.
    """
    if not stamps:
        return stamps
    good = frame.good & np.isfinite(frame.data)
    radius = max(8.0, 3.0 * fwhm_guess)
    cx, cy = (float(v) for v in comet_xy)
    ny, nx = frame.data.shape
    x0, x1 = max(int(cx - radius - 2), 0), min(int(cx + radius + 3), nx)
    y0, y1 = max(int(cy - radius - 2), 0), min(int(cy + radius + 3), ny)
    if x1 > x0 and y1 > y0:
        px, py = find_peak(frame.data[y0:y1, x0:x1], good[y0:y1, x0:x1], cx - x0, cy - y0,
                           radius=radius, fwhm=fwhm_guess)
        cx, cy = px + x0, py + y0
    half = cutout // 2
    reach = np.array([np.hypot(st.x_origin + half - cx, st.y_origin + half - cy)
                      for st in stamps])
    profile = comet_light_profile(frame.data, good, (cx, cy),
                                  r_lo=max(float(reach.min()) - half * np.sqrt(2.0) - 2, 0.0),
                                  r_hi=float(reach.max()) + half * np.sqrt(2.0) + 2,
                                  mask_xy=star_xy, mask_radius=float(half))
    if len(profile[0]) < 2:
        return stamps
    return [replace(st, data=st.data - comet_light_image(profile, st.data.shape,
                                                         (st.x_origin, st.y_origin), (cx, cy)))
            for st in stamps]


def _check_request(frame, methods, epsf):
    """Refuse a frame that is not calibrated, an unknown method or an unknown ``epsf``."""
    if not isinstance(frame, CalibratedFrame):
        msg = f"'frame' must be a CalibratedFrame, got {type(frame).__name__}"
        raise TypeError(msg)
    for name in methods:
        if name not in PSF_BUILDERS:
            msg = f"unknown PSF method {name!r}; known: {sorted(PSF_BUILDERS)}"
            raise ValueError(msg)
    if epsf not in _EPSF_WHEN:
        msg = f"'epsf' must be one of {_EPSF_WHEN}, got {epsf!r}"
        raise ValueError(msg)


def _fallback_pixels(fallback_fwhm, pixel_scale):
    """The fallback FWHM in pixels (None without one)."""
    if fallback_fwhm is None:
        return None
    if isinstance(fallback_fwhm, u.Quantity) and fallback_fwhm.unit.physical_type == "angle":
        if pixel_scale is None:
            msg = "'pixel_scale' is needed to turn an angular 'fallback_fwhm' into pixels"
            raise ValueError(msg)
        scale = as_positive_value(pixel_scale, u.arcsec / u.pix, "pixel_scale")
        return as_positive_value(fallback_fwhm, u.arcsec, "fallback_fwhm") / scale
    return as_positive_value(fallback_fwhm, u.pix, "fallback_fwhm", allow_dimensionless=True)


def _trail_setup(cutout, methods, star_trail):
    """The stamp side, the methods and the trail for stars that moved by ``star_trail``.

    Trailed stars need stamps longer by the trail, and no ePSF (it would hold the trail).
    """
    if cutout % 2 != 1 or cutout < 9:
        msg = f"'cutout' must be an odd number of pixels >= 9, got {cutout}"
        raise ValueError(msg)
    star_trail = tuple(float(v) for v in star_trail)
    trail_len = float(np.hypot(*star_trail))
    if not np.isfinite(trail_len):
        msg = f"'star_trail' must be finite, got {star_trail}"
        raise ValueError(msg)
    if trail_len > 0:
        cutout += 2 * int(np.ceil(0.5 * trail_len))
        methods = tuple(m for m in methods if m != "epsf")
    return cutout, methods, star_trail


def _too_few_stars(frame_name, stamps, dropped, min_stars, fb_pix, fwhm_guess, star_trail):
    """The fallback PSF when fewer than ``min_stars`` stamps are usable."""
    reason = (f"only {len(stamps)} usable PSF stars (need {min_stars}; dropped: "
              + ", ".join(f"{k} {v}" for k, v in dropped.items() if v) + ")")
    if fb_pix is None and stamps:
        # a Moffat from the few stars there are is still better than nothing: flagged
        shape = fit_moffat_shape(stamps, fwhm_guess=fwhm_guess, trail=star_trail)
        fb_pix = shape["fwhm"]
    return _fallback(frame_name, fb_pix, reason, len(stamps))


def _fit_candidates(stamps, methods, fwhm_guess, star_trail, epsf):
    """Each method's PSF from the stars' joint fit, its score, and the Moffat's shared residual.

    The one joint Moffat fit scores the Moffat and tells, by the residual shape the stars share,
    whether the empirical PSF can do better; only then (or when asked) is it built and scored.
    """
    try:
        shape = fit_moffat_shape(stamps, fwhm_guess=fwhm_guess, trail=star_trail)
    except (ValueError, np.linalg.LinAlgError):
        return {}, {}, np.nan
    moffat_score, residuals = _joint_score(shape["fit"])
    shared_z = shared_residual_z(residuals)
    candidates, scores = {}, {}
    if "moffat" in methods:
        candidates["moffat"] = PSF_BUILDERS["moffat"](shape, stamps, star_trail)
        scores["moffat"] = moffat_score
    if "epsf" in methods and (epsf == "always" or "moffat" not in methods
                              or shared_z > SHARED_RESIDUAL_SIGMA):
        try:
            psf, without = PSF_BUILDERS["epsf"](shape, stamps, star_trail)
            scores["epsf"] = _fixed_centre_score(without, shape["fit"], stamps)
            candidates["epsf"] = psf
        except (ValueError, RuntimeError, np.linalg.LinAlgError):
            pass
    return candidates, scores, shared_z


def _best_model(candidates, scores, shared_z):
    """The candidate with the best score (the ePSF's by `EPSF_MARGIN`), with every score."""
    best = min(scores, key=lambda k: scores[k] * (1.0 if k == "epsf" else EPSF_MARGIN))
    chosen = candidates[best]
    return PSFModel(method=chosen.method, fwhm_major_pix=chosen.fwhm_major_pix,
                    beta=chosen.beta, ellipticity=chosen.ellipticity, angle_deg=chosen.angle_deg,
                    n_stars=chosen.n_stars, flags=chosen.flags, scores=scores,
                    image=chosen.image, oversampling=chosen.oversampling,
                    shared_residual_z=shared_z, fwhm_err_pix=chosen.fwhm_err_pix,
                    beta_err=chosen.beta_err, star_shapes=chosen.star_shapes)
