"""Numerical integration of a massless body among the Sun and the planets (DE421).

The state is barycentric, ICRF axes, AU and AU/day, at TDB Julian dates. The variational
equations are carried along, so every state comes with its partial derivatives with respect to
the state at the epoch and to the non-gravitational parameters.
"""

import math
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from photpipe.geometry._constants import C_AU_PER_DAY
from photpipe.orbit._bodies import PERTURBERS, BodyTrack
from photpipe.orbit.nongrav import WATER_CONSTANTS, inverse_square_g, water_g

__all__ = ["ForceModel", "Trajectory", "integrate", "accelerations"]

#: Integrator tolerances: relative, and absolute for positions (AU), velocities (AU/day).
_RTOL = 1e-12
_ATOL_STATE = 1e-15
#: Days of padding past the arc, for light time and the Hermite table.
_PAD_DAYS = 1.0


@dataclass(frozen=True)
class ForceModel:
    """What pulls on the body.

    Parameters
    ----------
    bodies : tuple of str
        DE421 bodies whose gravity is included (default: Sun, planets, Moon, Pluto).
    relativity : bool
        Add the Sun's first post-Newtonian term (Schwarzschild, harmonic gauge).
    nongrav : tuple of int
        Which of A1, A2, A3 (1, 2, 3) are free parameters; () for gravity only.
    g_law : callable
        g(r) of the non-gravitational acceleration.
    """

    bodies: tuple = PERTURBERS
    relativity: bool = True
    nongrav: tuple = ()
    g_law: object = water_g


def _gravity(r, positions, gm):
    d = r[None, :] - positions                        # (nb, 3)
    d2 = np.einsum("ij,ij->i", d, d)
    inv3 = gm / (d2 * np.sqrt(d2))
    acc = -(inv3[:, None] * d).sum(axis=0)
    # gradient Σ GM (3 d dᵀ / |d|⁵ - I / |d|³)
    grad = 3.0 * np.einsum("i,ij,ik->jk", inv3 / d2, d, d) - inv3.sum() * np.eye(3)
    return acc, grad


def _relativity(r, v, gm_sun):
    # Sun's 1PN term for a test particle (Damour, Soffel & Xu 1991; IERS Conventions 2010,
    # Eq. 10.12 with β = γ = 1 and only the Sun): GM/(c² r³) [(4GM/r - v²) r + 4 (r·v) v]
    rn = np.sqrt(r @ r)
    c2 = C_AU_PER_DAY**2
    return gm_sun / (c2 * rn**3) * ((4.0 * gm_sun / rn - v @ v) * r + 4.0 * (r @ v) * v)


def accelerations(jd, r, v, model, track, a123):
    """Acceleration (AU/day²) and its partials at one epoch.

    Returns
    -------
    acc : ndarray, shape (3,)
    d_r, d_v : ndarray, shape (3, 3)
        Partials by position and velocity.
    d_a : ndarray, shape (3, n_nongrav)
        Partials by the free non-gravitational parameters.
    """
    positions = track.positions(jd)
    acc, d_r = _gravity(r, positions, track.gm)
    d_v = np.zeros((3, 3))
    has_sun = track.names[0] == "sun"
    sun = positions[0] if has_sun else np.zeros(3)
    needs_helio = (model.relativity and has_sun) or np.any(a123) or model.nongrav
    # heliocentric velocity: the Sun moves ~15 m/s about the barycentre
    vh = v - track.sun_velocity(jd) if needs_helio and has_sun else v
    if model.relativity and has_sun:
        acc = acc + _relativity(r - sun, vh, track.gm[0])
    d_a = np.zeros((3, len(model.nongrav)))
    if np.any(a123) or model.nongrav:
        rh = (r - sun).tolist()
        vl = vh.tolist()
        g_law = _SCALAR_LAWS.get(model.g_law, model.g_law)
        basis = _basis_point(rh, vl, g_law)
        acc = acc + a123 @ basis
        d_a = basis[[k - 1 for k in model.nongrav]].T
        if np.any(a123):
            d_r, d_v = _nongrav_partials(rh, vl, a123, g_law, basis, d_r, d_v)
    return acc, d_r, d_v, d_a


def _water_scalar(r):
    c = WATER_CONSTANTS
    x = r / c["r0"]
    return c["alpha"] * x ** (-c["m"]) * (1.0 + x ** c["n"]) ** (-c["k"])


#: The same laws on plain floats: numpy's per-call cost dominates on single values.
_SCALAR_LAWS = {water_g: _water_scalar, inverse_square_g: lambda r: 1.0 / (r * r)}


def _basis_point(rh, v, g_law):
    # g r̂, g t̂, g n̂ (rows) at one point, on Python floats (Marsden et al. 1973, Eq. 1)
    x, y, z = rh
    vx, vy, vz = v
    r = math.sqrt(x * x + y * y + z * z)
    hx, hy, hz = y * vz - z * vy, z * vx - x * vz, x * vy - y * vx
    hn = math.sqrt(hx * hx + hy * hy + hz * hz)
    nx, ny, nz = hx / hn, hy / hn, hz / hn
    ux, uy, uz = x / r, y / r, z / r
    g = g_law(r)
    return g * np.array([[ux, uy, uz],
                         [ny * uz - nz * uy, nz * ux - nx * uz, nx * uy - ny * ux],
                         [nx, ny, nz]])


