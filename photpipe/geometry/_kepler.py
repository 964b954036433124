"""Numerical core of two-body propagation: universal variables on plain float arrays.

Everything here works in any consistent unit system (the caller passes ``mu`` in the same
length and time units as the state) and is vectorised over epochs and over states.
"""

from dataclasses import dataclass

import numpy as np

__all__ = [
    "stumpff_c2c3", "universal_propagate", "mean_to_eccentric", "mean_to_hyperbolic",
    "perihelion_chi", "true_anomaly_from_state",
]

_SERIES_LIMIT = 0.5      # |z| below which the Stumpff functions are summed as series
_N_SERIES = 12           # terms: |z|^12 / 26! ~ 1e-30, far below double precision
_MAX_ITER = 80           # Laguerre steps guarded by bisection; typical convergence in 3-6
_LAGUERRE_N = 5.0        # Conway (1986) recommends n = 5


def stumpff_c2c3(z):
    """Return the Stumpff functions c2(z) = C(z) and c3(z) = S(z) for an array ``z``.

    Notes
    -----
    c2(z) = (1 - cos √z) / z and c3(z) = (√z - sin √z) / √z³ for z > 0, with the hyperbolic
    forms for z < 0 (Stumpff 1959; Curtis 2014, Eqs. 3.52-3.53). Near z = 0 both are summed as
    their power series c_k(z) = Σ (-z)^j / (2j + k)!, which removes the cancellation that makes the
    closed forms useless close to the parabola. Large negative z overflows to ``inf``; the
    solver treats that as "far beyond the root".
    """
    z = np.asarray(z, dtype=float)
    c2 = np.empty_like(z)
    c3 = np.empty_like(z)
    small = np.abs(z) < _SERIES_LIMIT
    pos = (z >= _SERIES_LIMIT)
    neg = (z <= -_SERIES_LIMIT)
    if np.any(small):
        zs = z[small]
        s2 = np.zeros_like(zs)
        s3 = np.zeros_like(zs)
        term2 = np.full_like(zs, 0.5)          # 1/2!
        term3 = np.full_like(zs, 1.0 / 6.0)    # 1/3!
        for j in range(_N_SERIES):
            s2 += term2
            s3 += term3
            term2 = term2 * (-zs) / ((2 * j + 3) * (2 * j + 4))
            term3 = term3 * (-zs) / ((2 * j + 4) * (2 * j + 5))
        c2[small] = s2
        c3[small] = s3
    if np.any(pos):
        sz = np.sqrt(z[pos])
        # 1 - cos x = 2 sin^2(x/2): no cancellation for moderate x
        c2[pos] = 2.0 * np.sin(0.5 * sz) ** 2 / z[pos]
        c3[pos] = (sz - np.sin(sz)) / sz**3
    if np.any(neg):
        with np.errstate(over="ignore", invalid="ignore"):
            sz = np.sqrt(-z[neg])
            c2[neg] = 2.0 * np.sinh(0.5 * sz) ** 2 / (-z[neg])
            c3[neg] = (np.sinh(sz) - sz) / sz**3
    return c2, c3


def _cross(a, b):
    return np.stack([a[1] * b[2] - a[2] * b[1],
                     a[2] * b[0] - a[0] * b[2],
                     a[0] * b[1] - a[1] * b[0]])


def universal_propagate(r0, v0, dt, mu, *, chi_guess=None, return_chi=False):
    """Propagate two-body states by ``dt`` with the universal-variable Kepler equation.

    Parameters
    ----------
    r0, v0 : ndarray, shape (3,) or (3, n)
        Position and velocity at the reference epoch.
    dt : float or ndarray, shape (n,)
        Times after the reference epoch (negative for the past).
    mu : float
        Gravitational parameter in the same units.
    chi_guess : ndarray, optional
        Starting values of the universal anomaly (a warm start, e.g. from a nearby epoch).
    return_chi : bool, optional
        Also return the universal anomaly at each epoch.

    Returns
    -------
    r, v : ndarray, shape (3, n)
        States at the requested epochs.
    chi : ndarray, shape (n,)
        Only when ``return_chi`` is true.

    Notes
    -----
    Solves F(χ) = σ0 χ² c2 + (1 - α r0) χ³ c3 + r0 χ - √μ Δt = 0 with z = α χ², α = 2/r0 - v0²/μ,
    σ0 = r0·v0/√μ (Battin 1999, Sect. 4.5; Vallado 2013, Algorithm 8; Curtis 2014, Eq. 3.49),
    then applies the Lagrange coefficients f, g, ḟ, ġ (Curtis 2014, Eqs. 3.69). dF/dχ equals the
    radius r(χ) ≥ q > 0, so F is strictly increasing: the root lies in
    [0, √μ Δt / q] (or its mirror for Δt < 0), which is kept as a bracket. Each step is a
    Laguerre step (Conway 1986, Celest. Mech. 39, 199) and falls back to bisection whenever it
    leaves the bracket, so convergence is guaranteed for every eccentricity, including e = 1 and
    e well above 1. Bound orbits are first reduced to within half a period of the epoch.
    """
    r0, v0, c = _conic_constants(r0, v0, dt, mu)
    lo, hi = _bracket(c)
    chi = _starting_chi(c, chi_guess, lo, hi)
    chi = _solve_chi(c, chi, lo, hi)
    r, v = _lagrange_states(c, r0, v0, chi)
    if return_chi:
        return r, v, chi
    return r, v


