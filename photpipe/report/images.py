"""Figures of the comet itself: a cut-out with its apertures, Σ(ρ) profiles, the nucleus model.

Images are shown with an asinh stretch (Lupton et al. 2004, PASP 116, 133), which keeps both the
faint coma and the bright centre readable; north is up and east left when the frame's WCS says
so (the arrows drawn come from the WCS, whatever the frame's orientation).
"""

import numpy as np
from astropy import units as u
from astropy.visualization import AsinhStretch, ImageNormalize, PercentileInterval
from matplotlib.patches import Circle

from photpipe._plotting import PALETTE, WIDTH, label_axes, log_axis, new_figure

__all__ = ["cutout_figure", "profile_figure", "nucleus_images_figure", "sky_direction"]


def _norm(image, percentile=99.5):
    finite = np.asarray(image, dtype=float)[np.isfinite(image)]
    if finite.size == 0:
        return None
    return ImageNormalize(finite, interval=PercentileInterval(percentile),
                          stretch=AsinhStretch(0.05))


def sky_direction(wcs, x, y, pa, *, length_pix=20.0):
    """Pixel offset (dx, dy) of ``length_pix`` toward position angle ``pa`` (east of north).

    Examples
    --------
    >>> from astropy.wcs import WCS
    >>> w = WCS(naxis=2)
    >>> w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    >>> w.wcs.cdelt = [-1 / 3600, 1 / 3600]
    >>> w.wcs.crval = [10.0, 20.0]
    >>> dx, dy = sky_direction(w, 0.0, 0.0, 90 * u.deg)  # east: to the left when east is left
    >>> bool(dx < -19), bool(abs(dy) < 0.5)
    (True, True)
    """
    centre = wcs.pixel_to_world(x, y)
    step = 5 * u.arcsec
    ahead = centre.directional_offset_by(u.Quantity(pa, u.deg), step)
    x2, y2 = wcs.world_to_pixel(ahead)
    v = np.array([float(x2) - x, float(y2) - y])
    return tuple(length_pix * v / np.hypot(*v))


def _compass(ax, wcs, x, y, size):
    for pa, text in ((0 * u.deg, "N"), (90 * u.deg, "E")):
        dx, dy = sky_direction(wcs, x, y, pa, length_pix=0.12 * size)
        ax.annotate("", xy=(0.12 * size + dx, 0.12 * size + dy), xytext=(0.12 * size, 0.12 * size),
                    xycoords="data", arrowprops={"arrowstyle": "->", "color": "white", "lw": 1})
        ax.text(0.12 * size + 1.25 * dx, 0.12 * size + 1.25 * dy, text, color="white",
                fontsize=8, ha="center", va="center")


def cutout_figure(image, *, x, y, radii_pix, wcs=None, pa_sun=None, labels=None, title="",
                  half_size=None):
    """A cut-out around the comet with its apertures, the sunward direction and a compass.

    Parameters
    ----------
    image : ndarray, shape (ny, nx)
        Calibrated frame (electrons).
    x, y : float
        The comet's centre, 0-based pixels.
    radii_pix : array-like
        Aperture radii in pixels, drawn as circles.
    wcs : `~astropy.wcs.WCS`, optional
        For the N/E compass and the sunward arrow.
    pa_sun : `~astropy.units.Quantity` ['angle'], optional
        Position angle of the projected direction to the Sun, east of north.
    labels : list of str, optional
        One label per aperture (e.g. "10000 km").
    title : str
    half_size : float, optional
        Half-width of the cut-out in pixels (default 1.3 times the largest aperture).

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> import numpy as np
    >>> img = np.random.default_rng(0).normal(100, 5, (80, 80))
    >>> fig = cutout_figure(img, x=40, y=40, radii_pix=[5, 10], labels=["a", "b"])
    >>> len(fig.axes[0].patches)
    2
    """
    image = np.asarray(image, dtype=float)
    radii = np.atleast_1d(np.asarray(radii_pix, dtype=float))
    half = float(half_size if half_size is not None else 1.3 * np.nanmax(radii))
    x0, x1 = int(max(0, np.floor(x - half))), int(min(image.shape[1], np.ceil(x + half) + 1))
    y0, y1 = int(max(0, np.floor(y - half))), int(min(image.shape[0], np.ceil(y + half) + 1))
    cut = image[y0:y1, x0:x1]
    fig, (ax,) = new_figure(figsize=(WIDTH * 0.62, WIDTH * 0.55), grid=False)
    ax.imshow(cut, origin="lower", cmap="gray", norm=_norm(cut), interpolation="nearest")
    cx, cy = x - x0, y - y0
    colours = [PALETTE["frames"], PALETTE["nucleus"], PALETTE["reference"], PALETTE["outburst"],
               PALETTE["post"]]
    for k, r in enumerate(radii):
        colour = colours[k % len(colours)]
        label = labels[k] if labels is not None else f"{r:.0f} pix"
        ax.add_patch(Circle((cx, cy), r, fill=False, lw=1.0, color=colour, label=label))
    if wcs is not None:
        _compass(ax, wcs, x, y, min(cut.shape))
        if pa_sun is not None:
            dx, dy = sky_direction(wcs, x, y, pa_sun, length_pix=0.8 * min(half, np.max(radii)))
            ax.annotate("", xy=(cx + dx, cy + dy), xytext=(cx, cy),
                        arrowprops={"arrowstyle": "-|>", "color": PALETTE["sun"],
                                    "lw": 1.8})
            ax.plot([], [], color=PALETTE["sun"], lw=1.8,
                    label=f"to the Sun (PA {u.Quantity(pa_sun, u.deg).value:.0f}°)")
    ax.set_xlim(-0.5, cut.shape[1] - 0.5)
    ax.set_ylim(-0.5, cut.shape[0] - 0.5)
    label_axes(ax, xlabel="x (pixels)", ylabel="y (pixels)", title=title, title_size=9,
               legend_size=7, legend_loc="upper right")
    return fig


