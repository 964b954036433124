"""The orbit fit's acceleration limit, carried to the distance where the mass loss was measured."""

from astropy import units as u

from photpipe.orbit.limits import AU_D2_TO_M_S2
from photpipe.orbit.nongrav import G_LAWS

__all__ = ["acceleration_limit_from_fit"]


def acceleration_limit_from_fit(nongrav, *, r_h=None, source="orbit fit"):
    """Upper limit on |a| from an orbit fit's ``nongrav`` result, at a heliocentric distance.

    Parameters
    ----------
    nongrav : dict
        The ``nongrav`` part of `~photpipe.orbit.OrbitSolution.to_dict` (``orbit.json``).
    r_h : `~astropy.units.Quantity` ['length'], optional
        Where the limit is wanted (where the mass-loss rate holds); default the fit's
        reference distance.
    source : str, optional
        Where the result came from, for the provenance.

    Returns
    -------
    limit : `~astropy.units.Quantity` ['acceleration'] or None
        None when the fit formed no limit.
    provenance : dict
        ``accel_limit_source``, ``accel_limit_confidence``, ``accel_limit_law``,
        ``accel_limit_r_h_au`` and, when not formed, ``accel_limit_reason``.

    Notes
    -----
    |a(r)| = g(r) |A| for the fitted law, so a limit at r_ref becomes g(r)/g(r_ref) times it
    at r (Marsden, Sekanina & Yeomans 1973, Eq. 1).

    Examples
    --------
    >>> from astropy import units as u
    >>> ng = {"status": "limit", "law": "inverse-square", "reference_distance_au": 1.0,
    ...       "limit_au_d2": 1e-8, "confidence": 0.95}
    >>> lim, prov = acceleration_limit_from_fit(ng, r_h=2.0 * u.au)
    >>> round(float(lim.to_value(u.au / u.day**2)) * 1e9, 3), prov["accel_limit_confidence"]
    (2.5, 0.95)
    """
    law = nongrav.get("law", "water")
    if nongrav.get("status") not in ("limit", "detected") or "limit_au_d2" not in nongrav:
        return None, {"accel_limit_source": source, "accel_limit_confidence": None,
                      "accel_limit_law": law,
                      "accel_limit_reason": nongrav.get("reason", "no limit in the fit")}
    g = G_LAWS[law]
    r_ref = float(nongrav["reference_distance_au"])
    r = r_ref if r_h is None else float(u.Quantity(r_h).to_value(u.au))
    limit = float(nongrav["limit_au_d2"]) * float(g(r)) / float(g(r_ref))
    provenance = {"accel_limit_source": source,
                  "accel_limit_confidence": float(nongrav["confidence"]),
                  "accel_limit_law": law, "accel_limit_r_h_au": r,
                  "accel_limit_m_s2": limit * AU_D2_TO_M_S2}
    return limit * u.au / u.day**2, provenance
