"""The size stage: from a rotation-averaged H to radius, mass, momentum bound and active area.

`assess_nucleus` reads like its plan: the radius from H (Monte Carlo over the H error, the
phase coefficient and the albedo), the mass for the density range, the momentum bound, the
active fraction, then the verdict on the H error. `assess_nucleus_limit` gives the upper limit
when too few frames detect the nucleus. The assumptions come in a few option objects
(`AlbedoAssumption`, `MomentumInputs`, `ActivityInputs`, `SamplingOptions`).
"""

import warnings
from dataclasses import dataclass, fields

from astropy import units as u

from photpipe._warnings import PoorResultWarning
from photpipe.size._checks import geometric_albedo, positive_interval
from photpipe.size._geometry import GEOMETRY_NOTES
from photpipe.size._solar import resolve_solar_magnitude
from photpipe.size.active import DEFAULT_COMPOSITION, active_fraction
from photpipe.size.diameter import radius_from_H
from photpipe.size.magnitude import AbsoluteMagnitude
from photpipe.size.mass import DEFAULT_DENSITY_RANGE, mass_range
from photpipe.size.momentum import compare_with_bound, momentum_mass_bound
from photpipe.size.montecarlo import size_estimate
from photpipe.size.result import SizeResult

__all__ = ["assess_nucleus", "assess_nucleus_limit", "AlbedoAssumption", "MomentumInputs",
           "ActivityInputs", "SamplingOptions", "H_ERR_LIMIT_MAG"]

_G_CM3 = u.g / u.cm**3
#: H error (mag, the phase coefficient's range included) above which a radius is flagged
#: ``h_error_large``: 0.3 mag is ±15 % in radius, about the albedo's own spread (project choice).
H_ERR_LIMIT_MAG = 0.3


@dataclass(frozen=True)
class AlbedoAssumption:
    """Nominal geometric albedo, the range the Monte Carlo draws, and how it draws it."""

    albedo: float = 0.04
    albedo_range: tuple | None = None
    albedo_prior: str = "uniform"


@dataclass(frozen=True)
class MomentumInputs:
    """Gas mass-loss rate, outflow speed and acceleration limit of the momentum bound."""

    mass_loss: u.Quantity | None = None
    outflow_speed: u.Quantity | None = None
    accel_limit: u.Quantity | None = None
    efficiency: float = 1.0


@dataclass(frozen=True)
class ActivityInputs:
    """What the active fraction needs besides the mass-loss rate."""

    activity_r_h: u.Quantity | None = None
    composition: dict | None = None
    sublimation_geometry: str = "subsolar"
    bond_albedo: float = 0.01
    emissivity: float = 0.9


@dataclass(frozen=True)
class SamplingOptions:
    """Monte Carlo sampling: interval content, number of samples, random generator."""

    interval: float = 0.6827
    n_samples: int = 100_000
    rng: object = None


_GROUPS = (AlbedoAssumption, MomentumInputs, ActivityInputs, SamplingOptions)


def _group_keywords(keywords):
    """Sort keyword arguments into the option objects; refuse unknown names."""
    known = {f.name: cls for cls in _GROUPS for f in fields(cls)}
    unknown = sorted(set(keywords) - set(known) - {"density_range"})
    if unknown:
        msg = f"assess_nucleus got unknown keyword(s) {unknown}; known: {sorted(known)}"
        raise TypeError(msg)
    return [cls(**{k: v for k, v in keywords.items() if known.get(k) is cls}) for cls in _GROUPS]


def _momentum_inputs(m):
    """Return True when all three momentum inputs are given, False when the bound is not asked."""
    given = {"mass_loss": m.mass_loss, "outflow_speed": m.outflow_speed,
             "accel_limit": m.accel_limit}
    missing = [k for k, v in given.items() if v is None]
    if not missing:
        return True
    if m.outflow_speed is None and m.accel_limit is None:
        return False  # no bound asked for (a mass-loss rate alone still gives the active area)
    msg = f"the momentum bound needs mass_loss, outflow_speed and accel_limit; missing {missing}"
    raise ValueError(msg)


