"""Phase laws of a nucleus: the brightness excess at phase angle α over 0° phase.

Pure model functions. Each returns ``m(α) - m(0)`` in magnitudes (positive: fainter at phase),
so a magnitude reduced to unit distances is brought to 0° phase by subtracting it.
"""

import numpy as np

__all__ = ["linear_phase_excess", "hg_phase_functions", "hg_phase_excess", "PHASE_LAWS"]

# Bowell et al. (1989), Asteroids II, Appendix, eqs. (A4)-(A5): constants of the two basis
# functions of the IAU H,G system (values from memory).
_HG_A = (3.332, 1.862)
_HG_B = (0.631, 1.218)
_HG_C = (0.986, 0.238)


def linear_phase_excess(alpha_deg, *, coefficient_mag_per_deg=0.035, **_ignored):
    """Return the magnitude excess of a linear phase law, ``β α``.

    Parameters
    ----------
    alpha_deg : float or ndarray
        Phase angle in degrees.
    coefficient_mag_per_deg : float, optional
        The linear phase coefficient β in mag/deg.

    Returns
    -------
    excess : float or ndarray
        ``m(α) - m(0)`` in magnitudes.

    Notes
    -----
    ``m(α) = m(0) + β α``. The default β = 0.035 mag/deg is the mean of measured cometary nuclei
    (Lamy et al. 2004, "The sizes, shapes, albedos, and colors of cometary nuclei", Comets II,
    p. 223; from memory) and common practice for nuclei without their own phase curve.

    Examples
    --------
    >>> float(linear_phase_excess(20.0))
    0.7000000000000001
    """
    return coefficient_mag_per_deg * np.asarray(alpha_deg, dtype=float)


def hg_phase_functions(alpha_deg):
    r"""Return the two basis functions Φ1(α), Φ2(α) of the IAU H,G system.

    Parameters
    ----------
    alpha_deg : float or ndarray
        Phase angle in degrees, 0 to 120.

    Returns
    -------
    phi1, phi2 : ndarray
        The basis functions, 1 at zero phase.

    Notes
    -----
    Bowell et al. (1989), Asteroids II, Appendix, eqs. (A4)-(A5):

    .. math::

        Φ_i = W Φ_{iS} + (1 - W) Φ_{iL}, \quad
        W = \exp[-90.56 \tan^2(α/2)],

        Φ_{iS} = 1 - \frac{C_i \sin α}{0.119 + 1.341 \sin α - 0.754 \sin^2 α}, \quad
        Φ_{iL} = \exp[-A_i \tan^{B_i}(α/2)],

    with A = (3.332, 1.862), B = (0.631, 1.218), C = (0.986, 0.238) (from memory). Away from
    opposition (α ≳ 25°, where W < 0.01) the functions are the familiar exponentials
    ``exp(-3.33 tan^0.63(α/2))`` and ``exp(-1.87 tan^1.22(α/2))``; the smooth terms describe the
    opposition surge.

    Examples
    --------
    >>> phi1, phi2 = hg_phase_functions(0.0)
    >>> float(phi1), float(phi2)
    (1.0, 1.0)
    """
    alpha = np.radians(np.asarray(alpha_deg, dtype=float))
    tan_half = np.tan(alpha / 2)
    sin_a = np.sin(alpha)
    weight = np.exp(-90.56 * tan_half**2)
    phis = []
    for a, b, c in zip(_HG_A, _HG_B, _HG_C):
        smooth = 1 - c * sin_a / (0.119 + 1.341 * sin_a - 0.754 * sin_a**2)
        linear = np.exp(-a * tan_half**b)
        phis.append(weight * smooth + (1 - weight) * linear)
    return phis[0], phis[1]


def hg_phase_excess(alpha_deg, *, slope_g=0.15, **_ignored):
    """Return the magnitude excess of the IAU H,G system, ``-2.5 log10[(1-G)Φ1 + GΦ2]``.

    Parameters
    ----------
    alpha_deg : float or ndarray
        Phase angle in degrees, 0 to 120.
    slope_g : float, optional
        The slope parameter G. 0.15 is the value adopted when G is unknown (Bowell et al. 1989).

    Returns
    -------
    excess : float or ndarray
        ``m(α) - m(0)`` in magnitudes.

    Notes
    -----
    Bowell et al. (1989), Asteroids II, Appendix, eq. (A1):
    ``V(α) = H + 5 log10(r Δ) - 2.5 log10[(1 - G) Φ1(α) + G Φ2(α)]``, with the basis functions of
    :func:`hg_phase_functions`.

    Examples
    --------
    >>> round(float(hg_phase_excess(10.0)), 3)
    0.658
    """
    phi1, phi2 = hg_phase_functions(alpha_deg)
    return -2.5 * np.log10((1 - slope_g) * phi1 + slope_g * phi2)


#: Phase-law name -> function returning ``m(α) - m(0)``.
PHASE_LAWS = {
    "linear": linear_phase_excess,
    "hg": hg_phase_excess,
}
