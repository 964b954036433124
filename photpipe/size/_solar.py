"""Apparent magnitudes of the Sun at 1 AU in the bands photpipe calibrates to.

The size constant of a band is ``2 AU 10^(m_sun/5)`` (Pravec & Harris 2007, Appendix A), so the
band's solar magnitude is the only band-dependent number in the H -> D relation.
"""

__all__ = ["SOLAR_MAGNITUDES", "resolve_solar_magnitude"]

#: Band name (lower case) -> (apparent magnitude of the Sun at 1 AU, source).
#: V: the value behind the 1329 km constant, adopted by Pravec & Harris 2007 (Icarus 190, 250,
#: Appendix A) from Campins, Rieke & Lebofsky 1985. The others are Vega-system (Johnson-Cousins)
#: or AB (SDSS) values of Willmer 2018 (ApJS 236, 47, Table 3), quoted from memory.
SOLAR_MAGNITUDES = {
    "v": (-26.762, "Pravec & Harris 2007, Appendix A (Campins et al. 1985)"),
    "u": (-25.96, "Willmer 2018, Table 3, Vega (from memory)"),
    "b": (-26.13, "Willmer 2018, Table 3, Vega (from memory)"),
    "r": (-27.12, "Willmer 2018, Table 3, Cousins R, Vega (from memory)"),
    "rc": (-27.12, "Willmer 2018, Table 3, Cousins R, Vega (from memory)"),
    "i": (-27.47, "Willmer 2018, Table 3, Cousins I, Vega (from memory)"),
    "ic": (-27.47, "Willmer 2018, Table 3, Cousins I, Vega (from memory)"),
    "g": (-26.47, "Willmer 2018, Table 3, SDSS g, AB (from memory)"),
    "sdss_r": (-26.93, "Willmer 2018, Table 3, SDSS r, AB (from memory)"),
    "sdss_i": (-27.05, "Willmer 2018, Table 3, SDSS i, AB (from memory)"),
    "z": (-27.07, "Willmer 2018, Table 3, SDSS z, AB (from memory)"),
}


def resolve_solar_magnitude(band, m_sun=None):
    """Return ``(m_sun, source)`` for a band, or the given ``m_sun`` unchanged.

    Parameters
    ----------
    band : str
        Band name, case-insensitive (``"V"``, ``"R"``, ``"g"``, ...).
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
        If ``m_sun`` is not finite, or the band is not in the table and no ``m_sun`` is given.

    Examples
    --------
    >>> resolve_solar_magnitude("V")[0]
    -26.762
    >>> resolve_solar_magnitude("Z9", -27.0)
    (-27.0, 'given by the caller')
    """
    if m_sun is not None:
        value = float(getattr(m_sun, "value", m_sun))
        if value != value or value in (float("inf"), float("-inf")):
            msg = f"'m_sun' must be a finite magnitude, got {m_sun}"
            raise ValueError(msg)
        return value, "given by the caller"
    key = str(band).strip().lower()
    if key not in SOLAR_MAGNITUDES:
        msg = (f"no solar magnitude known for band {band!r}; pass m_sun= for it "
               f"(known bands: {sorted(SOLAR_MAGNITUDES)})")
        raise ValueError(msg)
    return SOLAR_MAGNITUDES[key]
