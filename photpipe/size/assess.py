"""The size stage: from a rotation-averaged H to radius, mass, momentum bound and active area."""

import warnings

from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.size._checks import geometric_albedo, positive_interval
from photpipe.size._geometry import GEOMETRY_NOTES
from photpipe.size.active import DEFAULT_COMPOSITION, active_fraction
from photpipe.size.diameter import radius_from_H
from photpipe.size.magnitude import AbsoluteMagnitude
from photpipe.size.mass import DEFAULT_DENSITY_RANGE, mass_range
from photpipe.size.momentum import compare_with_bound, momentum_mass_bound
from photpipe.size.montecarlo import size_estimate
from photpipe.size.result import SizeResult

__all__ = ["assess_nucleus"]

_G_CM3 = u.g / u.cm**3


def _momentum_inputs(mass_loss, outflow_speed, accel_limit):
    """Return True when all three momentum inputs are given, False when the bound is not asked."""
    given = {"mass_loss": mass_loss, "outflow_speed": outflow_speed, "accel_limit": accel_limit}
    missing = [k for k, v in given.items() if v is None]
    if not missing:
        return True
    if outflow_speed is None and accel_limit is None:
        return False  # no bound asked for (a mass-loss rate alone still gives the active area)
    msg = f"the momentum bound needs mass_loss, outflow_speed and accel_limit; missing {missing}"
    raise ValueError(msg)


