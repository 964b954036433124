"""The CCD noise model: per-pixel variance and the signal-to-noise of a measurement.

Pure functions on plain numbers and Quantities; the calibration uses the same terms.
"""

import math

from astropy import units as u

from photpipe._quantity import as_positive_value, as_value

__all__ = ["ccd_snr", "DIGITISATION_SIGMA_ADU"]

#: Standard deviation of the rounding to whole ADU, 1/sqrt(12) adu (uniform quantisation,
#: Merline & Howell 1995, sigma_f ~ 0.289).
DIGITISATION_SIGMA_ADU = 1.0 / math.sqrt(12.0)


def ccd_snr(source, *, n_pix, sky, dark, read_noise, gain=None, n_background=None):
    r"""Signal-to-noise ratio of a source measured in ``n_pix`` pixels (the CCD equation).

    Parameters
    ----------
    source : `~astropy.units.Quantity` [electron]
        Total source electrons in the aperture, N*.
    n_pix : float
        Number of pixels in the aperture.
    sky : `~astropy.units.Quantity` [electron]
        Sky electrons per pixel over the exposure, N_S.
    dark : `~astropy.units.Quantity` [electron]
        Dark-current electrons per pixel over the exposure, N_D.
    read_noise : `~astropy.units.Quantity` [electron]
        Read noise per pixel, N_R.
    gain : `~astropy.units.Quantity` [electron / adu], optional
        Gain G; when given, the digitisation term G**2 sigma_f**2 is included.
    n_background : float, optional
        Pixels used to estimate the background (infinite if None).

    Returns
    -------
    float

    Notes
    -----
    Merline & Howell (1995, Exp. Astron. 6, 163), after Howell (1989, PASP 101, 616):

    .. math::

        S/N = \frac{N_*}{\sqrt{N_* + n_{pix}(1 + n_{pix}/n_B)
              (N_S + N_D + N_R^2 + G^2 \sigma_f^2)}}

    with :math:`\sigma_f \approx 0.289` adu the digitisation noise.

    Examples
    --------
    >>> from astropy import units as u
    >>> e = u.electron
    >>> round(ccd_snr(10000 * e, n_pix=20, sky=100 * e, dark=10 * e, read_noise=5 * e), 3)
    88.736
    """
    n_star = as_value(source, u.electron, "source")
    n_sky = as_value(sky, u.electron, "sky")
    n_dark = as_value(dark, u.electron, "dark")
    n_read = as_value(read_noise, u.electron, "read_noise")
    if n_pix <= 0:
        msg = f"'n_pix' must be positive, got {n_pix}"
        raise ValueError(msg)
    digit = 0.0
    if gain is not None:
        g = as_positive_value(gain, u.electron / u.adu, "gain")
        digit = (g * DIGITISATION_SIGMA_ADU) ** 2
    factor = 1.0 if n_background is None else 1.0 + n_pix / float(n_background)
    noise2 = n_star + n_pix * factor * (n_sky + n_dark + n_read**2 + digit)
    return float(n_star / math.sqrt(noise2))
