"""Exact pixel integrals of a 1/ρ coma (pure model functions).

A steady-state coma of constant outflow has surface brightness Σ(ρ) = K / ρ. Sampling that at pixel
centres is badly wrong near the nucleus (the centre pixel is infinite), so models integrate it over
each pixel exactly. The antiderivative used is

    F(x, y) = ∫∫ dx dy / sqrt(x² + y²) = x asinh(y / |x|) + y asinh(x / |y|)

(a standard integral, e.g. Gradshteyn & Ryzhik 2007, 2.271), evaluated at the four corners of each
pixel. Over a square pixel of side s centred on ρ = 0 the integral is 4 ln(1 + √2) s, about
3.5255 s.
"""

import numpy as np

__all__ = ["inverse_rho_antiderivative", "inverse_rho_pixel_integral", "coma_image"]


def inverse_rho_antiderivative(x, y):
    """Antiderivative F(x, y) of 1/sqrt(x² + y²), with F = 0 on both axes.

    Parameters
    ----------
    x, y : array-like
        Coordinates relative to the coma centre (any length unit, the same for both).

    Returns
    -------
    F : ndarray
        ``x asinh(y/|x|) + y asinh(x/|y|)``, continuous through the axes.

    Examples
    --------
    >>> float(inverse_rho_antiderivative(0.0, 0.0))
    0.0
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    ax = np.abs(x)
    ay = np.abs(y)
    with np.errstate(divide="ignore", invalid="ignore"):
        t1 = np.where(ax > 0, x * np.arcsinh(y / np.where(ax > 0, ax, 1.0)), 0.0)
        t2 = np.where(ay > 0, y * np.arcsinh(x / np.where(ay > 0, ay, 1.0)), 0.0)
    return t1 + t2


def inverse_rho_pixel_integral(x_edges, y_edges):
    """Integral of 1/ρ over every pixel of a grid.

    Parameters
    ----------
    x_edges : ndarray, shape (nx + 1,)
        Pixel edges along x, relative to the coma centre.
    y_edges : ndarray, shape (ny + 1,)
        Pixel edges along y, relative to the coma centre.

    Returns
    -------
    integral : ndarray, shape (ny, nx)
        ∫∫ dx dy / ρ over each pixel, in the edges' length unit.

    Notes
    -----
    For a square pixel of side s centred on the coma the value is 4 ln(1 + √2) s
    (by symmetry, eight times the integral over the triangle 0 ≤ y ≤ x ≤ s/2).

    Examples
    --------
    >>> import numpy as np
    >>> val = inverse_rho_pixel_integral(np.array([-0.5, 0.5]), np.array([-0.5, 0.5]))
    >>> round(float(val[0, 0]), 4)
    3.5255
    """
    xe = np.asarray(x_edges, dtype=float)
    ye = np.asarray(y_edges, dtype=float)
    F = inverse_rho_antiderivative(xe[np.newaxis, :], ye[:, np.newaxis])
    return F[1:, 1:] - F[1:, :-1] - F[:-1, 1:] + F[:-1, :-1]


def coma_image(shape, x0, y0, k):
    """Image of a K/ρ coma integrated exactly over each pixel (no PSF).

    Parameters
    ----------
    shape : tuple of int
        (ny, nx) of the image.
    x0, y0 : float
        Coma centre in pixel coordinates (pixel centres at integers, numpy order).
    k : float
        Coma strength: surface brightness K/ρ with ρ in pixels, in signal per pixel.

    Returns
    -------
    image : ndarray, shape (ny, nx)
        Signal per pixel.

    Examples
    --------
    >>> img = coma_image((5, 5), 2.0, 2.0, 1.0)
    >>> round(float(img[2, 2]), 4)
    3.5255
    """
    ny, nx = shape
    x_edges = np.arange(nx + 1) - 0.5 - x0
    y_edges = np.arange(ny + 1) - 0.5 - y0
    return k * inverse_rho_pixel_integral(x_edges, y_edges)
