"""Linear-in-magnitude dust phase law."""

import numpy as np

__all__ = ["linear_phase"]


def linear_phase(phase_deg, *, coefficient=0.035):
    """Dust phase function falling linearly in magnitude with phase angle.

    Parameters
    ----------
    phase_deg : array-like
        Phase angle(s) in degrees.
    coefficient : float, optional
        Phase coefficient β in mag per degree. The default 0.035 mag/deg is a value commonly used
        for cometary dust at small phase angles (e.g. Meech & Jewitt 1987, A&A 187, 585, found
        0.02-0.04 mag/deg for comet Halley; from memory).

    Returns
    -------
    phi : ndarray
        Φ(α) / Φ(0) = 10^(-0.4 β α).

    Notes
    -----
    Φ(α) = 10^(-0.4 β α) (common practice); normalised to 1 at 0°.

    Examples
    --------
    >>> round(float(linear_phase(10.0, coefficient=0.04)), 6)
    0.691831
    """
    a = np.asarray(phase_deg, dtype=float)
    if not np.all(np.isfinite(a) & (a >= 0.0) & (a <= 180.0)):
        msg = f"'phase_deg' must be finite and within 0-180 deg, got {phase_deg}"
        raise ValueError(msg)
    phi = 10.0 ** (-0.4 * coefficient * a)
    return phi if phi.ndim else float(phi)