@dataclass(frozen=True)
class _Conic:
    """Per-epoch constants of the universal Kepler equation (broadcast to the epochs' shape)."""

    mu: float
    sqmu: float
    r0n: np.ndarray      # |r0|
    sigma0: np.ndarray   # r0·v0 / √μ
    alpha: np.ndarray    # 2/r0 - v0²/μ (1/a; > 0 bound)
    q: np.ndarray        # perihelion distance
    dtr: np.ndarray      # Δt, reduced to within half a period for bound orbits
    target: np.ndarray   # √μ Δt (reduced)

    @property
    def bound(self):
        return self.alpha > 0

    @property
    def one_m_ar(self):
        return 1.0 - self.alpha * self.r0n


def _conic_constants(r0, v0, dt, mu):
    """The states as (3, n) arrays and the equation's constants on the epochs' shape."""
    r0 = np.asarray(r0, dtype=float)
    v0 = np.asarray(v0, dtype=float)
    dt = np.asarray(dt, dtype=float)
    if r0.ndim == 1:
        r0 = r0[:, None]
    if v0.ndim == 1:
        v0 = v0[:, None]
    shape = np.broadcast_shapes(r0.shape[1:], v0.shape[1:], np.atleast_1d(dt).shape)
    dt = np.broadcast_to(dt, shape).astype(float)

    # per-state constants on the states' own shape, broadcast to the epochs afterwards
    sqmu = np.sqrt(mu)
    r0n = np.sqrt(np.sum(r0 * r0, axis=0))
    v02 = np.sum(v0 * v0, axis=0)
    h = _cross(r0, v0)
    h2 = np.sum(h * h, axis=0)
    if np.any(h2 <= 0.0) or np.any(r0n <= 0.0):
        msg = "state has zero angular momentum (rectilinear motion): not a conic orbit"
        raise ValueError(msg)
    ecc_vec = _cross(v0, h) / mu - r0 / r0n
    ecc = np.sqrt(np.sum(ecc_vec * ecc_vec, axis=0))
    q = np.broadcast_to(h2 / (mu * (1.0 + ecc)), shape)
    sigma0 = np.broadcast_to(np.sum(r0 * v0, axis=0) / sqmu, shape)
    alpha = np.broadcast_to(2.0 / r0n - v02 / mu, shape)
    r0n = np.broadcast_to(r0n, shape)

    # bound orbits: move within half a period of the epoch (f, g are periodic)
    bound = alpha > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        period = np.where(bound, 2.0 * np.pi / np.sqrt(mu * np.abs(alpha) ** 3), np.inf)
    wraps = bound & (np.abs(dt) > 0.5 * period)
    turns = np.round(np.divide(dt, period, out=np.zeros_like(dt), where=wraps))
    dtr = np.where(wraps, dt - turns * np.where(wraps, period, 0.0), dt)
    return r0, v0, _Conic(mu, sqmu, r0n, sigma0, alpha, q, dtr, sqmu * dtr)


def _bracket(c):
    """The interval that holds the root: [0, √μ Δt / q] or its mirror, within one orbit."""
    limit = np.abs(c.target) / c.q
    with np.errstate(divide="ignore", invalid="ignore"):
        # within half a period |ΔM| <= π, so |ΔE| <= π + 2e < 2π: χ = √a ΔE stays below 2π√a
        one_orbit = np.where(c.bound, 2.0 * np.pi / np.sqrt(np.abs(c.alpha)), np.inf)
    limit = np.minimum(limit, one_orbit)
    lo = np.where(c.target < 0, -limit, 0.0)
    hi = np.where(c.target < 0, 0.0, limit)
    return lo, hi