def profile_figure(profile, *, title="Coma surface-brightness profile Σ(ρ)",
                   steady_state=-1.0):
    """Σ(ρ) of the whole coma and of its sunward and tailward sectors, on log axes.

    Parameters
    ----------
    profile : `~astropy.table.QTable`
        The photometry's profile: ``rho_km``, ``sb``, ``sb_err`` and, when the Sun's position
        angle was known, ``sb_sun``, ``sb_sun_err``, ``sb_tail``, ``sb_tail_err``.
    steady_state : float
        Slope of the reference line (Σ ∝ ρ^-1, a steady, freely expanding coma; Jewitt &
        Meech 1987, ApJ 317, 992).

    Returns
    -------
    fig : `~matplotlib.figure.Figure`

    Examples
    --------
    >>> import numpy as np
    >>> from astropy import units as u
    >>> from astropy.table import QTable
    >>> rho = np.geomspace(500, 20000, 12)
    >>> sb = 1e4 / rho
    >>> p = QTable({"rho_km": rho * u.km, "sb": sb, "sb_err": 0.05 * sb,
    ...             "sb_sun": 1.2 * sb, "sb_sun_err": 0.05 * sb, "sb_tail": 0.8 * sb,
    ...             "sb_tail_err": 0.05 * sb})
    >>> profile_figure(p).axes[0].get_xlabel()
    'ρ at the comet (km)'
    """
    rho = u.Quantity(profile["rho_km"], u.km).value
    unit = getattr(profile["sb"], "unit", None)
    fig, (ax,) = new_figure()
    series = (("sb", "all azimuths", PALETTE["trend"], "o"),
              ("sb_sun", "sunward sector", PALETTE["post"], "^"),
              ("sb_tail", "tailward sector", PALETTE["pre"], "v"))
    for name, label, colour, marker in series:
        if name not in profile.colnames:
            continue
        v = np.asarray(u.Quantity(profile[name]).value, dtype=float)
        e = np.asarray(u.Quantity(profile[f"{name}_err"]).value, dtype=float)
        ok = np.isfinite(v) & (v > 0) & np.isfinite(rho)
        if np.any(ok):
            ax.errorbar(rho[ok], v[ok], yerr=e[ok], fmt=marker + "-", ms=3, lw=0.8,
                        color=colour, label=label)
    ok = np.isfinite(rho) & np.isfinite(np.asarray(u.Quantity(profile["sb"]).value))
    if np.count_nonzero(ok) >= 2:
        r = rho[ok]
        s = np.asarray(u.Quantity(profile["sb"]).value)[ok]
        mid = len(r) // 2
        ref = s[mid] * (r / r[mid]) ** steady_state
        ax.plot(r, ref, color="0.5", ls="--", lw=1, label=f"Σ ∝ ρ^{steady_state:g} (steady)")
    log_axis(ax, "xy")
    ylabel = "surface brightness Σ" + (f" ({unit.to_string('unicode')})" if unit is not None
                                       else "")
    label_axes(ax, xlabel="ρ at the comet (km)", ylabel=ylabel, title=title)
    return fig


def nucleus_images_figure(data, model, residual, *, title="Nucleus + coma fit"):
    """The fitted box: data, PSF-convolved nucleus + coma model, and data minus model.

    Parameters
    ----------
    data, model, residual : ndarray, shape (ny, nx)
        As `~photpipe.nucleus.NucleusFit` holds them (electrons; NaN for masked pixels).

    Returns
    -------
    fig : `~matplotlib.figure.Figure`
        The data and model share one stretch; the residual is shown symmetric about zero.

    Examples
    --------
    >>> import numpy as np
    >>> yy, xx = np.mgrid[:31, :31]
    >>> m = 1e3 * np.exp(-((xx - 15) ** 2 + (yy - 15) ** 2) / 8.0)
    >>> d = m + np.random.default_rng(1).normal(0, 3, m.shape)
    >>> [ax.get_title() for ax in nucleus_images_figure(d, m, d - m).axes[:3]]
    ['data', 'model', 'data - model']
    """
    fig, axes = new_figure(1, ncols=3, figsize=(WIDTH, WIDTH / 3 + 0.6), grid=False)
    norm = _norm(np.concatenate([np.ravel(data), np.ravel(model)]))
    for ax, img, name in zip(axes[:2], (data, model), ("data", "model"), strict=True):
        ax.imshow(img, origin="lower", cmap="gray", norm=norm, interpolation="nearest")
        ax.set_title(name, fontsize=9)
    res = np.asarray(residual, dtype=float)
    lim = np.nanpercentile(np.abs(res), 99) if np.any(np.isfinite(res)) else 1.0
    im = axes[2].imshow(res, origin="lower", cmap="RdBu_r", vmin=-lim, vmax=lim,
                        interpolation="nearest")
    axes[2].set_title("data - model", fontsize=9)
    fig.colorbar(im, ax=axes[2], shrink=0.8, label="electrons")
    for ax in axes:
        ax.set_xticks([])
        ax.set_yticks([])
    fig.suptitle(f"{title} (masked pixels blank)", fontsize=10)
    return fig
