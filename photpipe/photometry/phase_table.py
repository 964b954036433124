"""A dust phase function given as a user table (phase angle, normalised value)."""

import numpy as np

__all__ = ["tabulated_phase"]


def tabulated_phase(phase_deg, *, table):
    """Interpolate a user-supplied dust phase function.

    Parameters
    ----------
    phase_deg : array-like
        Phase angle(s) in degrees.
    table : tuple of (array-like, array-like)
        ``(phase_deg, value)``: strictly increasing phase angles in degrees and the phase function
        normalised to 1 at 0°. Reading the file is the caller's business (the CLI).

    Returns
    -------
    phi : ndarray
        Linear interpolation of the table at ``phase_deg``.

    Raises
    ------
    ValueError
        If the table is malformed, not normalised at 0° (when it starts at 0°, within 1 %), or does
        not cover a requested angle.

    Notes
    -----
    Linear interpolation between rows (common practice for tables at 1° steps, such as the
    composite of Schleicher & Bair 2011, AJ 141, 177).

    Examples
    --------
    >>> round(float(tabulated_phase(5.0, table=([0, 10], [1.0, 0.8]))), 6)
    0.9
    """
    try:
        t_phase, t_value = (np.asarray(c, dtype=float) for c in table)
    except (TypeError, ValueError) as exc:
        msg = "'table' must be a pair of numeric arrays (phase_deg, value)"
        raise ValueError(msg) from exc
    if t_phase.ndim != 1 or t_phase.shape != t_value.shape or t_phase.size < 2:
        msg = (f"'table' must hold two 1-d columns of equal length >= 2, got shapes "
               f"{t_phase.shape} and {t_value.shape}")
        raise ValueError(msg)
    if not (np.all(np.isfinite(t_phase)) and np.all(np.isfinite(t_value))
            and np.all(np.diff(t_phase) > 0) and np.all(t_value > 0)):
        msg = "'table' phase angles must increase strictly and values be finite and positive"
        raise ValueError(msg)
    if t_phase[0] == 0.0 and abs(t_value[0] - 1.0) > 0.01:
        msg = f"'table' must be normalised to 1 at 0 deg, got {t_value[0]}"
        raise ValueError(msg)
    a = np.asarray(phase_deg, dtype=float)
    if not np.all(np.isfinite(a) & (a >= t_phase[0]) & (a <= t_phase[-1])):
        msg = (f"phase angle {phase_deg} deg outside the table's range "
               f"{t_phase[0]}-{t_phase[-1]} deg")
        raise ValueError(msg)
    phi = np.interp(a, t_phase, t_value)
    return phi if phi.ndim else float(phi)
