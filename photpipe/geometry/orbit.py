"""Heliocentric orbits from osculating elements, for any eccentricity."""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.table import QTable
from astropy.time import Time

from photpipe._quantity import as_value
from photpipe.geometry import _kepler
from photpipe.geometry._constants import ECLIPTIC_TO_ICRS, GM_SUN_AU3_D2

__all__ = ["Orbit", "tdb_days_since"]

_AU3_D2 = u.au**3 / u.day**2
_FRAMES = ("ecliptic", "icrs")


def tdb_days_since(times, epoch):
    """Return ``times - epoch`` in TDB days as a float array, keeping two-part precision.

    Parameters
    ----------
    times, epoch : `~astropy.time.Time`
        Any time scale; both are converted to TDB.

    Returns
    -------
    days : ndarray
        Time differences in days (1-d, at least one element).

    Examples
    --------
    >>> from astropy.time import Time
    >>> tdb_days_since(Time("2026-01-02", scale="tdb"), Time("2026-01-01", scale="tdb"))
    array([1.])
    """
    t = times.tdb
    e = epoch.tdb
    return np.atleast_1d((t.jd1 - e.jd1) + (t.jd2 - e.jd2)).astype(float)


def _check_time(value, name):
    if not isinstance(value, Time):
        msg = f"{name!r} must be an astropy Time, got {type(value).__name__}"
        raise TypeError(msg)
    if not value.isscalar:
        msg = f"{name!r} must be a single time, got shape {value.shape}"
        raise ValueError(msg)
    if not np.isfinite(value.jd1 + value.jd2):
        msg = f"{name!r} must be a finite time, got {value}"
        raise ValueError(msg)
    return value.tdb


def _scalar(value, unit, name):
    out = as_value(value, unit, name)
    if np.ndim(out) != 0 or not np.isfinite(out):
        msg = f"{name!r} must be a finite scalar, got {value}"
        raise ValueError(msg)
    return float(out)


def _perifocal_axes(inc, node, peri):
    """Unit vectors P (to perihelion) and Q (90° ahead) in ecliptic axes (Curtis 2014, Eq. 4.49)."""
    ci, si = np.cos(inc), np.sin(inc)
    cn, sn = np.cos(node), np.sin(node)
    cw, sw = np.cos(peri), np.sin(peri)
    p_hat = np.array([cn * cw - sn * sw * ci, sn * cw + cn * sw * ci, sw * si])
    q_hat = np.array([-cn * sw - sn * cw * ci, -sn * sw + cn * cw * ci, cw * si])
    return p_hat, q_hat


