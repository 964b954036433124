"""A figure of one nucleus fit: data, model, residual and the radial profile."""

import numpy as np
from matplotlib.figure import Figure

from .profile import annulus_index

__all__ = ["plot_nucleus_fit"]


def _profile(img, good, x0, y0):
    idx = annulus_index(img.shape, x0, y0)
    use = good & (idx >= 0) & np.isfinite(img)
    n = np.bincount(idx[use])
    s = np.bincount(idx[use], weights=img[use])
    keep = n > 0
    return np.flatnonzero(keep) + 0.5, s[keep] / n[keep]


def plot_nucleus_fit(fit, *, title=None):
    """Four panels: data, model, residual / σ-scaled stretch, and the radial profile.

    Parameters
    ----------
    fit : NucleusFit
        A result of `fit_nucleus`.
    title : str, optional
        Figure title (default: the frame name and the nucleus magnitude).

    Returns
    -------
    `matplotlib.figure.Figure`
        Not saved; the caller writes it (``fig.savefig(path)``).

    Examples
    --------
    >>> import numpy as np
    >>> from types import SimpleNamespace
    >>> img = np.ones((21, 21))
    >>> fake = SimpleNamespace(frame="f", data=img, model=img, residual=img * 0, good=img > 0,
    ...                        x=10.0, y=10.0, x_origin=0, y_origin=0, sky=1.0, nucleus_mag=15.0,
    ...                        flags=(), profile=None, psf=None, nucleus_fraction=0.5)
    >>> len(plot_nucleus_fit(fake).axes)
    4
    """
    fig = Figure(figsize=(11, 3.2), layout="constrained")
    axes = fig.subplots(1, 4)
    data = np.asarray(fit.data, dtype=float)
    sky = fit.sky
    finite = np.isfinite(data)
    vals = data[finite] - sky
    hi = np.percentile(vals, 99.5) if vals.size else 1.0
    lo = -0.05 * hi
    xl, yl = fit.x - fit.x_origin, fit.y - fit.y_origin
    for ax, img, label in ((axes[0], data - sky, "data - sky"),
                           (axes[1], fit.model - sky, "model - sky")):
        ax.imshow(np.arcsinh(np.clip(img, lo, None) / max(hi / 50, 1e-12)), origin="lower",
                  cmap="gray")
        ax.set_title(label)
        ax.plot([xl], [yl], "+", color="tab:red", ms=8)
    res = np.asarray(fit.residual, dtype=float)
    rs = np.nanpercentile(np.abs(res), 99) if np.any(np.isfinite(res)) else 1.0
    axes[2].imshow(res, origin="lower", cmap="coolwarm", vmin=-rs, vmax=rs)
    axes[2].set_title("residual")
    r, p = _profile(data - sky, fit.good, xl, yl)
    rm, pm = _profile(fit.model - sky, fit.good, xl, yl)
    ax = axes[3]
    ax.loglog(r, np.clip(p, 1e-3 * max(hi, 1e-12), None), ".", color="k", label="data")
    ax.loglog(rm, np.clip(pm, 1e-3 * max(hi, 1e-12), None), "-", color="tab:blue",
              label="2-D model")
    if fit.profile is not None:
        pr = fit.profile
        ax.loglog(pr.radius, np.clip(pr.model - sky, 1e-3 * max(hi, 1e-12), None), "--",
                  color="tab:orange", label="1-D fit")
    ax.set_xlabel("ρ (pixels)")
    ax.set_ylabel("mean signal - sky (e)")
    ax.legend(fontsize="small")
    for a in axes[:3]:
        a.set_xticks([])
        a.set_yticks([])
    if title is None:
        mag = fit.nucleus_mag
        title = f"{fit.frame}: nucleus {mag:.2f} mag" if np.isfinite(mag) else fit.frame
        if fit.flags:
            title += f"  [{','.join(fit.flags)}]"
    fig.suptitle(title)
    return fig
