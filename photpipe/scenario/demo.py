"""The invented demo scenario: comet Vesperine seen from Kettle Rock on 2026-12-01.

Everything here is invented: the object, its hyperbolic orbit (in ``configs/demo.toml``), the
site, the camera and the nucleus. ``sample_frames/make_sample_frames.py`` renders the shipped night
from these values and the geometry photpipe itself computes from the demo orbit, so the pipeline's
answers can be compared with :data:`DEMO_TRUTH`.
"""

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.table import QTable

from .comet import CometSpec
from .instrument import Instrument
from .night import ScienceExposure

__all__ = ["DEMO_INSTRUMENT", "DEMO_TRUTH", "demo_nucleus_mag", "demo_a0frho", "demo_exposures",
           "demo_truth_table"]

#: The invented camera: a 0.6 m f/4 reflector with a 400x400 crop of a 15 µm CCD (1.5"/pix).
DEMO_INSTRUMENT = Instrument(
    shape=(400, 400), pixel_scale=1.5 * u.arcsec, gain=2.0 * u.electron / u.adu,
    read_noise=8.0 * u.electron, bias_level=1050 * u.adu, saturation=60000 * u.adu,
    dark_rate=0.03 * u.electron / u.s, pattern_seed=2026,
    name="invented 0.6 m f/4 reflector, CCD (demo)")

#: The truth of the demo scenario (all invented).
DEMO_TRUTH = {
    "band": "R",
    "nucleus_H_mag": 14.0,              # absolute R magnitude of the nucleus
    "nucleus_phase_coeff_mag_deg": 0.035,
    "rotation_period_h": 5.4,           # double-peaked lightcurve
    "rotation_amplitude_mag": 0.30,     # peak to peak
    "rotation_epoch_mjd": 61010.0,
    "a0frho_cm_at_1au": 420.0,          # A(0)frho at r_h = 1 AU
    "afrho_rh_slope": -2.0,             # A(0)frho ∝ r_h^k
    "zero_point_mag": 23.8,             # magnitude giving 1 electron/s
    "sky_mag_arcsec2": 20.6,
    "m_sun": -27.15,                    # Cousins R, Vega (Willmer 2018, ApJS 236, 47)
    "exptime_s": 40.0,
}


def demo_nucleus_mag(time, r_h, delta, phase):
    """Apparent R magnitude of the demo nucleus (linear phase law, double-peaked lightcurve).

    Parameters
    ----------
    time : `~astropy.time.Time`
    r_h, delta : `~astropy.units.Quantity` ['length']
    phase : `~astropy.units.Quantity` ['angle']

    Returns
    -------
    mag : `~astropy.units.Quantity` [mag]
    """
    t = DEMO_TRUTH
    rot = 2 * np.pi * (time.mjd - t["rotation_epoch_mjd"]) * 24.0 / t["rotation_period_h"]
    light = 0.5 * t["rotation_amplitude_mag"] * np.cos(2 * rot)  # two maxima per rotation
    mag = (t["nucleus_H_mag"] + 5 * np.log10(r_h.to_value(u.au) * delta.to_value(u.au))
           + t["nucleus_phase_coeff_mag_deg"] * phase.to_value(u.deg) + light)
    return mag * u.mag


def demo_a0frho(r_h):
    """A(0)fρ of the demo coma at heliocentric distance ``r_h``."""
    t = DEMO_TRUTH
    return t["a0frho_cm_at_1au"] * r_h.to_value(u.au) ** t["afrho_rh_slope"] * u.cm


def demo_exposures(times, geometry, *, phase_function, rng=None):
    """Science exposures of the demo night, following the comet.

    Parameters
    ----------
    times : `~astropy.time.Time`
        Mid-exposure times.
    geometry : `~astropy.table.QTable`
        Observing geometry at ``times`` with columns ``ra, dec, r_h, delta, phase`` and,
        when given, ``ra_rate, dec_rate``: the comet then moves during each exposure, and
        trails on the frame (the telescope tracks the stars, re-pointed on the comet between
        frames).
    phase_function : callable
        ``phase_function(phase) -> float``, the dust phase function normalised at 0°, used to
        turn A(0)fρ into the observed A(θ)fρ.
    rng : `numpy.random.Generator` or int, optional
        Random generator for pointing jitter, seeing and header WCS errors.

    Returns
    -------
    exposures : list of `ScienceExposure`
    """
    rng = np.random.default_rng(rng)
    t = DEMO_TRUTH
    pix2 = DEMO_INSTRUMENT.pixel_scale.to_value(u.arcsec) ** 2
    sky = 10 ** (-0.4 * (t["sky_mag_arcsec2"] - t["zero_point_mag"])) * pix2
    out = []
    for i, time in enumerate(times):
        row = geometry[i]
        phase = u.Quantity(row["phase"])
        a0 = demo_a0frho(u.Quantity(row["r_h"]))
        comet = CometSpec(
            ra=u.Quantity(row["ra"]), dec=u.Quantity(row["dec"]),
            nucleus_mag=demo_nucleus_mag(time, u.Quantity(row["r_h"]),
                                         u.Quantity(row["delta"]), phase),
            afrho=a0 * float(phase_function(phase)), r_h=u.Quantity(row["r_h"]),
            delta=u.Quantity(row["delta"]), m_sun=t["m_sun"], **_rates(row))
        jitter = rng.normal(0, 20.0, 2) * u.arcsec  # re-pointed on the comet every frame
        pointing = SkyCoord(comet.ra, comet.dec).spherical_offsets_by(jitter[0], jitter[1])
        out.append(ScienceExposure(
            time=time, exptime=t["exptime_s"] * u.s, pointing=pointing, comet=comet,
            filter=t["band"], fwhm=rng.uniform(2.3, 3.1) * u.arcsec,
            sky_rate=sky * u.electron / u.s, zero_point=t["zero_point_mag"],
            wcs_offset_pix=tuple(rng.normal(0, 1.5, 2))))
    return out


def _rates(row):
    """The comet's sky-plane rate from a geometry row (none when the geometry has no rates)."""
    if "ra_rate" not in row.colnames:
        return {}
    return {"ra_rate": u.Quantity(row["ra_rate"]), "dec_rate": u.Quantity(row["dec_rate"])}


def demo_truth_table(exposures, night):
    """One row per science frame of what the generator put in (for comparing with results)."""
    rows = []
    for path, tr in night.science.items():
        rows.append((path.rsplit("/", 1)[-1].split(".")[0], tr.time.mjd, tr.comet_x, tr.comet_y,
                     tr.nucleus_flux_e, tr.coma_k_e, tr.afrho_cm, tr.zero_point, tr.fwhm_pix,
                     tr.comet_trail[0], tr.comet_trail[1]))
    names = ("frame", "mjd_utc_mid", "x_pix", "y_pix", "nucleus_flux_e", "coma_k_e",
             "afrho_cm", "zp_mag", "fwhm_pix", "comet_trail_x_pix", "comet_trail_y_pix")
    table = QTable(rows=rows, names=names)
    # no nucleus: an infinitely faint one (the truth any upper limit must hold)
    table["nucleus_mag"] = u.Quantity([np.inf * u.mag if e.comet.nucleus_mag is None
                                       else e.comet.nucleus_mag for e in exposures])
    return table
