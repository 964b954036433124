import numpy as np
import pytest
from astropy import units as u

from photpipe.frames import Prepared, apply_calibration, ccd_snr

E = u.electron


def test_ccd_equation_worked_number():
    # CCD equation, Merline & Howell (1995, Exp. Astron. 6, 163), after Howell (1989,
    # PASP 101, 616), written from memory:
    #   S/N = N* / sqrt(N* + n_pix (1 + n_pix/n_B) (N_S + N_D + N_R^2 + G^2 sigma_f^2))
    # Worked by hand: N* = 10000 e, n_pix = 20, N_S = 100 e, N_D = 10 e, N_R = 5 e, n_B -> inf,
    # no digitisation term: 10000 / sqrt(10000 + 20 * 135) = 10000 / sqrt(12700) = 88.7357
    assert ccd_snr(10000 * E, n_pix=20, sky=100 * E, dark=10 * E,
                   read_noise=5 * E) == pytest.approx(88.7357, rel=1e-5)
    # with n_B = 80: 10000 / sqrt(10000 + 20 * 1.25 * 135) = 10000 / sqrt(13375) = 86.4675
    # (by hand)
    assert ccd_snr(10000 * E, n_pix=20, sky=100 * E, dark=10 * E, read_noise=5 * E,
                   n_background=80) == pytest.approx(86.4675, rel=1e-5)
    # digitisation term with G = 2 e/adu: G^2 sigma_f^2 = 4/12 e^2 (sigma_f = 1/sqrt(12) adu,
    # uniform rounding, common practice): 10000 / sqrt(12700 + 20/3) = 88.7124 (by hand)
    assert ccd_snr(10000 * E, n_pix=20, sky=100 * E, dark=10 * E, read_noise=5 * E,
                   gain=2 * E / u.adu) == pytest.approx(88.7124, rel=1e-5)


def test_variance_plane_sums_to_the_ccd_equation():
    """Noise-free frame, exact masters: the summed variance is the CCD equation's noise^2."""
    gain, rn, t = 1.8, 7.0, 120.0
    star_e = np.zeros((9, 9))
    star_e[3:6, 3:6] = [[300, 900, 300], [900, 3000, 900], [300, 900, 300]]
    sky_e, dark_rate_e = 250.0, 0.05
    bias = np.full(star_e.shape, 980.0, np.float32)
    dark_rate_adu = np.full(star_e.shape, dark_rate_e / gain, np.float32)
    zero = np.zeros(star_e.shape, np.float32)
    prepared = Prepared(bias, zero, dark_rate_adu, zero, np.ones(star_e.shape, np.float32),
                        zero, np.zeros(star_e.shape, np.uint16), exptime=t, gain=gain,
                        read_noise=rn, dark_exptime=t)
    raw = (bias + (star_e + sky_e + dark_rate_e * t) / gain).astype(np.float32)
    data, var, _ = apply_calibration(raw, prepared, saturation=65535.0)
    ap = np.zeros(star_e.shape, bool)
    ap[2:7, 2:7] = True
    n_pix = ap.sum()
    source = (data[ap] - sky_e).sum()
    assert source == pytest.approx(star_e.sum(), rel=1e-5)
    snr_plane = source / np.sqrt(var[ap].sum())
    snr_eq = ccd_snr(star_e.sum() * E, n_pix=n_pix, sky=sky_e * E, dark=dark_rate_e * t * E,
                     read_noise=rn * E, gain=gain * E / u.adu)
    assert snr_plane == pytest.approx(snr_eq, rel=1e-5)


@pytest.mark.parametrize("kwargs, exc, match", [
    pytest.param({"n_pix": 0}, ValueError, "'n_pix' must be positive, got 0", id="n_pix"),
    pytest.param({"sky": 100}, TypeError, "'sky' must be an astropy Quantity", id="no-unit"),
    pytest.param({"gain": -1 * E / u.adu}, ValueError, "'gain' must be finite and positive",
                 id="gain"),
])
def test_bad_arguments(kwargs, exc, match):
    args = dict(n_pix=10, sky=10 * E, dark=1 * E, read_noise=5 * E)
    args.update(kwargs)
    with pytest.raises(exc, match=match):
        ccd_snr(1000 * E, **args)