def _starting_chi(c, chi_guess, lo, hi):
    """The first χ: the caller's warm start, else the usual starters, within the bracket."""
    if chi_guess is not None:
        return np.clip(np.broadcast_to(np.asarray(chi_guess, dtype=float), c.target.shape),
                       lo, hi)
    chi = c.target / c.r0n
    chi = np.where(c.bound, c.target * c.alpha, chi)
    # hyperbolic starter (Vallado 2013, Algorithm 8)
    hyp = c.alpha < 0
    if np.any(hyp):
        mu, alpha, dtr = c.mu, c.alpha, c.dtr
        with np.errstate(divide="ignore", invalid="ignore"):
            sgn = np.sign(dtr)
            a = 1.0 / alpha
            arg = (-2.0 * mu * alpha * dtr) / (
                c.sigma0 * c.sqmu + sgn * np.sqrt(-mu * a) * c.one_m_ar)
            guess = sgn * np.sqrt(-a) * np.log(arg)
        chi = np.where(hyp & np.isfinite(guess), guess, chi)
    return np.clip(chi, lo, hi)


def _solve_chi(c, chi, lo, hi):
    """Laguerre steps guarded by bisection in [lo, hi] until F(χ) = 0 at rounding level."""
    n = _LAGUERRE_N
    sigma0, one_m_ar, r0n, alpha, target = c.sigma0, c.one_m_ar, c.r0n, c.alpha, c.target
    scale = np.maximum(np.abs(target), np.sqrt(c.q) * c.q) + 1e-300
    done = np.abs(target) == 0.0
    chi = np.where(done, 0.0, chi)
    for _ in range(_MAX_ITER):
        with np.errstate(over="ignore", invalid="ignore"):
            z = alpha * chi * chi
            c2, c3 = stumpff_c2c3(z)
            x2 = chi * chi
            t1 = sigma0 * x2 * c2
            t2 = one_m_ar * x2 * chi * c3
            t3 = r0n * chi
            fval = t1 + t2 + t3 - target
            # rounding level of F: its terms can be much larger than F near the root
            noise = 4.5e-16 * (np.abs(t1) + np.abs(t2) + np.abs(t3) + np.abs(target))
            dval = sigma0 * chi * (1.0 - z * c3) + one_m_ar * x2 * c2 + r0n
            ddval = sigma0 * (1.0 - z * c2) + one_m_ar * chi * (1.0 - z * c3)
            ok = np.isfinite(fval)
            pos = ~ok | (fval > 0)
            hi = np.where(pos & ~done, np.minimum(hi, chi), hi)
            lo = np.where(~pos & ~done, np.maximum(lo, chi), lo)
            disc = np.sqrt(np.abs((n - 1.0) ** 2 * dval**2 - n * (n - 1.0) * fval * ddval))
            step = n * fval / (dval + np.sign(dval) * disc)
            new = chi - step
            bad = ~np.isfinite(new) | (new < lo) | (new > hi)
            new = np.where(bad, 0.5 * (lo + hi), new)
        at_root = ok & ((np.abs(fval) <= 2e-16 * scale) | (np.abs(fval) <= noise))
        new = np.where(at_root, chi, new)
        converged = at_root | (np.abs(new - chi) <= 4e-15 * np.abs(chi))
        converged |= (hi - lo) <= 4e-16 * np.maximum(np.abs(lo), np.abs(hi))
        chi = np.where(done, chi, new)
        done = done | converged
        if np.all(done):
            return chi
    msg = "universal Kepler equation did not converge"  # pragma: no cover - bisection guards
    raise RuntimeError(msg)


def _lagrange_states(c, r0, v0, chi):
    """Position and velocity from the Lagrange coefficients f, g, ḟ, ġ at χ."""
    z = c.alpha * chi * chi
    c2, c3 = stumpff_c2c3(z)
    x2 = chi * chi
    f = 1.0 - x2 * c2 / c.r0n
    g = c.dtr - x2 * chi * c3 / c.sqmu
    r = f * r0 + g * v0
    rn = np.sqrt(np.sum(r * r, axis=0))
    fdot = c.sqmu / (rn * c.r0n) * chi * (z * c3 - 1.0)
    gdot = 1.0 - x2 * c2 / rn
    v = fdot * r0 + gdot * v0
    return r, v