def assess_nucleus(absolute_magnitude, *, band, m_sun=None, albedo=0.04, albedo_range=None,
                   albedo_prior="uniform", density_range=DEFAULT_DENSITY_RANGE, mass_loss=None,
                   outflow_speed=None, accel_limit=None, efficiency=1.0, composition=None,
                   activity_r_h=None, sublimation_geometry="subsolar", bond_albedo=0.01,
                   emissivity=0.9, interval=0.6827, n_samples=100_000, rng=None, notes=()):
    """Return the nucleus size, mass, momentum bound and active fraction with their assumptions.

    Parameters
    ----------
    absolute_magnitude : `~photpipe.size.AbsoluteMagnitude`
        The rotation-averaged H of a lightcurve (from
        `~photpipe.size.mean_absolute_magnitude`); a bare number is refused so that every H
        has a lightcurve behind it.
    band : str
        Band of H (selects the solar magnitude unless ``m_sun`` is given).
    m_sun : float, optional
        Solar magnitude of the band at 1 AU.
    albedo : float, optional
        Nominal geometric albedo (default 0.04, common practice for nuclei).
    albedo_range : (float, float), optional
        Albedo range sampled by the Monte Carlo; None samples the nominal value only.
    albedo_prior : {"uniform", "log-uniform"}, optional
    density_range : `~astropy.units.Quantity` ['mass density'], optional
        Assumed (lo, hi) bulk density; default 0.3-1.0 g/cm^3.
    mass_loss : `~astropy.units.Quantity` ['mass/time'], optional
        Gas mass-loss rate Q. Alone it gives the active fraction; with ``outflow_speed`` and
        ``accel_limit`` also the momentum bound.
    outflow_speed : `~astropy.units.Quantity` ['speed'], optional
    accel_limit : `~astropy.units.Quantity` ['acceleration'], optional
        Upper limit on the non-gravitational acceleration.
    efficiency : float, optional
        Momentum-transfer efficiency η in (0, 1].
    composition : dict, optional
        Mass fractions of the sublimating ices (default H2O 0.7, CO2 0.3).
    activity_r_h : `~astropy.units.Quantity` ['length'], optional
        Heliocentric distance at which Q holds; needed for the active fraction.
    sublimation_geometry : str, optional
        Geometry of the sublimation balance (default ``"subsolar"``: fraction is a lower limit).
    bond_albedo, emissivity : float, optional
        Of the ice surface in the sublimation balance.
    interval : float, optional
        Probability content of the radius interval.
    n_samples : int, optional
    rng : `numpy.random.Generator` or int or None, optional
    notes : sequence of str, optional
        Further assumptions to state (e.g. how the lightcurve was reduced).

    Returns
    -------
    SizeResult

    Raises
    ------
    TypeError
        If ``absolute_magnitude`` is not an `AbsoluteMagnitude`.
    ValueError
        For zero or negative albedo, density, acceleration, Q or speed; an H from no points;
        or a partial set of momentum inputs.

    Examples
    --------
    >>> from astropy import units as u
    >>> from photpipe.size import AbsoluteMagnitude
    >>> h = AbsoluteMagnitude(H=15.0, H_err=0.05, n_points=40, method="flux-mean")
    >>> res = assess_nucleus(h, band="V", albedo_range=(0.02, 0.06), n_samples=2000, rng=3)
    >>> print(f"{res.radius_at_albedo_km:.3f} km")
    3.326 km
    """
    if not isinstance(absolute_magnitude, AbsoluteMagnitude):
        msg = ("'absolute_magnitude' must be an AbsoluteMagnitude from a lightcurve "
               f"(mean_absolute_magnitude), got {type(absolute_magnitude).__name__}")
        raise TypeError(msg)
    h = absolute_magnitude
    if h.n_points < 1:
        msg = "H with no lightcurve behind it: the absolute magnitude has 0 points"
        raise ValueError(msg)
    p = float(geometric_albedo(albedo, "albedo"))
    p_range = (p, p) if albedo_range is None else albedo_range
    d_lo, d_hi = positive_interval(density_range, _G_CM3, "density_range")
    est = size_estimate(h.H, h.H_err, albedo=p_range, band=band, m_sun=m_sun,
                        albedo_prior=albedo_prior, interval=interval, n_samples=n_samples,
                        rng=rng)
    r_nom = radius_from_H(h.H, p, band=band, m_sun=est.m_sun)
    masses = mass_range(u.Quantity([est.radius_lo, est.radius_hi]),
                        [d_lo, d_hi] * _G_CM3)
    pct = round(100 * est.interval)
    prior = ("fixed" if est.albedo_lo == est.albedo_hi else
             f"{albedo_prior} in {est.albedo_lo:g}-{est.albedo_hi:g}")
    assumptions = [
        f"geometric albedo {p:g} nominal, Monte Carlo albedo {prior} (common practice for "
        "comet nuclei; the radius scales as albedo^-1/2)",
        f"H is the rotation-averaged ({h.method}) absolute magnitude of {h.n_points} point(s) in "
        f"band {band}, sampled as normal with sigma {h.H_err:.3g} mag; the radius interval is "
        f"the central {pct}% of {est.n_samples} samples",
        f"size constant C = 2 AU 10^(m_sun/5) with m_sun({band}) = {est.m_sun:g} "
        "(Pravec & Harris 2007, Appendix A)",
        "the nucleus is a sphere of the effective (equal mean cross-section) radius",
        f"bulk density {d_lo:g}-{d_hi:g} g/cm^3 (measured nuclei, e.g. 67P 0.53 g/cm^3; "
        "from memory); mass range spans small radius x low density to large x high",
    ]
    assumptions += list(notes)
    flags = list(h.flags)
    fields = {}

    if _momentum_inputs(mass_loss, outflow_speed, accel_limit):
        m_bound = momentum_mass_bound(mass_loss, outflow_speed, accel_limit,
                                      efficiency=efficiency)
        cmp = compare_with_bound(est.radius, m_bound, albedo=p, density_range=[d_lo, d_hi] * _G_CM3)
        fields.update(
            mass_loss_kg_s=float(u.Quantity(mass_loss).to_value(u.kg / u.s)),
            outflow_speed_m_s=float(u.Quantity(outflow_speed).to_value(u.m / u.s)),
            accel_limit_m_s2=float(u.Quantity(accel_limit).to_value(u.m / u.s**2)),
            momentum_efficiency=float(efficiency), bound_statement=cmp.statement(),
            **cmp.to_dict(),
        )
        assumptions.append(
            f"momentum bound M >= eta Q v / a with eta = {efficiency:g}: the acceleration limit "
            "is a true upper limit at the epoch of Q, and all of Q leaves at speed v")
        if not cmp.consistent:
            flags.append("below_momentum_bound")
            warnings.warn(cmp.statement(), PoorResultWarning, stacklevel=2)
    if mass_loss is not None:
        if activity_r_h is None:
            msg = "the active fraction needs 'activity_r_h', the r_h at which the mass loss holds"
            raise ValueError(msg)
        mix = DEFAULT_COMPOSITION if composition is None else composition
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", PoorResultWarning)
            af = active_fraction(mass_loss, activity_r_h, est.radius, mix,
                                 geometry=sublimation_geometry, albedo=bond_albedo,
                                 emissivity=emissivity)
        for w in caught:
            warnings.warn(w.message, w.category, stacklevel=2)
        flags += list(af.flags)
        fields.update(active_fraction=af.fraction,
                      active_area_km2=float(af.active_area.to_value(u.km**2)),
                      activity_r_h_au=float(af.r_h.to_value(u.au)),
                      sublimation_geometry=sublimation_geometry, composition=dict(af.composition))
        mix_text = ", ".join(f"{k} {v:g}" for k, v in af.composition.items())
        assumptions.append(
            f"active fraction: Q split by mass as {mix_text}, each ice from its own patch in "
            f"energy balance ({GEOMETRY_NOTES[sublimation_geometry]}), Bond albedo "
            f"{bond_albedo:g}, emissivity {emissivity:g}, no heat conducted inward; surface "
            "4 pi R^2 at the median radius")
    return SizeResult(
        H_mag=h.H, H_err_mag=h.H_err, band=est.band, m_sun_mag=est.m_sun, n_points=h.n_points,
        H_method=h.method, albedo=p, albedo_lo=est.albedo_lo, albedo_hi=est.albedo_hi,
        albedo_prior=est.albedo_prior, radius_km=float(est.radius.to_value(u.km)),
        radius_lo_km=float(est.radius_lo.to_value(u.km)),
        radius_hi_km=float(est.radius_hi.to_value(u.km)),
        radius_at_albedo_km=float(r_nom.to_value(u.km)), interval=est.interval,
        n_samples=est.n_samples, density_lo_g_cm3=d_lo, density_hi_g_cm3=d_hi,
        mass_kg_lo=float(masses.lo.to_value(u.kg)), mass_kg_hi=float(masses.hi.to_value(u.kg)),
        assumptions=tuple(assumptions), flags=tuple(flags), **fields,
    )