def _check_h(h):
    if not isinstance(h, AbsoluteMagnitude):
        msg = ("'absolute_magnitude' must be an AbsoluteMagnitude from a lightcurve "
               f"(mean_absolute_magnitude), got {type(h).__name__}")
        raise TypeError(msg)
    if h.n_points < 1:
        msg = "H with no lightcurve behind it: the absolute magnitude has 0 points"
        raise ValueError(msg)


def _base_assumptions(h, est, p, band, density, phase):
    pct = round(100 * est.interval)
    prior = ("fixed" if est.albedo_lo == est.albedo_hi else
             f"{est.albedo_prior} in {est.albedo_lo:g}-{est.albedo_hi:g}")
    out = [
        f"geometric albedo {p:g} nominal, Monte Carlo albedo {prior} (common practice for "
        "comet nuclei; the radius scales as albedo^-1/2)",
        f"H is the rotation-averaged ({h.method}) absolute magnitude of {h.n_points} point(s) in "
        f"band {band}, sampled as normal with sigma {h.H_err:.3g} mag; the radius interval is "
        f"the central {pct}% of {est.n_samples} samples",
        f"size constant C = 2 AU 10^(m_sun/5) with m_sun({band}) = {est.m_sun:g} "
        "(Pravec & Harris 2007, Appendix A)",
        "the nucleus is a sphere of the effective (equal mean cross-section) radius",
        f"bulk density {density[0]:g}-{density[1]:g} g/cm^3 (measured nuclei, e.g. 67P "
        "0.53 g/cm^3; from memory); mass range spans small radius x low density to large x high",
    ]
    if phase is not None:
        out.append(phase.describe())
    return out


def _momentum_step(m, radius, p, density, flags, assumptions):
    if not _momentum_inputs(m):
        return {}
    bound = momentum_mass_bound(m.mass_loss, m.outflow_speed, m.accel_limit,
                                efficiency=m.efficiency)
    cmp = compare_with_bound(radius, bound, albedo=p, density_range=list(density) * _G_CM3)
    assumptions.append(
        f"momentum bound M >= eta Q v / a with eta = {m.efficiency:g}: the acceleration limit "
        "is a true upper limit at the epoch of Q, and all of Q leaves at speed v")
    if not cmp.consistent:
        flags.append("below_momentum_bound")
        warnings.warn(cmp.statement(), PoorResultWarning, stacklevel=3)
    return dict(mass_loss_kg_s=float(u.Quantity(m.mass_loss).to_value(u.kg / u.s)),
                outflow_speed_m_s=float(u.Quantity(m.outflow_speed).to_value(u.m / u.s)),
                accel_limit_m_s2=float(u.Quantity(m.accel_limit).to_value(u.m / u.s**2)),
                momentum_efficiency=float(m.efficiency), bound_statement=cmp.statement(),
                **cmp.to_dict())


def _activity_step(mass_loss, a, radius, flags, assumptions):
    if mass_loss is None:
        return {}
    if a.activity_r_h is None:
        msg = "the active fraction needs 'activity_r_h', the r_h at which the mass loss holds"
        raise ValueError(msg)
    mix = DEFAULT_COMPOSITION if a.composition is None else a.composition
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", PoorResultWarning)
        af = active_fraction(mass_loss, a.activity_r_h, radius, mix,
                             geometry=a.sublimation_geometry, albedo=a.bond_albedo,
                             emissivity=a.emissivity)
    for w in caught:
        warnings.warn(w.message, w.category, stacklevel=3)
    flags += list(af.flags)
    mix_text = ", ".join(f"{k} {v:g}" for k, v in af.composition.items())
    assumptions.append(
        f"active fraction: Q split by mass as {mix_text}, each ice from its own patch in "
        f"energy balance ({GEOMETRY_NOTES[a.sublimation_geometry]}), Bond albedo "
        f"{a.bond_albedo:g}, emissivity {a.emissivity:g}, no heat conducted inward; surface "
        "4 pi R^2 at the median radius")
    return dict(active_fraction=af.fraction,
                active_area_km2=float(af.active_area.to_value(u.km**2)),
                activity_r_h_au=float(af.r_h.to_value(u.au)),
                sublimation_geometry=a.sublimation_geometry, composition=dict(af.composition))


