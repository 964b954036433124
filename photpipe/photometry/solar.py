"""Apparent magnitudes of the Sun at 1 AU in common photometric bands.

The values are Table 3 of Willmer (2018, ApJS 236, 47), "The absolute magnitude of the Sun in
several filters", which gives the apparent magnitude of the Sun seen from 1 AU in the Vega and AB
systems. Only Johnson V = -26.76 and Cousins R = -27.15 (both Vega) were checked here against the
published values as quoted in the project's issue; every other entry is marked "from memory" in
``SOLAR_MAGNITUDES`` and should be checked against the paper before it is relied on.
"""

from dataclasses import dataclass

from astropy import units as u

__all__ = ["SolarMagnitude", "SOLAR_MAGNITUDES", "BAND_ALIASES", "solar_magnitude"]


@dataclass(frozen=True)
class SolarMagnitude:
    """One tabulated apparent magnitude of the Sun at 1 AU.

    Attributes
    ----------
    band : str
        Canonical band name (e.g. ``"Cousins R"``).
    system : str
        ``"Vega"`` or ``"AB"``.
    mag : float
        Apparent magnitude of the Sun at 1 AU.
    source : str
        Where the number comes from, with "from memory" where it was not checked.
    """

    band: str
    system: str
    mag: float
    source: str


_W18 = "Willmer 2018, ApJS 236, 47, Table 3"
_W18_MEM = _W18 + " (from memory, not checked)"

#: (canonical band, system) -> SolarMagnitude.
SOLAR_MAGNITUDES = {
    (s.band, s.system): s
    for s in (
        SolarMagnitude("Johnson B", "Vega", -26.13, _W18_MEM),
        SolarMagnitude("Johnson V", "Vega", -26.76, _W18 + " (as quoted in issue 4)"),
        SolarMagnitude("Cousins R", "Vega", -27.15, _W18 + " (as quoted in issue 4)"),
        SolarMagnitude("Cousins I", "Vega", -27.47, _W18_MEM),
        SolarMagnitude("Johnson B", "AB", -26.26, _W18_MEM),
        SolarMagnitude("Johnson V", "AB", -26.77, _W18_MEM),
        SolarMagnitude("Cousins R", "AB", -26.97, _W18_MEM),
        SolarMagnitude("Cousins I", "AB", -27.06, _W18_MEM),
        SolarMagnitude("SDSS g", "AB", -26.47, _W18_MEM),
        SolarMagnitude("SDSS r", "AB", -26.93, _W18_MEM),
        SolarMagnitude("SDSS i", "AB", -27.05, _W18_MEM),
        SolarMagnitude("SDSS z", "AB", -27.07, _W18_MEM),
    )
}

#: Short names observers write in headers and catalogue columns -> canonical band names.
BAND_ALIASES = {
    "B": "Johnson B", "V": "Johnson V", "R": "Cousins R", "Rc": "Cousins R", "R_C": "Cousins R",
    "I": "Cousins I", "Ic": "Cousins I", "I_C": "Cousins I",
    "g": "SDSS g", "r": "SDSS r", "i": "SDSS i", "z": "SDSS z",
    "g'": "SDSS g", "r'": "SDSS r", "i'": "SDSS i", "z'": "SDSS z",
}


def solar_magnitude(band, system="Vega"):
    """Apparent magnitude of the Sun at 1 AU in a band.

    Parameters
    ----------
    band : str
        Band name: a canonical name (``"Cousins R"``) or a short alias (``"R"``, ``"V"``, ``"r"``).
    system : {"Vega", "AB"}, optional
        Photometric system of the magnitudes the Sun is compared with.

    Returns
    -------
    m_sun : `~astropy.units.Quantity` [mag]
        The Sun's apparent magnitude at 1 AU.

    Raises
    ------
    ValueError
        If the band or system is not tabulated.

    Notes
    -----
    Values from Willmer (2018, ApJS 236, 47, Table 3); see ``SOLAR_MAGNITUDES[...].source`` for
    which entries were checked and which are recalled.

    Examples
    --------
    >>> solar_magnitude("R")
    <Quantity -27.15 mag>
    >>> solar_magnitude("Johnson V", system="Vega")
    <Quantity -26.76 mag>
    """
    if not isinstance(band, str):
        msg = f"'band' must be a str, got {type(band).__name__}"
        raise TypeError(msg)
    canonical = BAND_ALIASES.get(band.strip(), band.strip())
    entry = SOLAR_MAGNITUDES.get((canonical, system))
    if entry is None:
        known = sorted({f"{b} ({s})" for b, s in SOLAR_MAGNITUDES})
        msg = (f"no solar magnitude for band {band!r} in the {system!r} system; "
               f"tabulated: {', '.join(known)}")
        raise ValueError(msg)
    return entry.mag * u.mag
