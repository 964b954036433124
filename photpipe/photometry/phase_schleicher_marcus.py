"""The composite dust phase function in the Schleicher-Marcus construction (analytic form).

Schleicher & Bair (2011, AJ 141, 177) published a composite dust phase function for comets as a
table at 1° steps: at small and moderate phase angles it follows the backscattering behaviour
measured for comet 1P/Halley (Schleicher, Millis & Birch 1998, Icarus 132, 397), at large phase
angles the forward-scattering Henyey-Greenstein combination of Marcus (2007, ICQ 29, 39). The table
could not be obtained while this module was written, so the same construction is made here
analytically. Every parameter below is "from memory" and is stated so it can be checked and
replaced; a user table (:mod:`photpipe.photometry.phase_table`) replaces the whole function.

Backscatter part (phase α ≤ ~90°), in the normalised form

    S(α) = a exp(-α / α₀) + (1 - a),   a = 0.74 (from memory),

with α₀ = 15° / ln(a / (Φ₁₅ - 1 + a)) = 18.38° fixed so that S(15°) equals the published
composite value Φ₁₅ = 0.5872 (Schleicher 2010, the composite table at 1° steps, 15° entry); the
earlier recalled α₀ = 20° gave 0.6096 there, 3.8 % high. S(30°) ≈ 0.40 and S(90°) ≈ 0.27 were
recalled from the same table (from memory, unchecked).

Forward part (α ≥ ~90°), the two-term Henyey-Greenstein function of Marcus (2007):

    M(α) = k HG(α; g_f) + (1 - k) HG(α; g_b),
    HG(α; g) = (1 - g²) / (1 + g² + 2 g cos α)^(3/2),
    k = 0.95, g_f = 0.9, g_b = -0.6  (from memory),

where α is the phase angle (the scattering angle is 180° - α, hence the + sign).

The two are joined smoothly in log space across 70°-110° (a cosine-squared weight; this join is
the project's own choice), with M scaled to equal S at 90°, and the result is normalised to 1 at
α = 0°.
"""

import numpy as np

__all__ = ["SCHLEICHER_MARCUS_PARAMETERS", "henyey_greenstein", "schleicher_marcus"]

#: Parameters of the analytic composite ("from memory" except the anchored back-scatter scale;
#: see the module docstring). Checked range: `photpipe.photometry.dust_phase.CHECKED_RANGE_DEG`.
SCHLEICHER_MARCUS_PARAMETERS = {
    "back_amplitude": 0.74,
    "back_scale_deg": 18.380582875962098,  # anchored: S(15°) = 0.5872 (Schleicher 2010)
    "k": 0.95,
    "g_forward": 0.9,
    "g_back": -0.6,
    "join_deg": 90.0,
    "join_half_width_deg": 20.0,
}


def henyey_greenstein(phase_deg, g):
    """Henyey-Greenstein function written in terms of the phase angle.

    Parameters
    ----------
    phase_deg : array-like
        Phase angle α in degrees (scattering angle 180° - α).
    g : float
        Asymmetry parameter (> 0 forward-scattering).

    Returns
    -------
    value : ndarray
        (1 - g²) / (1 + g² + 2 g cos α)^(3/2) (Henyey & Greenstein 1941, ApJ 93, 70).

    Examples
    --------
    >>> round(float(henyey_greenstein(90.0, 0.0)), 6)
    1.0
    """
    c = np.cos(np.radians(np.asarray(phase_deg, dtype=float)))
    return (1.0 - g * g) / (1.0 + g * g + 2.0 * g * c) ** 1.5


def _marcus(phase_deg, p):
    return (p["k"] * henyey_greenstein(phase_deg, p["g_forward"])
            + (1.0 - p["k"]) * henyey_greenstein(phase_deg, p["g_back"]))


def _back(phase_deg, p):
    a = p["back_amplitude"]
    return a * np.exp(-np.asarray(phase_deg, dtype=float) / p["back_scale_deg"]) + (1.0 - a)


def schleicher_marcus(phase_deg):
    """Composite dust phase function, normalised to 1 at 0° phase.

    Parameters
    ----------
    phase_deg : array-like
        Phase angle(s) in degrees, 0-180.

    Returns
    -------
    phi : ndarray
        Φ(α) / Φ(0°).

    Raises
    ------
    ValueError
        If a phase angle is outside 0-180° or not finite.

    Notes
    -----
    See the module docstring for the construction and its parameters
    (Schleicher & Bair 2011, AJ 141, 177; Marcus 2007, ICQ 29, 39); parameters are from memory.

    Examples
    --------
    >>> float(schleicher_marcus(0.0))
    1.0
    >>> bool(schleicher_marcus(30.0) < 0.5 < schleicher_marcus(10.0))
    True
    """
    a = np.asarray(phase_deg, dtype=float)
    if not np.all(np.isfinite(a) & (a >= 0.0) & (a <= 180.0)):
        msg = f"'phase_deg' must be finite and within 0-180 deg, got {phase_deg}"
        raise ValueError(msg)
    p = SCHLEICHER_MARCUS_PARAMETERS
    j, hw = p["join_deg"], p["join_half_width_deg"]
    scale = _back(j, p) / _marcus(j, p)
    log_s = np.log(_back(a, p))
    log_m = np.log(scale * _marcus(a, p))
    t = np.clip((a - (j - hw)) / (2.0 * hw), 0.0, 1.0)
    w = np.sin(0.5 * np.pi * t) ** 2
    phi = np.exp((1.0 - w) * log_s + w * log_m)
    # S(0) = 1 and the forward part carries no weight at 0 deg, so Φ(0) = 1 already.
    return phi if phi.ndim else float(phi)
