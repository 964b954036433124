"""Nucleus size with the H error and the albedo range carried through by Monte Carlo."""

from dataclasses import dataclass, field

import numpy as np
from astropy import units as u

from photpipe.size._albedo_draws import ALBEDO_PRIORS
from photpipe.size._checks import albedo_interval, magnitude
from photpipe.size._solar import resolve_solar_magnitude
from photpipe.size.diameter import size_constant

__all__ = ["SizeEstimate", "size_estimate"]


@dataclass(frozen=True)
class SizeEstimate:
    """Effective diameter of a nucleus as a median and an interval over the assumptions.

    Attributes
    ----------
    diameter, diameter_lo, diameter_hi : `~astropy.units.Quantity` ['length']
        Median and the ends of the central ``interval`` of the diameter samples (km).
    H, H_err : float
        Absolute magnitude and its 1-sigma error (mag) that were sampled.
    band : str
        Band of H.
    m_sun : float
        Solar magnitude used for the size constant.
    albedo_lo, albedo_hi : float
        The assumed geometric-albedo range (equal for a fixed albedo).
    albedo_prior : str
        How albedos were drawn across the range (``"uniform"`` or ``"log-uniform"``).
    interval : float
        Probability content of [diameter_lo, diameter_hi].
    n_samples : int
        Number of Monte Carlo samples.
    diameter_samples : `~astropy.units.Quantity` ['length']
        The samples themselves (not part of ``to_dict``).
    H_median, H_err_total : float
        Median and half the central 68 % range of the H draws, the phase-coefficient draws
        included (equal to ``H`` and ``H_err`` without them).
    phase : `~photpipe.size.PhaseCoefficient` or None
        How the phase coefficient was drawn.
    """

    diameter: u.Quantity
    diameter_lo: u.Quantity
    diameter_hi: u.Quantity
    H: float
    H_err: float
    band: str
    m_sun: float
    albedo_lo: float
    albedo_hi: float
    albedo_prior: str
    interval: float
    n_samples: int
    diameter_samples: u.Quantity = field(repr=False, compare=False)
    H_median: float = float("nan")
    H_err_total: float = float("nan")
    phase: object = None

    @property
    def radius(self):
        """Median effective radius (km)."""
        return 0.5 * self.diameter

    @property
    def radius_lo(self):
        """Lower end of the radius interval (km)."""
        return 0.5 * self.diameter_lo

    @property
    def radius_hi(self):
        """Upper end of the radius interval (km)."""
        return 0.5 * self.diameter_hi

    def to_dict(self):
        """Return the estimate as plain numbers (km, mag), without the samples."""
        return {
            "diameter_km": float(self.diameter.to_value(u.km)),
            "diameter_lo_km": float(self.diameter_lo.to_value(u.km)),
            "diameter_hi_km": float(self.diameter_hi.to_value(u.km)),
            "H_mag": self.H, "H_err_mag": self.H_err, "band": self.band, "m_sun_mag": self.m_sun,
            "albedo_lo": self.albedo_lo, "albedo_hi": self.albedo_hi,
            "albedo_prior": self.albedo_prior, "interval": self.interval,
            "n_samples": self.n_samples, "H_median_mag": self.H_median,
            "H_err_total_mag": self.H_err_total,
        }


def size_estimate(H, H_err, *, albedo=0.04, band="V", m_sun=None, albedo_prior="uniform",
                  interval=0.6827, n_samples=100_000, rng=None, phase=None):
    """Sample H and the albedo, and summarise the implied diameters.

    Parameters
    ----------
    H : float or `~astropy.units.Quantity` ['mag']
        Absolute magnitude (rotation-averaged m(1, 1, 0)) in ``band``.
    H_err : float or `~astropy.units.Quantity` ['mag']
        1-sigma error of H (>= 0); H is drawn from a normal distribution.
    albedo : float or (float, float), optional
        Geometric albedo: one value, or a (lo, hi) range. Default 0.04, the common-practice
        value for comet nuclei (range 0.02-0.06, Lamy et al. 2004, Comets II, from memory).
    band : str, optional
        Band of H and the albedo.
    m_sun : float, optional
        Solar magnitude of the band at 1 AU; overrides the built-in table.
    albedo_prior : {"uniform", "log-uniform"}, optional
        Distribution of albedo across the range.
    interval : float, optional
        Central probability content of the reported interval (default 0.6827, "1 sigma").
    n_samples : int, optional
        Number of samples (>= 100).
    rng : `numpy.random.Generator` or int or None, optional
        Random generator or seed.
    phase : `~photpipe.size.PhaseCoefficient`, optional
        The phase coefficient behind H, drawn in every sample (its range or its fit): each
        H sample moves by ``(β_nominal - β) ᾱ``. None keeps β exact (H as given).

    Returns
    -------
    SizeEstimate

    Raises
    ------
    ValueError
        For a non-finite H, a negative or non-finite H_err, an albedo outside (0, 1], an
        unknown prior, or too few samples.

    Notes
    -----
    Each sample is ``D = C / sqrt(p) 10^(-H/5)`` with ``C = 2 AU 10^(m_sun/5)`` (Pravec & Harris
    2007, Appendix A). The interval is the quantile range of the samples. It measures what the
    H error and the stated albedo range do to D; it is not an error on the true albedo.

    Examples
    --------
    >>> est = size_estimate(15.0, 0.0, albedo=0.04, n_samples=1000, rng=1)
    >>> print(f"{est.diameter.to_value('km'):.2f}")
    6.65
    """
    h = float(magnitude(H, "H"))
    h_err = float(magnitude(H_err, "H_err"))
    if h_err < 0:
        msg = f"'H_err' must be >= 0, got {h_err}"
        raise ValueError(msg)
    lo, hi = albedo_interval(albedo, "albedo")
    if albedo_prior not in ALBEDO_PRIORS:
        msg = f"unknown albedo_prior {albedo_prior!r}; choose from {sorted(ALBEDO_PRIORS)}"
        raise ValueError(msg)
    n = int(n_samples)
    if n < 100:
        msg = f"'n_samples' must be at least 100, got {n_samples}"
        raise ValueError(msg)
    if not 0 < interval < 1:
        msg = f"'interval' must be in (0, 1), got {interval}"
        raise ValueError(msg)
    rng = np.random.default_rng(rng)
    m_sun_used, _ = resolve_solar_magnitude(band, m_sun)
    c = size_constant(m_sun=m_sun_used).to_value(u.km)

    h_draw = rng.normal(h, h_err, n) if h_err > 0 else np.full(n, h)
    if phase is not None:
        h_draw = h_draw + phase.h_offsets(rng, n)
    h16, h50, h84 = np.quantile(h_draw, [0.158655, 0.5, 0.841345])
    p_draw = ALBEDO_PRIORS[albedo_prior](rng, lo, hi, n) if hi > lo else np.full(n, lo)
    d = c / np.sqrt(p_draw) * 10.0 ** (-0.2 * h_draw)
    tail = 0.5 * (1.0 - interval)
    q_lo, q_med, q_hi = np.quantile(d, [tail, 0.5, 1.0 - tail])
    return SizeEstimate(
        diameter=q_med * u.km, diameter_lo=q_lo * u.km, diameter_hi=q_hi * u.km,
        H=h, H_err=h_err, band=str(band), m_sun=float(m_sun_used),
        albedo_lo=float(lo), albedo_hi=float(hi), albedo_prior=albedo_prior,
        interval=float(interval), n_samples=n, diameter_samples=d * u.km,
        H_median=float(h50), H_err_total=float(0.5 * (h84 - h16)), phase=phase,
    )