def _nongrav_partials(rh, v, a123, g_law, basis, d_r, d_v):
    # forward differences of the small non-gravitational term (its partials change the
    # transition matrix by ~|a_ng|/|a_sun|; 1e-7 relative steps are ample)
    ng = a123 @ basis
    hr = 1e-7 * math.sqrt(sum(c * c for c in rh))
    hv = 1e-7 * math.sqrt(sum(c * c for c in v))
    d_r, d_v = d_r.copy(), d_v.copy()
    for j in range(3):
        rj = list(rh)
        rj[j] += hr
        d_r[:, j] += (a123 @ _basis_point(rj, v, g_law) - ng) / hr
        vj = list(v)
        vj[j] += hv
        d_v[:, j] += (a123 @ _basis_point(rh, vj, g_law) - ng) / hv
    return d_r, d_v


def _rhs_factory(model, track, a123, n_par):
    def rhs(t, y):
        r, v = y[0:3], y[3:6]
        acc, d_r, d_v, d_a = accelerations(t, r, v, model, track, a123)
        out = np.empty_like(y)
        out[0:3] = v
        out[3:6] = acc
        if y.size > 6:
            phi = y[6:].reshape(6, n_par)
            dphi = np.empty_like(phi)
            dphi[0:3] = phi[3:6]
            dphi[3:6] = d_r @ phi[0:3] + d_v @ phi[3:6]
            if d_a.size:
                dphi[3:6, 6:] += d_a
            out[6:] = dphi.ravel()
        return out
    return rhs


class Trajectory:
    """States of an integrated body at any TDB date within its span (dense output).

    Attributes
    ----------
    jd_epoch : float
        Epoch of the initial state.
    n_par : int
        6 + the number of free non-gravitational parameters: columns of the partials.
    """

    def __init__(self, jd_epoch, pieces, n_par, span):
        self.jd_epoch = jd_epoch
        self._pieces = pieces      # list of (lo, hi, OdeSolution) in days from the epoch
        self.n_par = n_par
        self.span = span

    def states(self, jd):
        """State and partials at TDB dates.

        Returns
        -------
        y : ndarray, shape (6, n)
            Position and velocity.
        phi : ndarray, shape (n, 6, n_par) or None
            ∂(r, v)/∂(state at epoch, A), when the partials were integrated.
        """
        jd = np.atleast_1d(np.asarray(jd, dtype=float))
        t = jd - self.jd_epoch
        lo, hi = self.span
        if np.any(t < lo - 1e-9) or np.any(t > hi + 1e-9):
            msg = (f"dates outside the integrated span {lo:+.3f} to {hi:+.3f} d from the epoch "
                   f"(asked {t.min():+.3f} to {t.max():+.3f})")
            raise ValueError(msg)
        out = None
        for p_lo, p_hi, sol in self._pieces:
            sel = (t >= p_lo) & (t <= p_hi)
            if not np.any(sel):
                continue
            vals = sol(t[sel])
            if out is None:
                out = np.empty((vals.shape[0], t.size))
            out[:, sel] = vals
        y = out[:6]
        phi = None
        if out.shape[0] > 6:
            phi = out[6:].T.reshape(t.size, 6, self.n_par)
        return y, phi


def integrate(state, jd_epoch, jd_range, *, model=ForceModel(), a123=(0.0, 0.0, 0.0),
              partials=True, track=None, rtol=_RTOL):
    """Integrate a barycentric state from its epoch over a span of TDB dates.

    Parameters
    ----------
    state : ndarray, shape (6,)
        Barycentric position (AU) and velocity (AU/day), ICRF axes, at ``jd_epoch``.
    jd_epoch : float
        TDB Julian date of ``state``.
    jd_range : (float, float)
        First and last TDB dates needed (padded by a day here).
    model : ForceModel, optional
    a123 : sequence of 3 floats, optional
        A1, A2, A3 in AU/day² (the fixed ones are held at these values).
    partials : bool, optional
        Integrate the variational equations too.
    track : BodyTrack, optional
        A body table covering the span, to be reused between calls.
    rtol : float, optional
        Relative tolerance of the integrator.

    Returns
    -------
    Trajectory

    Notes
    -----
    Explicit Runge-Kutta of order 8(5,3) with dense output (Dormand & Prince 1980; Hairer,
    Nørsett & Wanner 1993, Sect. II.10: scipy's DOP853), forward and backward from the epoch.
    Variational equations Φ' = [[0, I], [∂a/∂r, ∂a/∂v]] Φ + [0; ∂a/∂A] (Montenbruck & Gill
    2000, Sect. 7.2).
    """
    lo = min(jd_range[0], jd_epoch) - _PAD_DAYS - jd_epoch
    hi = max(jd_range[1], jd_epoch) + _PAD_DAYS - jd_epoch
    if track is None:
        track = BodyTrack(jd_epoch + lo, jd_epoch + hi, names=model.bodies)
    n_par = 6 + len(model.nongrav)
    y0 = np.asarray(state, dtype=float)
    atol = np.full(6, _ATOL_STATE)
    if partials:
        phi0 = np.zeros((6, n_par))
        phi0[:, :6] = np.eye(6)
        y0 = np.concatenate([y0, phi0.ravel()])
        atol = np.concatenate([atol, np.full(6 * n_par, 1e-12)])
    rhs = _rhs_factory(model, track, np.asarray(a123, dtype=float), n_par)

    def shifted(t, y):
        return rhs(t + jd_epoch, y)

    pieces = []
    for end in (lo, hi):
        if end == 0.0:
            continue
        sol = solve_ivp(shifted, (0.0, end), y0, method="DOP853", rtol=rtol, atol=atol,
                        dense_output=True)
        if not sol.success:
            msg = f"the orbit integration failed: {sol.message}"
            raise RuntimeError(msg)
        pieces.append((min(0.0, end), max(0.0, end), sol.sol))
    return Trajectory(jd_epoch, pieces, n_par, (lo, hi))
