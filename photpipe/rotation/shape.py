"""From lightcurve amplitude to body shape: coma dilution, amplitude-phase effect, axial ratio.

Pure functions on plain floats (magnitudes, degrees).
"""

import numpy as np

__all__ = ["undilute_amplitude", "amplitude_at_zero_phase", "minimum_axial_ratio"]


def undilute_amplitude(model_mag, coma_fraction):
    """Return the nucleus amplitude once a constant coma flux is taken out of a lightcurve.

    Parameters
    ----------
    model_mag : ndarray
        The lightcurve model over one full cycle (magnitudes, finely sampled).
    coma_fraction : float
        Fraction of the mean measured flux that is coma, ``0 <= f_c < 1``.

    Returns
    -------
    amplitude : float
        Peak-to-peak amplitude of the nucleus alone (magnitudes).

    Raises
    ------
    ValueError
        If ``coma_fraction`` is outside [0, 1) or exceeds the faintest point's flux (the coma
        cannot be brighter than the whole measurement).

    Notes
    -----
    Fluxes add: ``F(t) = F_n(t) + F_c`` with ``F_c = f_c <F>`` constant over a rotation, so
    ``A_n = 2.5 log10[(F_max - F_c)/(F_min - F_c)] >= A_obs`` (common practice; e.g. Jewitt &
    Meech 1987, ApJ 317, 992, from memory).

    Examples
    --------
    >>> import numpy as np
    >>> m = -2.5 * np.log10(1 + 0.2 * np.cos(np.linspace(0, 2 * np.pi, 1000)))
    >>> round(undilute_amplitude(m, 0.0), 2), round(undilute_amplitude(m, 0.5), 2)
    (0.44, 0.92)
    """
    coma_fraction = float(coma_fraction)
    if not 0 <= coma_fraction < 1:
        msg = f"'coma_fraction' must be in [0, 1), got {coma_fraction}"
        raise ValueError(msg)
    flux = 10 ** (-0.4 * (np.asarray(model_mag, dtype=float) - np.mean(model_mag)))
    coma = coma_fraction * flux.mean()
    nucleus_min = flux.min() - coma
    if nucleus_min <= 0:
        msg = (f"'coma_fraction' {coma_fraction:g} leaves no nucleus flux at the faintest phase "
               f"(the faintest point is {flux.min() / flux.mean():.3f} of the mean): the coma "
               f"fraction is too large for this lightcurve")
        raise ValueError(msg)
    return float(2.5 * np.log10((flux.max() - coma) / nucleus_min))


def amplitude_at_zero_phase(amplitude, phase_deg, *, slope_per_deg=0.015):
    """Return the amplitude corrected to 0° phase, ``A(0) = A(α) / (1 + s α)``.

    Parameters
    ----------
    amplitude : float
        Peak-to-peak amplitude at phase angle α (magnitudes).
    phase_deg : float
        Phase angle α (degrees), e.g. the mean of the lightcurve's points.
    slope_per_deg : float, optional
        Amplitude-phase slope s (1/deg).

    Returns
    -------
    amplitude0 : float

    Notes
    -----
    Zappalà et al. (1990, A&A 231, 548): amplitudes grow with phase angle as
    ``A(α) = A(0)(1 + s α)``, with s ≈ 0.030 (S types), 0.015 (C types) and 0.013 (M types) per
    degree (from memory). The default 0.015 takes the dark, C-like surface of a nucleus.

    Examples
    --------
    >>> round(amplitude_at_zero_phase(0.5, 20.0), 4)
    0.3846
    """
    return float(amplitude) / (1.0 + slope_per_deg * float(phase_deg))


def minimum_axial_ratio(amplitude0):
    """Return the lower bound on the axial ratio, ``a/b >= 10^(0.4 A(0))``.

    Parameters
    ----------
    amplitude0 : float
        Peak-to-peak amplitude at 0° phase (magnitudes).

    Returns
    -------
    ratio : float

    Notes
    -----
    A triaxial ellipsoid seen equator-on shows ``A = 2.5 log10(a/b)``; any other aspect shows
    less, so the amplitude bounds a/b from below (e.g. Binzel et al. 1989, Asteroids II, p. 416;
    from memory).

    Examples
    --------
    >>> round(minimum_axial_ratio(0.5), 4)
    1.5849
    """
    return float(10 ** (0.4 * float(amplitude0)))
