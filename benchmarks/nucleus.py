"""Benchmark of the nucleus stage: seconds per frame for a 101x101 cutout fit.

Prints the median wall time of `fit_nucleus` (no bootstrap, with the 1-D profile fit), the
model evaluations it used, and the floor: one model evaluation (rendering the components for a
centre and γ) times that number, measured in the same run. Also the time with a 50-refit
residual bootstrap. Others may share the CPU: the figures are noisy.
"""

import time
import warnings

import numpy as np
from astropy import units as u
from astropy.time import Time

from photpipe.frames.types import CalibratedFrame, FrameInfo
from photpipe.nucleus import PSFModel, fit_nucleus, nucleus_coma_image
from photpipe.nucleus._render import ComponentRenderer

N_FRAMES = 15


def frame(rng, psf):
    shape = (161, 161)
    truth = nucleus_coma_image(shape, 80.3, 79.6, nucleus_flux=3e4, coma_k=150.0, psf=psf,
                               gamma=1.0, sky=200.0)
    var = truth + 25.0
    info = FrameInfo("bench.fits", "science", Time("2026-12-01T03:00:00"), 100 * u.s, "R",
                     1 * u.electron / u.adu, 5 * u.electron, 60000 * u.adu, (1, 1), shape)
    data = truth + rng.normal(size=shape) * np.sqrt(var)
    return CalibratedFrame(info, data, var, np.zeros(shape, np.uint16))


def main():
    rng = np.random.default_rng(0)
    psf = PSFModel.from_moffat(3.0, beta=3.0)
    frames = [frame(rng, psf) for _ in range(N_FRAMES)]
    results = {}
    for gamma in (1.0, "free"):
        times, evals = [], []
        for fr in frames:
            t0 = time.perf_counter()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                fit = fit_nucleus(fr, 80.0, 80.0, psf, pixel_scale=1.0 * u.arcsec / u.pix,
                                  gamma=gamma, cutout=101, bootstrap=0)
            times.append(time.perf_counter() - t0)
            evals.append(fit.n_model_evaluations)
        results[gamma] = (np.median(times), int(np.median(evals)))
    r = ComponentRenderer((101, 101), psf)
    t0 = time.perf_counter()
    n_eval = 100
    for i in range(n_eval):
        r.components(50.3 + 1e-3 * i, 49.6, 1.0 + 1e-4 * i)
    one = (time.perf_counter() - t0) / n_eval
    print(f"one model evaluation (101x101, with FFT convolution): {one * 1e3:.2f} ms")
    for gamma, (t, n) in results.items():
        floor = one * n
        print(f"gamma={gamma!s:4}: median {t:.3f} s per frame ({n} model evaluations); "
              f"floor {floor:.3f} s; ratio {t / floor:.2f}")
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = fit_nucleus(frames[0], 80.0, 80.0, psf, pixel_scale=1.0 * u.arcsec / u.pix,
                          gamma="free", cutout=101, bootstrap=50, rng=rng)
    tb = time.perf_counter() - t0
    print(f"gamma=free with a 50-refit bootstrap: {tb:.2f} s per frame "
          f"({fit.n_model_evaluations} model evaluations; floor {one * fit.n_model_evaluations:.2f}"
          f" s; ratio {tb / (one * fit.n_model_evaluations):.2f})")
    print("goal: < 0.3 s per frame for the fit (CPU shared with other work: figures are noisy)")


if __name__ == "__main__":
    main()
