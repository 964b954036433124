"""Dust phase functions by name, and the A(θ)fρ -> A(0°)fρ correction.

Each named function has a range of phase angle where it has been checked against published
numbers (`CHECKED_RANGE_DEG`; a user table: its own range). Outside it the correction does not
run away: by default Φ is held at its value at the nearest edge of the range (``beyond="cap"``)
and the caller flags the row ``phase_extrapolated``; ``beyond="refuse"`` gives NaN instead.
For the composite function the upper edge is 110°: the phase range in which nearly all comets
are observed and for which the composite was made (Schleicher 2010, Lowell Observatory
composite dust phase function, web note of 2010 May). Beyond it forward scattering makes Φ rise
(Marcus 2007, ICQ 29, 39), so A(0)fρ formed with the capped Φ is an upper bound.
"""

import numpy as np
from astropy import units as u

from photpipe._quantity import as_value

from .phase_linear import linear_phase
from .phase_schleicher_marcus import schleicher_marcus
from .phase_table import tabulated_phase

__all__ = ["DUST_PHASE_FUNCTIONS", "CHECKED_RANGE_DEG", "PHASE_FLAG", "checked_phase_range",
           "phase_beyond_checked", "dust_phase", "afrho_at_zero_phase"]

#: name -> function(phase_deg, **options) returning Φ(α)/Φ(0).
DUST_PHASE_FUNCTIONS = {
    "schleicher-marcus": lambda a, **kw: schleicher_marcus(a),
    "linear": lambda a, *, coefficient=0.035, **kw: linear_phase(a, coefficient=coefficient),
    "table": lambda a, *, table=None, **kw: tabulated_phase(a, table=table),
}

#: Phase angles (deg) where each named function is checked (see the module notes). The linear
#: law is a small-phase description: 0-60° is the range of the Halley phase coefficients it
#: stands for (Meech & Jewitt 1987, A&A 187, 585; from memory).
CHECKED_RANGE_DEG = {
    "schleicher-marcus": (0.0, 110.0),
    "linear": (0.0, 60.0),
}
#: Row flag for an A(0)fρ formed outside the checked range.
PHASE_FLAG = "phase_extrapolated"
_BEYOND = ("cap", "refuse", "extend")


def checked_phase_range(method="schleicher-marcus", table=None):
    """Phase-angle range (deg) where the named function (or the table) is checked.

    Examples
    --------
    >>> checked_phase_range("schleicher-marcus")
    (0.0, 110.0)
    >>> checked_phase_range(table=([0, 5, 40], [1.0, 0.8, 0.4]))
    (0.0, 40.0)
    """
    if table is not None:
        t_phase = np.asarray(table[0], dtype=float)
        return float(t_phase.min()), float(t_phase.max())
    try:
        return CHECKED_RANGE_DEG[method]
    except KeyError as exc:
        msg = (f"unknown dust phase function {method!r}; choose from "
               f"{', '.join(DUST_PHASE_FUNCTIONS)}")
        raise ValueError(msg) from exc


def phase_beyond_checked(phase, *, method="schleicher-marcus", table=None):
    """True where the phase angle lies outside the function's checked range.

    Examples
    --------
    >>> import astropy.units as u
    >>> phase_beyond_checked([30, 150] * u.deg).tolist()
    [False, True]
    """
    a = as_value(phase, u.deg, "phase")
    lo, hi = checked_phase_range(method, table)
    return (np.asarray(a) < lo) | (np.asarray(a) > hi)


def dust_phase(phase, *, method="schleicher-marcus", table=None, coefficient=None,
               beyond="cap"):
    """Normalised dust phase function Φ(α)/Φ(0°) by name.

    Parameters
    ----------
    phase : `~astropy.units.Quantity` ['angle']
        Phase angle(s).
    method : {"schleicher-marcus", "linear", "table"}, optional
        Which function. A ``table`` given replaces the named function whatever ``method`` says.
    table : tuple of (array-like, array-like), optional
        User table ``(phase_deg, value)``, normalised to 1 at 0°.
    coefficient : `~astropy.units.Quantity` [mag / deg], optional
        Phase coefficient of the ``"linear"`` law (default 0.035 mag/deg, from memory).
    beyond : {"cap", "refuse", "extend"}, optional
        Outside the checked range (`checked_phase_range`): hold Φ at the nearest edge
        (default), return NaN, or evaluate the function as it is.

    Returns
    -------
    phi : float or ndarray
        Φ(α)/Φ(0°), dimensionless.

    Examples
    --------
    >>> import astropy.units as u
    >>> round(float(dust_phase(10 * u.deg, method="linear", coefficient=0.04 * u.mag / u.deg)), 6)
    0.691831
    >>> float(dust_phase(170 * u.deg)) == float(dust_phase(110 * u.deg))   # capped
    True
    """
    a = as_value(phase, u.deg, "phase")
    if table is not None:
        method = "table"
    try:
        func = DUST_PHASE_FUNCTIONS[method]
    except KeyError as exc:
        msg = (f"unknown dust phase function {method!r}; choose from "
               f"{', '.join(DUST_PHASE_FUNCTIONS)}")
        raise ValueError(msg) from exc
    options = {"table": table}
    if coefficient is not None:
        options["coefficient"] = as_value(coefficient, u.mag / u.deg, "coefficient")
    if method == "table" and table is None:
        msg = "dust phase method 'table' needs a 'table' (phase_deg, value)"
        raise ValueError(msg)
    if beyond not in _BEYOND:
        msg = f"'beyond' must be one of {list(_BEYOND)}, got {beyond!r}"
        raise ValueError(msg)
    if beyond == "extend":
        return func(a, **options)
    lo, hi = checked_phase_range(method, table)
    outside = (np.asarray(a) < lo) | (np.asarray(a) > hi)
    phi = np.asarray(func(np.clip(a, lo, hi), **options), dtype=float)
    if beyond == "refuse":
        phi = np.where(outside, np.nan, phi)
    return phi if phi.ndim else float(phi)


def afrho_at_zero_phase(afrho_value, phase, **options):
    """A(0°)fρ = A(α)fρ / Φ(α) with the named dust phase function.

    Parameters
    ----------
    afrho_value : `~astropy.units.Quantity` ['length']
        Afρ measured at phase angle α.
    phase : `~astropy.units.Quantity` ['angle']
        Phase angle α.
    **options
        Passed to :func:`dust_phase` (``method``, ``table``, ``coefficient``).

    Returns
    -------
    a0frho : `~astropy.units.Quantity` ['length']
        Afρ corrected to 0° phase, in the unit of ``afrho_value``.

    Examples
    --------
    >>> import astropy.units as u
    >>> afrho_at_zero_phase(100 * u.cm, 0 * u.deg)
    <Quantity 100. cm>
    """
    if not isinstance(afrho_value, u.Quantity):
        msg = f"'afrho_value' must be a Quantity in cm, got {type(afrho_value).__name__}"
        raise TypeError(msg)
    return afrho_value / dust_phase(phase, **options)
