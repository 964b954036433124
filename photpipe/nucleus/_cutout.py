"""Cutting the comet's box out of a frame, masking bad pixels and field stars (private)."""

from dataclasses import dataclass

import numpy as np

from photpipe.frames.types import Quality

__all__ = ["Cutout", "cut_comet_box"]


@dataclass(frozen=True, eq=False)
class Cutout:
    """The comet's box: arrays, the usable-pixel mask, its origin in the frame and notes."""

    data: np.ndarray
    variance: np.ndarray
    good: np.ndarray
    x_origin: int
    y_origin: int
    flags: tuple
    masked_star_xy: tuple = ()


def cut_comet_box(frame, x0, y0, size, *, star_xy=None, star_radius, keep_radius,
                  wing_radius=0.0, core_radius=0.0):
    """Box of ``size`` pixels centred on the pixel nearest (x0, y0), padded off the frame.

    Pixels off the frame, with quality bits, non-finite values or non-positive variance are
    masked; so are discs of ``star_radius`` around field stars farther than ``keep_radius`` from
    the nucleus (nearer ones cannot be masked without losing the nucleus: flag
    ``star_near_nucleus``). A star whose disc would reach within ``core_radius`` of the
    nucleus is not masked either (the disc would take the nucleus's core with it, and the
    nucleus would be left out): it is fitted whole (flag ``star_fitted_near_nucleus``). The
    box positions of the stars whose disc or whose wings (within ``wing_radius``) reach the box
    are kept (``masked_star_xy``): their light past the disc, or all of it, is modelled by the
    fit.
    """
    ny, nx = frame.data.shape
    half = size // 2
    ix, iy = int(np.round(x0)), int(np.round(y0))
    xa, ya = ix - half, iy - half
    data = np.zeros((size, size))
    var = np.ones((size, size))
    qual = np.full((size, size), int(Quality.EDGE), dtype=np.uint16)
    fx0, fx1 = max(xa, 0), min(xa + size, nx)
    fy0, fy1 = max(ya, 0), min(ya + size, ny)
    flags = []
    masked = []
    if fx1 <= fx0 or fy1 <= fy0:
        msg = f"frame {frame.name!r}: nucleus position ({x0:.1f}, {y0:.1f}) is off the frame"
        raise ValueError(msg)
    dst = (slice(fy0 - ya, fy1 - ya), slice(fx0 - xa, fx1 - xa))
    src = (slice(fy0, fy1), slice(fx0, fx1))
    data[dst] = frame.data[src]
    var[dst] = frame.variance[src]
    qual[dst] = frame.quality[src]
    if (fx1 - fx0, fy1 - fy0) != (size, size):
        flags.append("edge")
    good = (qual == 0) & np.isfinite(data) & np.isfinite(var) & (var > 0)
    yy, xx = np.mgrid[0:size, 0:size]
    xl, yl = x0 - xa, y0 - ya
    r = np.hypot(xx - xl, yy - yl)
    if np.any((qual[r < 3.0] & int(Quality.SATURATED)) != 0):
        flags.append("saturated")
    if star_xy is not None:
        for sx, sy in np.asarray(star_xy, dtype=float).reshape(-1, 2):
            d = np.hypot(sx - x0, sy - y0)
            if d < keep_radius:
                flags.append("star_near_nucleus")
                continue
            lx, ly = sx - xa, sy - ya
            if d < star_radius + core_radius:
                flags.append("star_fitted_near_nucleus")
            elif -star_radius < lx < size + star_radius and -star_radius < ly < size + star_radius:
                good &= np.hypot(xx - lx, yy - ly) >= star_radius
            reach = max(star_radius, wing_radius)
            if -reach < lx < size + reach and -reach < ly < size + reach:
                masked.append((float(lx), float(ly)))
    data = np.where(good, data, 0.0)
    var = np.where(good, var, 1.0)
    return Cutout(data, var, good, xa, ya, tuple(dict.fromkeys(flags)), tuple(masked))