def mean_to_eccentric(mean_anomaly, e):
    """Solve Kepler's equation M = E - e sin E for E (radians), 0 <= e < 1, vectorised.

    Notes
    -----
    Newton iterations from the starter E0 = M + e sin M / (1 - sin(M + e) + sin M)
    (Danby 1988, Eq. 6.6.7 family), over M reduced to [-π, π]; at most a few steps are needed.
    """
    m = np.asarray(mean_anomaly, dtype=float)
    mr = np.remainder(m + np.pi, 2.0 * np.pi) - np.pi
    ecc = np.broadcast_to(np.asarray(e, dtype=float), mr.shape)
    big = np.where(mr >= 0, np.pi, -np.pi)
    ea = np.where(ecc < 0.8, mr + ecc * np.sin(mr), 0.5 * (mr + big))
    for _ in range(50):
        fval = ea - ecc * np.sin(ea) - mr
        step = fval / (1.0 - ecc * np.cos(ea))
        ea = ea - step
        if np.all(np.abs(step) <= 1e-15 * np.maximum(1.0, np.abs(ea))):
            break
    return ea + (m - mr)


def mean_to_hyperbolic(mean_anomaly, e):
    """Solve the hyperbolic Kepler equation M = e sinh H - H for H (radians), e > 1, vectorised.

    Notes
    -----
    Newton iterations from H0 = asinh(M / e) corrected towards ln(2M/e) for large |M|
    (Vallado 2013, Algorithm 4 uses the same equation, Eq. 2-81); the function is convex for
    H > 0, so Newton converges monotonically from above after the first step.
    """
    m = np.asarray(mean_anomaly, dtype=float)
    ecc = np.broadcast_to(np.asarray(e, dtype=float), m.shape)
    sgn = np.where(m < 0, -1.0, 1.0)
    ma = np.abs(m)
    ha = np.where(ma > 6.0 * ecc, np.log(2.0 * ma / ecc + 1.8), np.arcsinh(ma / ecc))
    # start above the root, where Newton on this convex function is monotone
    ha = np.maximum(ha, np.arcsinh(ma / ecc))
    for _ in range(100):
        fval = ecc * np.sinh(ha) - ha - ma
        step = fval / (ecc * np.cosh(ha) - 1.0)
        ha = ha - step
        if np.all(np.abs(step) <= 1e-15 * np.maximum(1.0, ha)):
            break
    return sgn * ha


def _atan_ratio(x, hyperbolic):
    """Return atan(x)/x (or atanh(x)/x when ``hyperbolic``), exact to rounding near x = 0."""
    x = np.asarray(x, dtype=float)
    out = np.ones_like(x)
    small = np.abs(x) < 1e-4
    xs = x[small]
    sgn = np.where(hyperbolic, 1.0, -1.0)
    sgn_small = np.broadcast_to(sgn, x.shape)[small]
    out[small] = 1.0 + sgn_small * xs**2 / 3.0 + xs**4 / 5.0
    big = ~small
    xb = x[big]
    hyp = np.broadcast_to(hyperbolic, x.shape)[big]
    with np.errstate(invalid="ignore", divide="ignore"):
        out[big] = np.where(hyp, np.arctanh(np.clip(xb, -1.0, 1.0)), np.arctan(xb)) / xb
    return out


def perihelion_chi(nu, q, e):
    """Universal anomaly χ from perihelion for true anomaly ``nu`` (radians).

    Notes
    -----
    χ = √a E (ellipse), √p tan(ν/2) (parabola), √(-a) H (hyperbola) (Battin 1999, Sect. 4.5),
    written for every conic as χ = 2 √(q/(1+e)) D · g(x), D = tan(ν/2),
    x = √(|1-e|/(1+e)) D and g(x) = atan(x)/x (e < 1) or atanh(x)/x (e > 1), which is continuous
    through e = 1 (tan(E/2) = √((1-e)/(1+e)) tan(ν/2), tanh(H/2) = √((e-1)/(e+1)) tan(ν/2)).
    """
    d = np.tan(0.5 * np.asarray(nu, dtype=float))
    x = np.sqrt(abs(1.0 - e) / (1.0 + e)) * d
    return 2.0 * np.sqrt(q / (1.0 + e)) * d * _atan_ratio(x, e > 1.0)


def true_anomaly_from_state(r, v, mu):
    """Return the true anomaly (radians, in (-π, π]) of states ``r``, ``v`` of shape (3, n).

    Notes
    -----
    ν = atan2((ê × r)·ĥ, ê·r) with the eccentricity vector e = v × h / μ - r/|r|
    (Curtis 2014, Eqs. 2.40, 4.10-4.13); undefined (returned as the argument of latitude) for a
    circular orbit.
    """
    r = np.asarray(r, dtype=float)
    v = np.asarray(v, dtype=float)
    h = _cross(r, v)
    rn = np.sqrt(np.sum(r * r, axis=0))
    ecc_vec = _cross(v, h) / mu - r / rn
    hn = np.sqrt(np.sum(h * h, axis=0))
    y = np.sum(_cross(ecc_vec, r) * h, axis=0) / hn
    x = np.sum(ecc_vec * r, axis=0)
    return np.arctan2(y, x)
