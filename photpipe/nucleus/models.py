"""The nucleus + coma image model as a pure function (the fitter lives in `fit`).

    M(x, y) = PSF ⊗ [F_n δ(x - x0, y - y0) + K ρ^-γ (1 + Σ_m a_m cos mθ + b_m sin mθ)] + sky

with ρ, θ measured from (x0, y0) in pixels. The coma is integrated exactly over each pixel near
the centre (`photpipe.models.coma`), the point source is the PSF integrated over the pixels, and
the blur is an FFT convolution on a cutout padded by the PSF's half-width.
"""

import numpy as np

from ._render import ComponentRenderer

__all__ = ["nucleus_coma_image", "nucleus_coma_components"]


def nucleus_coma_components(shape, x0, y0, gamma, psf, *, order=0):
    """Unit-amplitude component images of the model and their names.

    Parameters
    ----------
    shape : tuple of int
        (ny, nx) of the cutout.
    x0, y0 : float
        Nucleus position, pixels (pixel centres at integers).
    gamma : float
        Coma power-law index, 0 < γ < 2.
    psf : `~photpipe.nucleus.PSFModel`
        The frame's PSF.
    order : int, optional
        Highest azimuthal order of the coma modulation (0: none).

    Returns
    -------
    components : ndarray, shape (n, ny, nx)
        Point source (unit flux), coma (K = 1), azimuthal terms (K a_m = 1, K b_m = 1), sky (1).
    names : list of str
        Amplitude names in the same order.

    Examples
    --------
    >>> from photpipe.nucleus.psf import PSFModel
    >>> comps, names = nucleus_coma_components((41, 41), 20.0, 20.0, 1.0,
    ...                                        PSFModel.from_moffat(3.0))
    >>> names
    ['nucleus_flux', 'coma_k', 'sky']
    """
    r = ComponentRenderer(shape, psf, order=order)
    return r.components(x0, y0, gamma), list(r.names)


def nucleus_coma_image(shape, x0, y0, *, nucleus_flux, coma_k, psf, gamma=1.0, sky=0.0,
                       modulation=()):
    """Noise-free model image of a comet: nucleus plus power-law coma, blurred, plus sky.

    Parameters
    ----------
    shape : tuple of int
        (ny, nx).
    x0, y0 : float
        Nucleus position, pixels.
    nucleus_flux : float
        Total nucleus signal (e.g. electrons).
    coma_k : float
        Coma strength K: surface brightness K ρ^-γ, ρ in pixels, signal per pixel.
    psf : `~photpipe.nucleus.PSFModel`
        The PSF.
    gamma : float, optional
        Coma power-law index (1 for a steady-state coma).
    sky : float, optional
        Flat sky per pixel.
    modulation : sequence of (float, float), optional
        Relative (a_m, b_m) for m = 1, 2, ... of the azimuthal modulation.

    Returns
    -------
    image : ndarray, shape (ny, nx)

    Examples
    --------
    >>> from photpipe.nucleus.psf import PSFModel
    >>> img = nucleus_coma_image((61, 61), 30.0, 30.0, nucleus_flux=1000.0, coma_k=0.0,
    ...                          psf=PSFModel.from_moffat(3.0), sky=5.0)
    >>> round(float(img.sum() - 5.0 * 61 * 61))
    1000
    """
    mod = [tuple(m) for m in modulation]
    comps, _ = nucleus_coma_components(shape, x0, y0, gamma, psf, order=len(mod))
    amps = [nucleus_flux, coma_k]
    for a, b in mod:
        amps += [coma_k * a, coma_k * b]
    amps.append(sky)
    return np.tensordot(np.asarray(amps, dtype=float), comps, axes=1)
