"""Rendering the components of the nucleus + coma model on a cutout (private helper).

The components are the images, for unit amplitude, of: the PSF-blurred point source, the
PSF-blurred coma ρ^-γ, the PSF-blurred azimuthal terms ρ^-γ cos mθ and ρ^-γ sin mθ, and a flat
sky. The model is linear in their amplitudes; only the centre and γ enter non-linearly.
"""

import numpy as np
from scipy import fft

from photpipe.models.coma import azimuthal_term_image, power_law_coma_image

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

    The central ``2 * core + 1`` pixels square of the coma (default half-side max(3, FWHM)) is
    done apart, on a grid oversampled ``oversample`` times: a coarse convolution of pixel
    integrals ignores how the cusp's light is placed inside each pixel, an error of ~1-2 % in
    the central pixels for a 3-pixel FWHM. The hand-over between the grids is a cos² taper in ρ
    (from core/3 to core), so that neither part has a step; refined 3x, the blurred coma agrees
    with a 7x oversampled rendering to ~1e-3.
    """

    def __init__(self, shape, psf, *, order=0, core=None, oversample=3):
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
        self.core = int(max(3, np.ceil(psf.fwhm_major_pix))) if core is None else int(core)
        self.oversample = int(oversample)
        if self.oversample % 2 != 1:
            msg = f"'oversample' must be odd (a fine pixel centred on each pixel), got {oversample}"
            raise ValueError(msg)
        if self.core > 0 and self.oversample > 1:
            n = self.oversample
            side = (2 * self.core + 1 + 2 * h) * n
            self.fine_shape = (side, side)
            self.fine_fshape = (fft.next_fast_len(side + (2 * h + 1) * n - 1, real=True),) * 2
            self.fine_kernel_fft = fft.rfft2(psf.kernel(2 * h + 1, oversample=n),
                                             s=self.fine_fshape)

    def convolve(self, padded_image):
        """Blur a padded, pixel-integrated scene; returns the (ny, nx) cutout."""
        ny, nx = self.shape
        h = self.h
        f = fft.irfft2(fft.rfft2(padded_image, s=self.fshape) * self.kernel_fft, s=self.fshape)
        return f[2 * h:2 * h + ny, 2 * h:2 * h + nx]

    def coma(self, x0, y0, gamma):
        """The blurred unit coma ρ^-γ on the cutout, the core refined on a fine grid."""
        h = self.h
        padded = power_law_coma_image(self.padded, x0 + h, y0 + h, 1.0, gamma)
        if self.core <= 0 or self.oversample <= 1:
            return self.convolve(padded)
        c, n = self.core, self.oversample
        ny, nx = self.shape
        # core block in padded pixels, centred on the pixel nearest the nucleus
        px, py = int(np.round(x0)) + h - c, int(np.round(y0)) + h - c
        b = 2 * c + 1
        if px < 0 or py < 0 or px + b > self.padded[1] or py + b > self.padded[0]:
            return self.convolve(padded)
        # fine pixel integrals over the core block; fine pixel f centred at (f + 0.5)/n - 0.5
        bn = b * n
        fxb = (x0 + h - px + 0.5) * n - 0.5
        fyb = (y0 + h - py + 0.5) * n - 0.5
        fine = power_law_coma_image((bn, bn), fxb, fyb, n ** (gamma - 2.0), gamma)
        # a smooth hand-over: the fine part carries w S, the coarse grid the rest, so neither has
        # a step (a step convolved on the coarse grid is what the refinement is meant to avoid)
        cf = (np.arange(bn) + 0.5) / n
        rho = np.hypot(cf[None, :] - (fxb + 0.5) / n, cf[:, None] - (fyb + 0.5) / n)
        r1, r2 = c / 3.0, float(c)
        t = np.clip((rho - r1) / (r2 - r1), 0.0, 1.0)
        fine *= np.cos(0.5 * np.pi * t) ** 2
        padded[py:py + b, px:px + b] -= fine.reshape(b, n, b, n).sum(axis=(1, 3))
        out = self.convolve(padded)
        side = self.fine_shape[0]
        block = np.zeros(self.fine_shape)
        sl = slice(h * n, (h + b) * n)
        block[sl, sl] = fine
        hn = ((2 * h + 1) * n - 1) // 2  # 'same' offset of the odd fine kernel
        f = fft.irfft2(fft.rfft2(block, s=self.fine_fshape) * self.fine_kernel_fft,
                       s=self.fine_fshape)[hn:hn + side, hn:hn + side]
        coarse = f.reshape(side // n, n, side // n, n).sum(axis=(1, 3))
        # coarse covers padded pixels [px - h, px + b + h): cutout pixels shifted by -h
        cx0, cy0 = px - 2 * h, py - 2 * h
        xa, xb = max(cx0, 0), min(cx0 + coarse.shape[1], nx)
        ya, yb = max(cy0, 0), min(cy0 + coarse.shape[0], ny)
        out[ya:yb, xa:xb] += coarse[ya - cy0:yb - cy0, xa - cx0:xb - cx0]
        return out

    def components(self, x0, y0, gamma):
        """Unit-amplitude component images, shape (n_components, ny, nx)."""
        self.n_evaluations += 1
        h = self.h
        out = np.empty((len(self.names),) + self.shape)
        out[0] = self.psf.render(self.shape, x0, y0)
        out[1] = self.coma(x0, y0, gamma)
        i = 2
        for m in range(1, self.order + 1):
            for phase in ("cos", "sin"):
                out[i] = self.convolve(azimuthal_term_image(self.padded, x0 + h, y0 + h, gamma,
                                                            m, phase=phase))
                i += 1
        out[-1] = 1.0
        return out
