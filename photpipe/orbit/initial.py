"""A first orbit from three observations: Gauss's method with iterative improvement."""

import numpy as np

from photpipe.geometry import _kepler
from photpipe.geometry._constants import C_AU_PER_DAY, GM_SUN_AU3_D2

__all__ = ["gauss_orbit", "radec_unit_vectors"]


def radec_unit_vectors(ra, dec):
    """Unit vectors (3, n) toward RA/Dec given in radians."""
    ra, dec = np.asarray(ra, dtype=float), np.asarray(dec, dtype=float)
    return np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])


def _coefficients(rho_hat, big_r):
    p1 = np.cross(rho_hat[:, 1], rho_hat[:, 2])
    p2 = np.cross(rho_hat[:, 0], rho_hat[:, 2])
    p3 = np.cross(rho_hat[:, 0], rho_hat[:, 1])
    d0 = rho_hat[:, 0] @ p1
    d = np.array([[big_r[:, i] @ p for p in (p1, p2, p3)] for i in range(3)])
    return d0, d


def _first_guess(tau1, tau3, d0, d, rho_hat, big_r, mu):
    # Curtis (2014), Algorithm 5.5, steps 1-9 (heliocentric: μ of the Sun, R the observer)
    tau = tau3 - tau1
    a_ = (-d[0, 1] * tau3 / tau + d[1, 1] + d[2, 1] * tau1 / tau) / d0
    b_ = (d[0, 1] * (tau3**2 - tau**2) * tau3 / tau
          + d[2, 1] * (tau**2 - tau1**2) * tau1 / tau) / (6.0 * d0)
    e_ = big_r[:, 1] @ rho_hat[:, 1]
    r2sq = big_r[:, 1] @ big_r[:, 1]
    a = -(a_**2 + 2.0 * a_ * e_ + r2sq)
    b = -2.0 * mu * b_ * (a_ + e_)
    c = -(mu * b_) ** 2
    roots = np.roots([1.0, 0, a, 0, 0, b, 0, 0, c])
    real = roots[(np.abs(roots.imag) < 1e-9 * np.abs(roots)) & (roots.real > 0)].real
    out = []
    for r2 in real:
        rho1 = ((6.0 * (d[2, 0] * tau1 / tau3 + d[1, 0] * tau / tau3) * r2**3
                 + mu * d[2, 0] * (tau**2 - tau1**2) * tau1 / tau3)
                / (6.0 * r2**3 + mu * (tau**2 - tau3**2)) - d[0, 0]) / d0
        rho2 = a_ + mu * b_ / r2**3
        rho3 = ((6.0 * (d[0, 2] * tau3 / tau1 - d[1, 2] * tau / tau1) * r2**3
                 + mu * d[0, 2] * (tau**2 - tau3**2) * tau3 / tau1)
                / (6.0 * r2**3 + mu * (tau**2 - tau1**2)) - d[2, 2]) / d0
        rho = np.array([rho1, rho2, rho3])
        if np.all(rho > 0):
            f1 = 1.0 - mu * tau1**2 / (2.0 * r2**3)
            f3 = 1.0 - mu * tau3**2 / (2.0 * r2**3)
            g1 = tau1 - mu * tau1**3 / (6.0 * r2**3)
            g3 = tau3 - mu * tau3**3 / (6.0 * r2**3)
            out.append((rho, f1, g1, f3, g3))
    return out


def _exact_fg(r2, v2, taus, mu):
    # f and g from the two-body state: r(τ) = f r₂ + g v₂ (Curtis 2014, Eq. 3.69 ff.)
    r, _ = _kepler.universal_propagate(r2, v2, np.asarray(taus, dtype=float), mu)
    basis = np.stack([r2, v2], axis=1)
    fg = np.linalg.lstsq(basis, r, rcond=None)[0]
    return fg[0], fg[1]