def _h_verdict(est, h_err_limit, flags):
    """Status and reason from the total H error (phase coefficient included)."""
    if est.H_err_total > h_err_limit:
        flags.append("h_error_large")
        reason = (f"the H error ({est.H_err_total:.2f} mag, the phase coefficient's range "
                  f"included) exceeds the {h_err_limit:g} mag limit: the radius is poorly "
                  f"constrained")
        warnings.warn(reason, PoorResultWarning, stacklevel=3)
        return "uncertain", reason
    return "radius", ""


def assess_nucleus(absolute_magnitude, *, band, m_sun=None,
                   density_range=DEFAULT_DENSITY_RANGE, phase=None,
                   h_err_limit=H_ERR_LIMIT_MAG, notes=(), **assumptions):
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
    density_range : `~astropy.units.Quantity` ['mass density'], optional
        Assumed (lo, hi) bulk density; default 0.3-1.0 g/cm^3.
    phase : `~photpipe.size.PhaseCoefficient`, optional
        The phase coefficient behind H, drawn in the Monte Carlo (its sourced range, or its fit
        from the campaign); None takes it as exact.
    h_err_limit : float, optional
        H error (mag, phase coefficient included) above which the radius is flagged
        ``h_error_large`` with status ``"uncertain"``.
    notes : sequence of str, optional
        Further assumptions to state (e.g. how the lightcurve was reduced).
    **assumptions
        Fields of the option objects, by name: `AlbedoAssumption` (``albedo`` 0.04 nominal,
        ``albedo_range``, ``albedo_prior`` "uniform" or "log-uniform"), `MomentumInputs`
        (``mass_loss``, ``outflow_speed``, ``accel_limit``, ``efficiency``), `ActivityInputs`
        (``activity_r_h``, ``composition``, ``sublimation_geometry``, ``bond_albedo``,
        ``emissivity``) and `SamplingOptions` (``interval``, ``n_samples``, ``rng``). A mass-loss
        rate alone gives the active fraction; with the outflow speed and the acceleration limit
        also the momentum bound.

    Returns
    -------
    SizeResult

    Raises
    ------
    TypeError
        If ``absolute_magnitude`` is not an `AbsoluteMagnitude`, or a keyword is unknown.
    ValueError
        For zero or negative albedo, density, acceleration, Q or speed; an H from no points;
        or a partial set of momentum inputs.

    Examples
    --------
    >>> from astropy import units as u
    >>> from photpipe.size import AbsoluteMagnitude
    >>> h = AbsoluteMagnitude(H=15.0, H_err=0.05, n_points=40, method="flux-mean")
    >>> res = assess_nucleus(h, band="V", albedo_range=(0.02, 0.06), n_samples=2000, rng=3)
    >>> print(f"{res.radius_at_albedo_km:.3f} km", res.status)
    3.326 km radius
    """
    _check_h(absolute_magnitude)
    albedo, momentum, activity, sampling = _group_keywords(assumptions)
    h = absolute_magnitude
    p = float(geometric_albedo(albedo.albedo, "albedo"))
    density = positive_interval(density_range, _G_CM3, "density_range")
    est = size_estimate(h.H, h.H_err, band=band, m_sun=m_sun,
                        albedo=(p, p) if albedo.albedo_range is None else albedo.albedo_range,
                        albedo_prior=albedo.albedo_prior, interval=sampling.interval,
                        n_samples=sampling.n_samples, rng=sampling.rng, phase=phase)
    masses = mass_range(u.Quantity([est.radius_lo, est.radius_hi]), list(density) * _G_CM3)
    stated = _base_assumptions(h, est, p, band, density, phase) + list(notes)
    flags = list(h.flags)
    extra = _momentum_step(momentum, est.radius, p, density, flags, stated)
    extra.update(_activity_step(momentum.mass_loss, activity, est.radius, flags, stated))
    status, reason = _h_verdict(est, h_err_limit, flags)
    return SizeResult(
        H_mag=h.H, H_err_mag=h.H_err, band=est.band, m_sun_mag=est.m_sun, n_points=h.n_points,
        H_method=h.method, albedo=p, albedo_lo=est.albedo_lo, albedo_hi=est.albedo_hi,
        albedo_prior=est.albedo_prior, radius_km=float(est.radius.to_value(u.km)),
        radius_lo_km=float(est.radius_lo.to_value(u.km)),
        radius_hi_km=float(est.radius_hi.to_value(u.km)),
        radius_at_albedo_km=float(radius_from_H(h.H, p, band=band,
                                                m_sun=est.m_sun).to_value(u.km)),
        interval=est.interval, n_samples=est.n_samples, density_lo_g_cm3=density[0],
        density_hi_g_cm3=density[1], mass_kg_lo=float(masses.lo.to_value(u.kg)),
        mass_kg_hi=float(masses.hi.to_value(u.kg)), assumptions=tuple(stated),
        flags=tuple(flags), status=status, reason=reason, H_median_mag=est.H_median,
        H_err_total_mag=est.H_err_total, H_err_limit_mag=float(h_err_limit),
        phase_coefficient=None if phase is None else phase.to_dict(), **extra,
    )


def assess_nucleus_limit(h_limit, *, band, reason, n_points, m_sun=None, albedo=0.04,
                         albedo_range=None, phase=None, notes=()):
    """Return the upper limit on the radius when too few frames detect the nucleus.

    Parameters
    ----------
    h_limit : float
        Bright limit on H (:func:`~photpipe.size.absolute_magnitude_limit`).
    band : str
        Band of H.
    reason : str
        Why only a limit (:func:`~photpipe.size.count_detections`).
    n_points : int
        Frames behind the limit.
    m_sun : float, optional
    albedo, albedo_range : optional
        The limit is taken at the lowest albedo of the range (the largest radius).
    phase : `~photpipe.size.PhaseCoefficient`, optional
        The limit is taken at the top of its range (the brightest reduced magnitude).
    notes : sequence of str, optional

    Returns
    -------
    SizeResult
        ``status="upper_limit"``, ``radius_upper_limit_km`` set, radius fields None.

    Examples
    --------
    >>> res = assess_nucleus_limit(17.0, band="V", reason="only 3 of 48 frames detect it",
    ...                            n_points=48, albedo_range=(0.02, 0.06))
    >>> res.status, res.radius_km, round(res.radius_upper_limit_km, 2)
    ('upper_limit', None, 1.87)
    """
    p = float(geometric_albedo(albedo, "albedo"))
    lo = p if albedo_range is None else float(geometric_albedo(min(albedo_range), "albedo"))
    hi = p if albedo_range is None else float(max(albedo_range))
    m_sun_used, _ = resolve_solar_magnitude(band, m_sun)
    h = float(h_limit)
    stated = [f"upper limit at the lowest albedo assumed, {lo:g} (the largest radius)"]
    if phase is not None:
        h += (phase.nominal - (phase.value + phase.error if phase.fitted else phase.hi)) \
            * phase.mean_phase_deg
        stated.append(phase.describe() + "; the limit takes the steepest phase coefficient")
    r = radius_from_H(h, lo, band=band, m_sun=m_sun_used)
    return SizeResult(
        H_mag=h, H_err_mag=None, band=str(band), m_sun_mag=float(m_sun_used),
        n_points=int(n_points), H_method="upper-limit", albedo=p, albedo_lo=lo, albedo_hi=hi,
        albedo_prior="", radius_km=None, radius_lo_km=None, radius_hi_km=None,
        radius_at_albedo_km=None, interval=None, n_samples=0, density_lo_g_cm3=None,
        density_hi_g_cm3=None, mass_kg_lo=None, mass_kg_hi=None,
        assumptions=tuple(stated + list(notes)), flags=("upper_limit",),
        status="upper_limit", reason=reason, radius_upper_limit_km=float(r.to_value(u.km)),
        phase_coefficient=None if phase is None else phase.to_dict())
