"""Which of the comet and the stars trailed: from the header, else from the stars' shapes.

A telescope that follows the stars leaves the comet trailed by its motion over the exposure; one
that follows the comet trails every star by the same vector, reversed. The nucleus fit must know
which. A ``TRACKING`` header value says it where the observatory writes one. Otherwise the field
stars tell: a point source smeared uniformly over a segment of length L has its second moment
along the segment raised by L²/12 and the one across unchanged (the variance of a uniform
distribution, common practice), whatever the PSF. The difference of the two moments inside a
circle is also free of any flat background left over, which raises both alike. The median
difference over the brightest stars is compared with 0 (the stars did not trail) and with L²/12
(they trailed by the comet's motion). The seeing's own elongation, common to all the stars,
mimics a trail, so its likely size is allowed beside 3 standard errors of the median; the frame
is called by the one hypothesis that fits within that window, and is left to the configuration
when both fit or neither does (short trails, few stars, elongated seeing).

The photometry decides before it measures the field stars (their apertures follow the trail on
a frame that followed the comet) and the nucleus fit takes the same verdict. Frames of one night
and one camera normally share the mode: the night weighs the frames' verdicts
(`photpipe.campaign.night`), and a frame keeps a mode of its own only on strong evidence
(`TrackingVerdict.strong`): a ``TRACKING`` header, or stars whose shape lies more than
`STRONG_MARGIN` decision windows from the other hypothesis.
"""

from dataclasses import dataclass

import numpy as np

__all__ = ["TrackingVerdict", "tracking_from_header", "tracking_from_stars", "SEPARATION_SIGMA",
           "STRONG_MARGIN"]

#: A hypothesis fits when the stars' median lies within this many standard errors of it (plus
#: the allowance for elongated seeing).
SEPARATION_SIGMA = 3.0

#: A frame's own verdict from the stars is strong (it may differ from its night's) when the
#: hypothesis it rejects lies more than this many decision windows away.
STRONG_MARGIN = 2.0

_HEADER_WORDS = {
    "sidereal": "sidereal", "stars": "sidereal", "star": "sidereal", "siderial": "sidereal",
    "comet": "comet", "target": "comet", "non-sidereal": "comet", "nonsidereal": "comet",
    "object": "comet", "differential": "comet",
}


@dataclass(frozen=True)
class TrackingVerdict:
    """How one frame was tracked, and what said so.

    Attributes
    ----------
    mode : {"sidereal", "comet", "none"}
        ``"sidereal"``: the comet trails; ``"comet"``: the stars trail.
    source : {"header", "stars", "configuration", "night"}
        What decided: the ``TRACKING`` header value, the stars' shapes, the configured mode
        (the stars could not tell), or the night's vote over its frames.
    excess_pix2, excess_err_pix2 : float
        Median along-minus-across second moment of the stars (pixel²) and its standard error.
    expected_pix2 : float
        L²/12 of a star trailed by the comet's motion.
    n_stars : int
        Stars measured.
    window_pix2 : float
        Half width of the decision window: 3 standard errors plus the seeing's allowance.
    """

    mode: str
    source: str
    excess_pix2: float = float("nan")
    excess_err_pix2: float = float("nan")
    expected_pix2: float = float("nan")
    n_stars: int = 0
    window_pix2: float = float("nan")

    @property
    def margin(self):
        """Distance of the stars' shape from the rejected hypothesis, in decision windows."""
        if self.source != "stars" or not self.window_pix2 > 0:
            return float("nan")
        rejected = 0.0 if self.mode == "comet" else self.expected_pix2
        return abs(self.excess_pix2 - rejected) / self.window_pix2

    @property
    def strong(self):
        """A header value, or stars beyond `STRONG_MARGIN` windows from the other mode.

        Examples
        --------
        >>> TrackingVerdict("comet", "stars", 1.3, 0.05, 1.33, 20, 0.3).strong
        True
        >>> TrackingVerdict("comet", "stars", 0.5, 0.05, 1.33, 20, 0.4).strong
        False
        """
        return self.source == "header" or bool(self.margin > STRONG_MARGIN)

    def to_dict(self):
        """The verdict as plain values (the frame's record carries it to the night)."""
        return {"mode": self.mode, "source": self.source, "excess_pix2": self.excess_pix2,
                "excess_err_pix2": self.excess_err_pix2, "expected_pix2": self.expected_pix2,
                "n_stars": self.n_stars, "window_pix2": self.window_pix2,
                "strong": self.strong}

    def note(self):
        """One line for the frame's notes."""
        if self.source == "header":
            return f"tracking {self.mode} (TRACKING header)"
        if self.source == "stars":
            return (f"tracking {self.mode} from the stars' shapes: elongation "
                    f"{self.excess_pix2:.2f} ± {self.excess_err_pix2:.2f} px² against "
                    f"{self.expected_pix2:.2f} px² if trailed ({self.n_stars} stars)")
        if self.source == "night":
            return f"tracking {self.mode} as decided for the night"
        return f"tracking {self.mode} as configured (the stars could not tell)"