def _improve(start, t, d0, d, rho_hat, big_r, mu, *, c, iterations=50, tol=1e-12):
    # Curtis (2014), Algorithm 5.6: exact Lagrange coefficients from the current (r2, v2);
    # the observation times are corrected for light time with the current ranges (Gauss 1809,
    # Art. 118).
    rho, f1, g1, f3, g3 = start
    for _ in range(iterations):
        big_d = f1 * g3 - f3 * g1
        c1, c3 = g3 / big_d, -g1 / big_d
        new = np.array([(-d[0, 0] + d[1, 0] / c1 - d[2, 0] * c3 / c1) / d0,
                        (-c1 * d[0, 1] + d[1, 1] - c3 * d[2, 1]) / d0,
                        (-d[0, 2] * c1 / c3 + d[1, 2] / c3 - d[2, 2]) / d0])
        r = big_r + new * rho_hat
        v2 = (-f3 * r[:, 0] + f1 * r[:, 2]) / big_d
        te = t if c is None else t - new / c
        (f1n, f3n), (g1n, g3n) = _exact_fg(r[:, 1], v2, [te[0] - te[1], te[2] - te[1]], mu)
        # Curtis (2014, Algorithm 5.6, step 4) averages the new coefficients with the old
        f1, f3, g1, g3 = (f1 + f1n) / 2, (f3 + f3n) / 2, (g1 + g1n) / 2, (g3 + g3n) / 2
        done = np.max(np.abs(new - rho)) < tol * np.max(new)
        rho = new
        if done:
            break
    r = big_r + rho * rho_hat
    big_d = f1 * g3 - f3 * g1
    v2 = (-f3 * r[:, 0] + f1 * r[:, 2]) / big_d
    return r[:, 1], v2, t[1] if c is None else t[1] - rho[1] / c


def gauss_orbit(jd, ra, dec, observer_helio, *, mu=GM_SUN_AU3_D2, speed_of_light=C_AU_PER_DAY):
    """Heliocentric two-body states from three astrometric observations (Gauss's method).

    Parameters
    ----------
    jd : array_like, shape (3,)
        TDB Julian dates of the observations, increasing.
    ra, dec : array_like, shape (3,)
        Astrometric RA/Dec, radians.
    observer_helio : ndarray, shape (3, 3)
        Heliocentric observer positions (AU, ICRF axes), one column per observation.
    mu : float, optional
        GM of the Sun, AU³/day².
    speed_of_light : float or None, optional
        In the units of the inputs, for the light-time correction; None leaves it out.

    Returns
    -------
    candidates : list of (ndarray, ndarray, float)
        Heliocentric position (AU) and velocity (AU/day), and the TDB date they hold at
        (the middle observation's time less its light time), one per positive root of Gauss's
        eighth-degree equation that gives positive ranges.

    Notes
    -----
    Gauss (1809, Theoria Motus, Book II, Sect. 1); as set out by Curtis (2014, "Orbital
    Mechanics for Engineering Students", 3rd ed., Algorithm 5.5 for the first guess and
    Algorithm 5.6 for the iterative improvement with exact Lagrange coefficients), here with
    the Sun as centre and the times corrected for light time at each iteration.

    Examples
    --------
    Curtis (2014), Example 5.11 (geocentric, km and s; the site vectors from his Eq. 5.56)
    gives r₂ = (5659.1, 6533.8, 3270.1) km after the first guess; with the exact Lagrange
    coefficients the iterations settle on (5662.1, 6538.0, 3269.0) km (Example 5.12):

    >>> import numpy as np
    >>> t = np.array([0.0, 118.10, 237.58])
    >>> ra = np.radians([43.537, 54.420, 64.318]); dec = np.radians([-8.7833, -12.074, -15.105])
    >>> theta = np.radians([44.506, 45.000, 45.499])
    >>> big_r = np.stack([4893.37 * np.cos(theta), 4893.37 * np.sin(theta), [4078.54] * 3])
    >>> (r2, v2, t2), = gauss_orbit(t, ra, dec, big_r, mu=398600.0, speed_of_light=None)
    >>> np.round(r2, -1)
    array([5660., 6540., 3270.])
    """
    t = np.asarray(jd, dtype=float)
    rho_hat = radec_unit_vectors(ra, dec)
    big_r = np.asarray(observer_helio, dtype=float)
    d0, d = _coefficients(rho_hat, big_r)
    out = []
    for start in _first_guess(t[0] - t[1], t[2] - t[1], d0, d, rho_hat, big_r, mu):
        try:
            r2, v2, t2 = _improve(start, t, d0, d, rho_hat, big_r, mu, c=speed_of_light)
        except (ValueError, FloatingPointError, np.linalg.LinAlgError):
            continue
        if np.all(np.isfinite(r2)) and np.all(np.isfinite(v2)):
            out.append((r2, v2, t2))
    return out
