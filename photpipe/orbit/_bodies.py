"""The Sun, the planets and the Moon from JPL DE421: masses and positions sampled over an arc.

Units inside the orbit stage: astronomical units (IAU 2012, `AU_KM`), TDB days, barycentric
ICRF axes.
"""

import functools

import numpy as np

from photpipe.geometry._constants import AU_KM

__all__ = ["PERTURBERS", "perturber_gms", "BodyTrack", "body_states"]

#: Bodies that pull on the comet: name -> (jplephem segment, DE421 constant of its GM).
#: Earth and Moon are taken apart from the Earth-Moon barycentre; the other planets are their
#: system barycentres (their moons' masses included), as DE421 gives them.
PERTURBERS = ("sun", "mercury", "venus", "earth", "moon", "mars", "jupiter", "saturn",
              "uranus", "neptune", "pluto")

_GM_KEYS = {"sun": "GMS", "mercury": "GM1", "venus": "GM2", "mars": "GM4", "jupiter": "GM5",
            "saturn": "GM6", "uranus": "GM7", "neptune": "GM8", "pluto": "GM9"}


@functools.cache
def _kernel():
    import de421
    from jplephem.ephem import Ephemeris

    return Ephemeris(de421)


def perturber_gms(names=PERTURBERS):
    """Gravitational parameters (AU³/day², `AU_KM` astronomical units) of DE421's bodies.

    Notes
    -----
    The constants travel with the ephemeris (Folkner, Williams & Boggs 2009, IPN Progress Report
    42-178, Table 4): GMS, GM1...GM9 and GMB (Earth + Moon) with EMRAT, the Earth/Moon mass
    ratio. They are in DE421's own astronomical unit (``AU`` constant, km) and rescaled here to
    the IAU 2012 unit so that they match positions divided by `AU_KM`.

    Examples
    --------
    >>> round(float(perturber_gms(("sun",))[0]), 12)   # k² = 0.01720209895² (Gauss 1809)
    0.000295912208
    """
    k = _kernel()
    scale = (float(k.AU) / AU_KM) ** 3
    out = []
    for name in names:
        if name == "earth":
            gm = float(k.GMB) * float(k.EMRAT) / (1.0 + float(k.EMRAT))
        elif name == "moon":
            gm = float(k.GMB) / (1.0 + float(k.EMRAT))
        elif name in _GM_KEYS:
            gm = float(getattr(k, _GM_KEYS[name]))
        else:
            msg = f"unknown body {name!r}; known: {', '.join(PERTURBERS)}"
            raise ValueError(msg)
        out.append(gm * scale)
    return np.array(out)


def body_states(name, jd):
    """Barycentric position and velocity of one DE421 body (AU, AU/day) at TDB Julian dates."""
    k = _kernel()
    jd = np.atleast_1d(np.asarray(jd, dtype=float))
    if name in ("earth", "moon"):
        emb_p, emb_v = k.position_and_velocity("earthmoon", jd)
        moon_p, moon_v = k.position_and_velocity("moon", jd)
        share = k.earth_share if name == "earth" else -k.moon_share
        p, v = emb_p - moon_p * share, emb_v - moon_v * share
    else:
        p, v = k.position_and_velocity(name, jd)
    return p / AU_KM, v / AU_KM


class BodyTrack:
    """Positions of the pulling bodies over an arc, from a cubic Hermite table.

    Parameters
    ----------
    jd_start, jd_end : float
        TDB Julian dates the integration may reach (padded by two steps each side).
    names : tuple of str, optional
        Which bodies (default all of `PERTURBERS`).
    step : float, optional
        Table step in days. The Hermite error bound Δ⁴ω⁴A/384 is 4e-13 AU for the Moon's
        monthly wobble about the barycentre at 0.125 d and smaller for every planet.

    Notes
    -----
    jplephem evaluates its Chebyshev series per call; an integrator asks for the bodies at
    thousands of single epochs, so they are tabulated once and interpolated from positions and
    velocities (cubic Hermite, common practice).
    """

    def __init__(self, jd_start, jd_end, *, names=PERTURBERS, step=0.125):
        self.names = tuple(names)
        self.gm = perturber_gms(self.names)
        self.step = float(step)
        self.t0 = np.floor(min(jd_start, jd_end)) - 2 * self.step
        n = int(np.ceil((max(jd_start, jd_end) + 2 * self.step - self.t0) / self.step)) + 1
        jd = self.t0 + self.step * np.arange(n)
        pos = np.empty((n, len(self.names), 3))
        vel = np.empty_like(pos)
        for i, name in enumerate(self.names):
            p, v = body_states(name, jd)
            pos[:, i, :] = p.T
            vel[:, i, :] = v.T
        self._pos, self._vel, self._n = pos, vel, n

    def sun_velocity(self, jd):
        """Barycentric velocity (AU/day) of the first body (the Sun), from the same table."""
        x = (jd - self.t0) / self.step
        i = min(max(int(x), 0), self._n - 2)
        s = x - i
        h = self.step
        s2 = s * s
        d00 = (6 * s2 - 6 * s) / h
        d10 = 3 * s2 - 4 * s + 1
        d01 = (-6 * s2 + 6 * s) / h
        d11 = 3 * s2 - 2 * s
        return (d00 * self._pos[i, 0] + d10 * self._vel[i, 0] + d01 * self._pos[i + 1, 0]
                + d11 * self._vel[i + 1, 0])

    def positions(self, jd):
        """Barycentric positions, shape (n_bodies, 3), at one TDB Julian date."""
        x = (jd - self.t0) / self.step
        i = min(max(int(x), 0), self._n - 2)
        s = x - i
        h = self.step
        s2, s3 = s * s, s * s * s
        h00 = 2 * s3 - 3 * s2 + 1
        h10 = s3 - 2 * s2 + s
        h01 = -2 * s3 + 3 * s2
        h11 = s3 - s2
        return (h00 * self._pos[i] + h10 * h * self._vel[i] + h01 * self._pos[i + 1]
                + h11 * h * self._vel[i + 1])
