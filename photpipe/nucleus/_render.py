"""Rendering the components of the nucleus + coma model on a cutout (private helper).

The components are the images, for unit amplitude, of: the PSF-blurred point source, the
PSF-blurred coma ρ^-γ, the PSF-blurred azimuthal terms ρ^-γ cos mθ and ρ^-γ sin mθ, and a flat
sky. The model is linear in their amplitudes; only the centre and γ enter non-linearly.
"""

import numpy as np
from scipy import fft

from .coma import azimuthal_term_image, power_law_coma_image

__all__ = ["ComponentRenderer", "component_names"]


def component_names(order):
    """Names of the linear amplitudes, in the order `ComponentRenderer` returns them."""
    names = ["nucleus_flux", "coma_k"]
    for m in range(1, order + 1):
        names += [f"coma_k_cos{m}", f"coma_k_sin{m}"]
    return names + ["sky"]


class ComponentRenderer:
    """Renders the model components on a (ny, nx) cutout for a PSF, with FFT convolution.

    The coma is integrated over the pixels of a grid padded by the kernel half-width on every
    side, so that coma light from just outside the cutout is blurred into it, and convolved by
    FFT with the PSF kernel (computed once).
    """

    def __init__(self, shape, psf, *, order=0):
        self.shape = tuple(int(s) for s in shape)
        self.psf = psf
        self.order = int(order)
        h = int(psf.half_size)
        self.h = h
        ny, nx = self.shape
        self.padded = (ny + 2 * h, nx + 2 * h)
        self.fshape = (fft.next_fast_len(ny + 4 * h, real=True),
                       fft.next_fast_len(nx + 4 * h, real=True))
        kernel = psf.kernel(2 * h + 1)
        self.kernel_fft = fft.rfft2(kernel, s=self.fshape)
        self.names = component_names(self.order)
        self.n_evaluations = 0

    def convolve(self, padded_image):
        """Blur a padded, pixel-integrated scene; returns the (ny, nx) cutout."""
        ny, nx = self.shape
        h = self.h
        f = fft.irfft2(fft.rfft2(padded_image, s=self.fshape) * self.kernel_fft, s=self.fshape)
        return f[2 * h:2 * h + ny, 2 * h:2 * h + nx]

    def components(self, x0, y0, gamma):
        """Unit-amplitude component images, shape (n_components, ny, nx)."""
        self.n_evaluations += 1
        h = self.h
        out = np.empty((len(self.names),) + self.shape)
        out[0] = self.psf.render(self.shape, x0, y0)
        out[1] = self.convolve(power_law_coma_image(self.padded, x0 + h, y0 + h, 1.0, gamma))
        i = 2
        for m in range(1, self.order + 1):
            for phase in ("cos", "sin"):
                out[i] = self.convolve(azimuthal_term_image(self.padded, x0 + h, y0 + h, gamma,
                                                            m, phase=phase))
                i += 1
        out[-1] = 1.0
        return out