def tracking_from_header(header):
    """The tracking mode a ``TRACKING`` header value names, or None.

    Examples
    --------
    >>> tracking_from_header({"TRACKING": "Non-sidereal"}), tracking_from_header({})
    ('comet', None)
    """
    if header is None:
        return None
    value = header.get("TRACKING")
    if not isinstance(value, str):
        return None
    return _HEADER_WORDS.get(value.strip().casefold())


def _star_excess(data, good, x, y, direction, radius):
    """Second-moment shape of one star inside a circle (pixel²), NaN where unusable.

    Returns ``(q, u, t)``: along-minus-across moment, twice the cross moment (in the frame of
    the comet's motion) and the sum of the two moments. A trail raises ``q`` alone; PSF
    ellipticity at an angle raises ``q`` and ``u``.
    """
    ny, nx = data.shape
    x0, y0 = int(round(x)), int(round(y))
    r = int(np.ceil(radius)) + 2
    if x0 - r < 0 or y0 - r < 0 or x0 + r >= nx or y0 + r >= ny:
        return np.nan, np.nan, np.nan
    box = np.s_[y0 - r:y0 + r + 1, x0 - r:x0 + r + 1]
    img, ok = data[box].astype(float), good[box]
    yy, xx = np.mgrid[-r:r + 1, -r:r + 1].astype(float)
    dx, dy = xx + x0 - x, yy + y0 - y
    rr = np.hypot(dx, dy)
    ring = ok & (rr > radius) & (rr <= radius + 2)
    inside = rr <= radius
    if not np.all(ok[inside]) or np.count_nonzero(ring) < 8:
        return np.nan, np.nan, np.nan
    img = img - np.median(img[ring])
    w = img[inside]
    total = w.sum()
    if not total > 0:
        return np.nan, np.nan, np.nan
    ux, uy = direction
    along = dx[inside] * ux + dy[inside] * uy
    across = -dx[inside] * uy + dy[inside] * ux
    cx = np.sum(w * along) / total
    cy = np.sum(w * across) / total
    q = np.sum(w * ((along - cx) ** 2 - (across - cy) ** 2)) / total
    u = np.sum(w * 2 * (along - cx) * (across - cy)) / total
    t = np.sum(w * ((along - cx) ** 2 + (across - cy) ** 2)) / total
    return float(q), float(u), float(t)


def tracking_from_stars(data, good, star_xy, motion, *, fwhm_pix, configured="sidereal",
                        max_stars=40):
    """Decide from the field stars' shapes whether they trailed by the comet's motion.

    Parameters
    ----------
    data : ndarray, shape (ny, nx)
        The calibrated image (sky not subtracted).
    good : ndarray of bool, shape (ny, nx)
        Usable pixels.
    star_xy : ndarray, shape (n, 2)
        Field stars, brightest first.
    motion : tuple of float
        The comet's motion over the exposure in pixels (dx, dy).
    fwhm_pix : float
        The stars' FWHM (pixels), for the measuring circle (radius 2 FWHM beyond the trail).
    configured : {"sidereal", "comet", "none"}, optional
        The mode kept when the stars cannot tell.
    max_stars : int, optional
        Measure at most this many stars.

    Returns
    -------
    TrackingVerdict
    """
    length = float(np.hypot(*motion))
    expected = length**2 / 12.0
    if length <= 0 or not np.isfinite(length) or len(star_xy) == 0:
        return TrackingVerdict(configured, "configuration", expected_pix2=expected)
    direction = (motion[0] / length, motion[1] / length)
    radius = 0.5 * length + 2.0 * max(float(fwhm_pix), 1.0)
    shapes = np.array([_star_excess(data, good, x, y, direction, radius)
                       for x, y in np.asarray(star_xy, float)[:max_stars]]).reshape(-1, 3)
    shapes = shapes[np.all(np.isfinite(shapes), axis=1)]
    n = len(shapes)
    if n < 3:
        return TrackingVerdict(configured, "configuration", expected_pix2=expected, n_stars=n)
    median = float(np.median(shapes[:, 0]))
    # standard error of a median: 1.2533 σ/√n for normal scatter (Kendall & Stuart 1977),
    # σ from the median absolute deviation (1.4826 MAD, common practice)
    spread = 1.4826 * float(np.median(np.abs(shapes[:, 0] - median)))
    err = 1.2533 * spread / np.sqrt(n)
    # The seeing's own elongation, shared by every star, mimics a trail. Allowed for up to
    # an ellipticity of 0.12 (axis ratio 0.88, typical of ground-based seeing; common
    # practice): moments a², b² in the ratio 1 : 0.88² give q² + u² = E² with
    # E = t (1 - 0.88²)/(1 + 0.88²); the measured cross term u leaves at most √(E² - u²) in q.
    size = float(np.median(shapes[:, 2]))
    e_max = size * (1 - 0.88**2) / (1 + 0.88**2)
    cross = float(np.median(shapes[:, 1]))
    allowance = float(np.sqrt(max(e_max**2 - cross**2, 0.0)))
    window = SEPARATION_SIGMA * err + allowance
    fits_round, fits_trailed = abs(median) <= window, abs(median - expected) <= window
    if fits_round == fits_trailed:
        return TrackingVerdict(configured, "configuration", median, err, expected, n, window)
    mode = "comet" if fits_trailed else "sidereal"
    return TrackingVerdict(mode, "stars", median, err, expected, n, window)
