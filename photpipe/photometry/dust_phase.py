"""Dust phase functions by name, and the A(θ)fρ -> A(0°)fρ correction."""

from astropy import units as u

from photpipe._quantity import as_value

from .phase_linear import linear_phase
from .phase_schleicher_marcus import schleicher_marcus
from .phase_table import tabulated_phase

__all__ = ["DUST_PHASE_FUNCTIONS", "dust_phase", "afrho_at_zero_phase"]

#: name -> function(phase_deg, **options) returning Φ(α)/Φ(0).
DUST_PHASE_FUNCTIONS = {
    "schleicher-marcus": lambda a, **kw: schleicher_marcus(a),
    "linear": lambda a, *, coefficient=0.035, **kw: linear_phase(a, coefficient=coefficient),
    "table": lambda a, *, table=None, **kw: tabulated_phase(a, table=table),
}


def dust_phase(phase, *, method="schleicher-marcus", table=None, coefficient=None):
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

    Returns
    -------
    phi : float or ndarray
        Φ(α)/Φ(0°), dimensionless.

    Examples
    --------
    >>> import astropy.units as u
    >>> round(float(dust_phase(10 * u.deg, method="linear", coefficient=0.04 * u.mag / u.deg)), 6)
    0.691831
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
    return func(a, **options)


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
