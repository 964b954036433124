"""Star lists of invented fields with a known TAN WCS, for the plate-solving tests.

A field is the catalogue (uniform on the sphere in a cone around the true centre, magnitudes
from a rising number-magnitude law, log N ∝ 0.3 m, common practice) and the detections a
frame of it would give: the stars inside the frame through the true WCS, with centroid noise,
some lost, some spurious, ranked by a magnitude with scatter (colour differences between the
catalogue band and the filter).
"""

import math

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.wcs import WCS


def true_wcs(center, shape, scale_arcsec, rotation_rad, mirrored):
    ny, nx = shape
    s = scale_arcsec / 3600.0
    th = rotation_rad
    cd = np.array([[-s * np.cos(th), s * np.sin(th)], [s * np.sin(th), s * np.cos(th)]])
    if mirrored:
        cd[:, 0] *= -1.0
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [center.ra.deg, center.dec.deg]
    w.wcs.crpix = [nx / 2 + 0.5, ny / 2 + 0.5]
    w.wcs.cd = cd
    w.wcs.set()
    return w


def _magnitudes(rng, n, lo=11.0, hi=18.0):
    a = 0.3 * np.log(10)
    return np.log(np.exp(a * lo) + rng.uniform(0, 1, n) * (np.exp(a * hi) - np.exp(a * lo))) / a


def make_field(rng, *, n_in=30, shape=(1024, 1024), scale_arcsec=1.0, offset_arcmin=15.0,
               centroid_noise=0.08, lost=0.2, spurious=0.2, mag_scatter=0.4):
    """Return a dict: det_xy, ra, dec (catalogue, brightest first), guess, wcs, n_in, mirrored."""
    ny, nx = shape
    center = SkyCoord(rng.uniform(0, 360) * u.deg, rng.uniform(-75, 75) * u.deg)
    mirrored = bool(rng.random() < 0.5)
    wcs = true_wcs(center, shape, scale_arcsec, rng.uniform(0, 2 * np.pi), mirrored)
    half = 0.5 * math.hypot(nx, ny) * scale_arcsec / 3600.0
    radius = half + offset_arcmin / 60.0 + 0.05
    frame_area = nx * ny * (scale_arcsec / 3600.0) ** 2
    n_all = int(n_in * math.pi * radius ** 2 / frame_area)
    sep = np.arccos(rng.uniform(np.cos(np.radians(radius)), 1.0, n_all))
    pos = center.directional_offset_by(rng.uniform(0, 2 * np.pi, n_all) * u.rad, sep * u.rad)
    mag = _magnitudes(rng, n_all)
    order = np.argsort(mag)
    ra, dec, mag = pos.ra.deg[order], pos.dec.deg[order], mag[order]
    x, y = wcs.world_to_pixel_values(ra, dec)
    inside = (x >= 0) & (x < nx) & (y >= 0) & (y < ny)
    seen = inside & (rng.random(n_all) > lost)
    n_seen = int(seen.sum())
    n_false = int(round(spurious * n_seen))
    xd = np.r_[x[seen] + rng.normal(0, centroid_noise, n_seen), rng.uniform(0, nx, n_false)]
    yd = np.r_[y[seen] + rng.normal(0, centroid_noise, n_seen), rng.uniform(0, ny, n_false)]
    md = np.r_[mag[seen] + rng.normal(0, mag_scatter, n_seen), _magnitudes(rng, n_false)]
    rank = np.argsort(md)
    # the true centre is at most offset_arcmin from the guess
    guess = center.directional_offset_by(
        rng.uniform(0, 2 * np.pi) * u.rad, offset_arcmin * np.sqrt(rng.uniform()) * u.arcmin)
    return {"det_xy": np.column_stack([xd[rank], yd[rank]]), "ra": ra, "dec": dec,
            "guess": guess, "wcs": wcs, "n_in": int(inside.sum()), "mirrored": mirrored}


def largest_difference_arcsec(wcs_a, wcs_b, shape):
    """Largest sky distance between two WCS over a 5 x 5 grid of the frame."""
    ny, nx = shape
    xx, yy = np.meshgrid(np.linspace(0, nx - 1, 5), np.linspace(0, ny - 1, 5))
    a = SkyCoord(*wcs_a.pixel_to_world_values(xx.ravel(), yy.ravel()), unit="deg")
    b = SkyCoord(*wcs_b.pixel_to_world_values(xx.ravel(), yy.ravel()), unit="deg")
    return float(np.max(a.separation(b).arcsec))