@dataclass(frozen=True, eq=False)
class Orbit:
    """A heliocentric two-body orbit from osculating elements (ecliptic and equinox J2000).

    Parameters
    ----------
    q : `~astropy.units.Quantity` ['length']
        Perihelion distance, > 0.
    e : float
        Eccentricity, >= 0 (elliptic, parabolic and hyperbolic orbits alike).
    inclination : `~astropy.units.Quantity` ['angle']
        Inclination i to the ecliptic, 0-180°.
    node : `~astropy.units.Quantity` ['angle']
        Longitude of the ascending node Ω.
    peri : `~astropy.units.Quantity` ['angle']
        Argument of perihelion ω.
    perihelion_time : `~astropy.time.Time`
        Time of perihelion passage T_p (kept in TDB).
    mu : `~astropy.units.Quantity`, optional
        G M of the Sun; default the IAU 2015 nominal value.
    name : str, optional
        A label carried into tables.

    Raises
    ------
    ValueError
        An element that does not describe an orbit; the message names the element and value.
    TypeError
        ``perihelion_time`` not a `~astropy.time.Time`, or an angle/length without units.

    Notes
    -----
    The perihelion state is r = q P̂, v = √(μ(1+e)/q) Q̂ with the perifocal unit vectors
    P̂, Q̂ (Curtis 2014, Eqs. 2.31, 4.37-4.49); states at other times follow from the
    universal-variable solver in `photpipe.geometry.kepler` (Battin 1999, Sect. 4.5).
    Ecliptic vectors are rotated to equatorial (ICRF-aligned) axes by the J2000 obliquity
    84381.448" (Lieske et al. 1977).

    Examples
    --------
    >>> from astropy import units as u
    >>> from astropy.time import Time
    >>> orb = Orbit(1.31 * u.au, 2.85, 128.4 * u.deg, 47.2 * u.deg, 113.6 * u.deg,
    ...             Time("2026-11-20T09:30:00", scale="tdb"))
    >>> r, v = orb.state(Time("2026-11-20T09:30:00", scale="tdb"))
    >>> round(float(r.to_value(u.au)[0, 0]**2 + r.to_value(u.au)[1, 0]**2
    ...             + r.to_value(u.au)[2, 0]**2) ** 0.5, 6)
    1.31
    """

    q: u.Quantity
    e: float
    inclination: u.Quantity
    node: u.Quantity
    peri: u.Quantity
    perihelion_time: Time
    mu: u.Quantity = field(default=GM_SUN_AU3_D2 * _AU3_D2)
    name: str = ""

    def __post_init__(self):
        q = _scalar(self.q, u.au, "q")
        if not q > 0:
            msg = f"'q' (perihelion distance) must be > 0, got {self.q}"
            raise ValueError(msg)
        try:
            e = float(self.e)
        except (TypeError, ValueError) as exc:
            msg = f"'e' (eccentricity) must be a number, got {self.e!r}"
            raise TypeError(msg) from exc
        if not (np.isfinite(e) and e >= 0):
            msg = f"'e' (eccentricity) must be finite and >= 0, got {self.e}"
            raise ValueError(msg)
        inc = _scalar(self.inclination, u.deg, "inclination")
        if not 0.0 <= inc <= 180.0:
            msg = f"'inclination' must be within 0-180 deg, got {self.inclination}"
            raise ValueError(msg)
        node = _scalar(self.node, u.deg, "node") % 360.0
        peri = _scalar(self.peri, u.deg, "peri") % 360.0
        tp = _check_time(self.perihelion_time, "perihelion_time")
        mu = _scalar(self.mu, _AU3_D2, "mu")
        if not mu > 0:
            msg = f"'mu' must be > 0, got {self.mu}"
            raise ValueError(msg)
        object.__setattr__(self, "q", q * u.au)
        object.__setattr__(self, "e", e)
        object.__setattr__(self, "inclination", inc * u.deg)
        object.__setattr__(self, "node", node * u.deg)
        object.__setattr__(self, "peri", peri * u.deg)
        object.__setattr__(self, "perihelion_time", tp)
        object.__setattr__(self, "mu", mu * _AU3_D2)
        p_hat, q_hat = _perifocal_axes(*np.deg2rad([inc, node, peri]))
        object.__setattr__(self, "_p_hat", p_hat)
        object.__setattr__(self, "_q_hat", q_hat)
        object.__setattr__(self, "_r0", q * p_hat)
        object.__setattr__(self, "_v0", np.sqrt(mu * (1.0 + e) / q) * q_hat)

    # ---------------------------------------------------------------- other constructors
    @classmethod
    def from_mean_anomaly(cls, a, e, inclination, node, peri, mean_anomaly, epoch, *,
                          mu=GM_SUN_AU3_D2 * _AU3_D2, name=""):
        """Build an elliptic orbit from its semi-major axis and mean anomaly at an epoch.

        Parameters
        ----------
        a : `~astropy.units.Quantity` ['length']
            Semi-major axis, > 0.
        e : float
            Eccentricity, 0 <= e < 1.
        inclination, node, peri : `~astropy.units.Quantity` ['angle']
            As for `Orbit`.
        mean_anomaly : `~astropy.units.Quantity` ['angle']
            Mean anomaly M at ``epoch``.
        epoch : `~astropy.time.Time`
            Epoch of the elements.
        mu : `~astropy.units.Quantity`, optional
            G M of the Sun.
        name : str, optional
            Label.

        Returns
        -------
        orbit : `Orbit`

        Notes
        -----
        q = a (1 - e) and T_p = epoch - M / n with the mean motion n = √(μ / a³)
        (Kepler's third law), M reduced to (-180°, 180°].

        Examples
        --------
        >>> from astropy import units as u
        >>> from astropy.time import Time
        >>> orb = Orbit.from_mean_anomaly(2.0 * u.au, 0.1, 5 * u.deg, 80 * u.deg, 30 * u.deg,
        ...                               0 * u.deg, Time("2026-01-01", scale="tdb"))
        >>> round(float(orb.q / u.au), 6), orb.perihelion_time.isot
        (1.8, '2026-01-01T00:00:00.000')
        """
        a_au = _scalar(a, u.au, "a")
        if not a_au > 0:
            msg = f"'a' (semi-major axis) must be > 0 for an ellipse, got {a}"
            raise ValueError(msg)
        ecc = float(e)
        if not 0.0 <= ecc < 1.0:
            msg = f"'e' must satisfy 0 <= e < 1 when the orbit is given by a and M, got {e}"
            raise ValueError(msg)
        m = _scalar(mean_anomaly, u.rad, "mean_anomaly")
        m = (m + np.pi) % (2.0 * np.pi) - np.pi
        ep = _check_time(epoch, "epoch")
        gm = _scalar(mu, _AU3_D2, "mu")
        n = np.sqrt(gm / a_au**3)
        tp = ep - (m / n) * u.day
        return cls(a_au * (1.0 - ecc) * u.au, ecc, inclination, node, peri, tp, mu=mu, name=name)

    @classmethod
    def from_state(cls, position, velocity, epoch, *, frame="ecliptic",
                   mu=GM_SUN_AU3_D2 * _AU3_D2, name=""):
        """Osculating orbit of a heliocentric state vector.

        Parameters
        ----------
        position : `~astropy.units.Quantity` ['length'], shape (3,)
            Heliocentric position.
        velocity : `~astropy.units.Quantity` ['speed'], shape (3,)
            Heliocentric velocity.
        epoch : `~astropy.time.Time`
            Time of the state.
        frame : {"ecliptic", "icrs"}, optional
            Axes of the vectors: ecliptic J2000 or equatorial (ICRF-aligned).
        mu : `~astropy.units.Quantity`, optional
            G M of the Sun.
        name : str, optional
            Label.

        Returns
        -------
        orbit : `Orbit`

        Notes
        -----
        h = r × v, e = v × h / μ - r̂, q = h² / (μ (1 + e)), i, Ω, ω from h, the node line and
        e (Curtis 2014, Algorithm 4.2). T_p from the universal anomaly of the state,
        χ = 2 √(q/(1+e)) tan(ν/2) g(x) (see `photpipe.geometry._kepler.perihelion_chi`), and
        √μ (t - T_p) = e χ³ c3(αχ²) + q χ, valid for every conic.

        Examples
        --------
        >>> from astropy import units as u
        >>> from astropy.time import Time
        >>> orb = Orbit.from_state([1, 0, 0] * u.au, [0, 0.0172021, 0] * u.au / u.day,
        ...                        Time("2026-01-01", scale="tdb"))
        >>> round(orb.e, 4), round(float(orb.inclination / u.deg), 6)
        (0.0, 0.0)
        """
        if frame not in _FRAMES:
            msg = f"'frame' must be one of {_FRAMES}, got {frame!r}"
            raise ValueError(msg)
        r = np.asarray(as_value(position, u.au, "position"), dtype=float)
        v = np.asarray(as_value(velocity, u.au / u.day, "velocity"), dtype=float)
        if r.shape != (3,) or v.shape != (3,):
            msg = f"'position' and 'velocity' must be 3-vectors, got {r.shape}, {v.shape}"
            raise ValueError(msg)
        if frame == "icrs":
            r = ECLIPTIC_TO_ICRS.T @ r
            v = ECLIPTIC_TO_ICRS.T @ v
        ep = _check_time(epoch, "epoch")
        gm = _scalar(mu, _AU3_D2, "mu")
        h = np.cross(r, v)
        hn = np.linalg.norm(h)
        rn = np.linalg.norm(r)
        if hn == 0:
            msg = "the state has no angular momentum (radial motion): not a conic orbit"
            raise ValueError(msg)
        ecc_vec = np.cross(v, h) / gm - r / rn
        ecc = float(np.linalg.norm(ecc_vec))
        q = hn**2 / (gm * (1.0 + ecc))
        inc = np.arccos(np.clip(h[2] / hn, -1.0, 1.0))
        node = np.arctan2(h[0], -h[1])
        n_hat = np.array([np.cos(node), np.sin(node), 0.0])
        m_hat = np.cross(h / hn, n_hat)
        if ecc > 1e-12:
            peri = np.arctan2(ecc_vec @ m_hat, ecc_vec @ n_hat)
        else:
            peri = 0.0
            ecc_vec = n_hat * 1e-300
        if np.sin(inc) < 1e-12:      # equatorial: measure ω from the x axis
            node = 0.0
            peri = np.arctan2(ecc_vec[1], ecc_vec[0]) if ecc > 1e-12 else 0.0
        nu = float(_kepler.true_anomaly_from_state(r[:, None], v[:, None], gm)[0]) \
            if ecc > 1e-12 else float(np.arctan2(np.cross(n_hat, r) @ (h / hn), n_hat @ r))
        chi = float(_kepler.perihelion_chi(nu, q, ecc))
        alpha = (1.0 - ecc) / q
        c2, c3 = _kepler.stumpff_c2c3(np.array([alpha * chi * chi]))
        since = (ecc * chi**3 * c3[0] + q * chi) / np.sqrt(gm)
        tp = ep - since * u.day
        return cls(q * u.au, ecc, np.rad2deg(inc) * u.deg, np.rad2deg(node) * u.deg,
                   np.rad2deg(peri) * u.deg, tp, mu=mu, name=name)

    # ---------------------------------------------------------------- derived elements
    @property
    def a(self):
        """Semi-major axis q / (1 - e): negative for hyperbolas, infinite for the parabola."""
        q = self.q.to_value(u.au)
        with np.errstate(divide="ignore"):
            return (q / (1.0 - self.e) if self.e != 1.0 else np.inf) * u.au

    @property
    def p(self):
        """Semi-latus rectum q (1 + e)."""
        return self.q * (1.0 + self.e)

    @property
    def period(self):
        """Orbital period 2π √(a³/μ) of an ellipse; infinite otherwise."""
        if self.e >= 1.0:
            return np.inf * u.day
        a = self.a.to_value(u.au)
        return 2.0 * np.pi * np.sqrt(a**3 / self.mu.to_value(_AU3_D2)) * u.day

    # ---------------------------------------------------------------- propagation
    def _state_days(self, days, *, frame="icrs", chi_guess=None, return_chi=False):
        """Heliocentric state (AU, AU/day, plain floats) at TDB days after perihelion."""
        out = _kepler.universal_propagate(self._r0, self._v0, np.asarray(days, dtype=float),
                                          self.mu.to_value(_AU3_D2), chi_guess=chi_guess,
                                          return_chi=return_chi)
        if frame == "icrs":
            out = (ECLIPTIC_TO_ICRS @ out[0], ECLIPTIC_TO_ICRS @ out[1]) + tuple(out[2:])
        return out

    def state(self, times, *, frame="ecliptic"):
        """Heliocentric position and velocity at ``times``.

        Parameters
        ----------
        times : `~astropy.time.Time`
            Epochs (any scale, converted to TDB).
        frame : {"ecliptic", "icrs"}, optional
            Ecliptic J2000 axes, or equatorial ICRF-aligned axes.

        Returns
        -------
        position : `~astropy.units.Quantity` ['length'], shape (3, n)
            In AU.
        velocity : `~astropy.units.Quantity` ['speed'], shape (3, n)
            In AU / day.
        """
        if frame not in _FRAMES:
            msg = f"'frame' must be one of {_FRAMES}, got {frame!r}"
            raise ValueError(msg)
        _check_times(times)
        r, v = self._state_days(tdb_days_since(times, self.perihelion_time), frame=frame)
        return r * u.au, v * (u.au / u.day)

    def true_anomaly(self, times):
        """True anomaly ν at ``times``, in degrees within (-180, 180].

        Examples
        --------
        >>> from astropy import units as u
        >>> from astropy.time import Time
        >>> orb = Orbit(1 * u.au, 1.0, 0 * u.deg, 0 * u.deg, 0 * u.deg,
        ...             Time("2026-01-01", scale="tdb"))
        >>> float(orb.true_anomaly(Time("2026-01-01", scale="tdb"))[0].to_value(u.deg))
        0.0
        """
        _check_times(times)
        r, _ = self._state_days(tdb_days_since(times, self.perihelion_time), frame="ecliptic")
        x = r.T @ self._p_hat
        y = r.T @ self._q_hat
        return np.rad2deg(np.arctan2(y, x)) * u.deg

    # ---------------------------------------------------------------- output
    def to_dict(self):
        """Elements as a plain dict (AU, degrees, ISO TDB string), e.g. for provenance."""
        return {
            "name": self.name,
            "q_au": self.q.to_value(u.au),
            "e": self.e,
            "i_deg": self.inclination.to_value(u.deg),
            "node_deg": self.node.to_value(u.deg),
            "peri_deg": self.peri.to_value(u.deg),
            "perihelion_time_tdb": self.perihelion_time.tdb.isot,
            "mu_au3_d2": self.mu.to_value(_AU3_D2),
        }

    def to_table(self):
        """Elements as a one-row `~astropy.table.QTable` with units."""
        return QTable({
            "name": [self.name],
            "q": [self.q.to_value(u.au)] * u.au,
            "e": [self.e],
            "inclination": [self.inclination.to_value(u.deg)] * u.deg,
            "node": [self.node.to_value(u.deg)] * u.deg,
            "peri": [self.peri.to_value(u.deg)] * u.deg,
            "perihelion_time": Time([self.perihelion_time.tdb]),
        })


def _check_times(times):
    if not isinstance(times, Time):
        msg = f"'times' must be an astropy Time, got {type(times).__name__}"
        raise TypeError(msg)
    if not np.all(np.isfinite(np.atleast_1d(times.jd1 + times.jd2))):
        msg = "'times' holds non-finite values"
        raise ValueError(msg)
