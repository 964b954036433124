"""The solar magnitude of the band of H, taken from the project's one table of them.

The size constant of a band is ``2 AU 10^(m_sun/5)`` (Pravec & Harris 2007, Appendix A), so the
band's solar magnitude is the only band-dependent number in the H -> D relation. The values come
from `photpipe.photometry.solar` (Willmer 2018, ApJS 236, 47, Table 3), the same table the Afρ
of the photometry stage uses, so sizes and Afρ rest on one solar spectrum.
"""

from photpipe.photometry.solar import solar_magnitude

__all__ = ["resolve_solar_magnitude"]


def resolve_solar_magnitude(band, m_sun=None):
    """Return ``(m_sun, source)`` for a band, or the given ``m_sun`` unchanged.

    Parameters
    ----------
    band : str
        Band name (``"V"``, ``"R"``, ``"Cousins R"``, ``"r"``, ...). Vega-system magnitudes are
        used where tabulated, AB otherwise (the SDSS bands).
    m_sun : float, optional
        The solar magnitude to use; when given the table is not consulted.

    Returns
    -------
    m_sun : float
        Apparent magnitude of the Sun at 1 AU in the band.
    source : str
        Where the value comes from.

    Raises
    ------
    ValueError
        If ``m_sun`` is not finite, or the band is not tabulated and no ``m_sun`` is given.

    Examples
    --------
    >>> resolve_solar_magnitude("V")[0]
    -26.76
    >>> resolve_solar_magnitude("Z9", -27.0)
    (-27.0, 'given by the caller')
    """
    if m_sun is not None:
        value = float(getattr(m_sun, "value", m_sun))
        if value != value or value in (float("inf"), float("-inf")):
            msg = f"'m_sun' must be a finite magnitude, got {m_sun}"
            raise ValueError(msg)
        return value, "given by the caller"
    if not isinstance(band, str):
        msg = f"'band' must be a str, got {type(band).__name__}"
        raise TypeError(msg)
    for system in ("Vega", "AB"):
        try:
            value = solar_magnitude(band, system=system)
        except ValueError:
            continue
        return float(value.to_value("mag")), f"Willmer 2018 Table 3 ({system}), photpipe.photometry"
    msg = f"no solar magnitude known for band {band!r}; pass m_sun= for it"
    raise ValueError(msg)
