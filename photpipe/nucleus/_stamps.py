"""Star stamps cut from a calibrated frame for PSF measurement (private helpers)."""

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares
from scipy.spatial import cKDTree

__all__ = ["StarStamp", "cut_star_stamps", "fit_linear", "fit_profile_to_stamp", "sky_plane"]


@dataclass(frozen=True, eq=False)
class StarStamp:
    """One star's stamp: data and weights, with the stamp's origin in the frame."""

    data: np.ndarray
    sigma: np.ndarray
    good: np.ndarray
    x_origin: int
    y_origin: int
    x_guess: float
    y_guess: float
    sky: float

    @property
    def x_local(self):
        """Star x in stamp coordinates."""
        return self.x_guess - self.x_origin

    @property
    def y_local(self):
        """Star y in stamp coordinates."""
        return self.y_guess - self.y_origin


def cut_star_stamps(frame, star_xy, *, size, min_snr=30.0, max_stars=25, isolation=None,
                    exclude_xy=None, exclude_radius=0.0):
    """Cut stamps around usable stars: inside the frame, isolated, clean core, bright enough.

    Returns the stamps (brightest first) and a dict counting why others were dropped.
    """
    half = size // 2
    ny, nx = frame.data.shape
    xy = np.asarray(star_xy, dtype=float).reshape(-1, 2)
    isolation = size / 2.0 if isolation is None else isolation
    dropped = {"edge": 0, "crowded": 0, "bad_core": 0, "faint": 0, "excluded": 0}
    stamps = []
    snrs = []
    crowded = _crowded(xy, isolation)
    yy, xx = np.mgrid[0:size, 0:size]
    for i, (x, y) in enumerate(xy):
        if not (np.isfinite(x) and np.isfinite(y)):
            dropped["edge"] += 1
            continue
        ix, iy = int(np.round(x)), int(np.round(y))
        if ix - half < 0 or iy - half < 0 or ix + half >= nx or iy + half >= ny:
            dropped["edge"] += 1
            continue
        near = exclude_xy is not None and np.hypot(x - exclude_xy[0], y - exclude_xy[1])
        if exclude_xy is not None and near < exclude_radius:
            dropped["excluded"] += 1
            continue
        if crowded[i]:
            dropped["crowded"] += 1
            continue
        sl = (slice(iy - half, iy + half + 1), slice(ix - half, ix + half + 1))
        data = frame.data[sl].astype(float)
        var = frame.variance[sl].astype(float)
        # the frame's usable pixels, taken on the stamp alone
        good = (frame.quality[sl] == 0) & np.isfinite(data) & np.isfinite(var) & (var > 0)
        r = np.hypot(xx - (x - ix + half), yy - (y - iy + half))
        if not np.all(good[r < 3.0]) or good.mean() < 0.9:
            dropped["bad_core"] += 1
            continue
        ring = good & (r > 0.8 * half)
        sky = float(np.median(data[ring])) if ring.sum() > 5 else float(np.median(data[good]))
        inner = good & (r < 0.6 * half)
        flux = np.sum(data[inner] - sky)
        snr = flux / np.sqrt(np.sum(var[inner]))
        if not np.isfinite(snr) or snr < min_snr:
            dropped["faint"] += 1
            continue
        sigma = np.sqrt(np.where(good, var, 1.0))
        stamps.append(StarStamp(data, sigma, good, ix - half, iy - half, float(x), float(y), sky))
        snrs.append(snr)
    order = np.argsort(snrs)[::-1][:max_stars]
    return [stamps[j] for j in order], dropped


def _crowded(xy, isolation):
    """Whether each star has another within ``isolation`` pixels (finite positions only)."""
    out = np.zeros(len(xy), bool)
    finite = np.all(np.isfinite(xy), axis=1)
    if finite.sum() > 1:
        idx = np.flatnonzero(finite)
        pairs = cKDTree(xy[idx]).query_pairs(np.nextafter(isolation, 0.0), output_type="ndarray")
        out[idx[pairs.ravel()]] = True
    return out


def sky_plane(good):
    """Rows 1, x, y on the usable pixels of a stamp: a sky that may slope.

    Field stars inside a bright coma sit on its 1/ρ light; a flat sky would push the slope into
    the star's wings and bias the PSF's β and FWHM (measured on the named cases: β 2.75 for a
    true 3.0 with a flat sky).
    """
    ny, nx = good.shape
    yy, xx = np.mgrid[0:ny, 0:nx]
    return np.vstack([np.ones(good.sum()), (xx[good] - nx / 2) / nx, (yy[good] - ny / 2) / ny])


def fit_linear(basis, data, sigma):
    """Weighted linear least squares: coefficients a minimising ||(data - a·basis)/sigma||."""
    a = (basis / sigma).T
    coef, *_ = np.linalg.lstsq(a, data / sigma, rcond=None)
    return coef


def fit_profile_to_stamp(stamp, render):
    """Fit flux, sky and position of one star with a fixed PSF shape.

    ``render(shape, x, y)`` gives the unit-flux PSF image. Returns (chi2, dof, x, y, flux,
    residual), ``residual`` being (data - model) / sigma on the stamp, NaN on unusable pixels.
    """
    g = stamp.good
    d = stamp.data[g]
    s = stamp.sigma[g]
    shape = stamp.data.shape
    ones = sky_plane(g)

    def resid(p):
        img = render(shape, p[0], p[1])[g]
        b = np.vstack([img, ones])
        coef = fit_linear(b, d, s)
        return (d - coef @ b) / s

    x0 = np.array([stamp.x_local, stamp.y_local])
    res = least_squares(resid, x0, bounds=(x0 - 2.0, x0 + 2.0), x_scale=0.1, diff_step=1e-3)
    img = render(shape, *res.x)[g]
    coef = fit_linear(np.vstack([img, ones]), d, s)
    chi2 = float(np.sum(res.fun**2))
    residual = np.full(shape, np.nan)
    residual[g] = (d - coef @ np.vstack([img, ones])) / s
    return chi2, d.size - 6, res.x[0], res.x[1], coef[0], residual
