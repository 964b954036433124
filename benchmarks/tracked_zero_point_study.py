"""Study of the zero point on comet-tracked frames against sidereal ones, over seeds.

The same invented field (640 x 640 pixels at 1"/pix, 150 stars of R 12.5-18.5, a coma of
Afρ 150 cm, rendered zero point 25.0) is rendered twice per seed: with the telescope following
the stars (the comet trails 6 pixels in the 60 s exposure) and following the comet (every star
trails 6 pixels). Each frame is measured by `measure_comet_frame`; the comet-tracked one in the
configured mode ``tracking="comet"`` (stadium apertures along the trail) and, for comparison,
with the trail ignored (``tracking="none"``: circular apertures, the curve of growth taking up
the light a circle misses). Printed per mode: the mean zero-point error against the rendered
value (bias) with its standard error, the scatter, the median stated error, and the pull
σ = std((zp - 25) / zp_err). Nothing here is timed.

    python benchmarks/tracked_zero_point_study.py --seeds 12

Measured when written (seeds 100-111): bias -0.0026 ± 0.0003 (sidereal), -0.0034 ± 0.0004
(comet-tracked, stadiums), -0.0081 ± 0.0012 (comet-tracked, circles); scatter 0.0012, 0.0012,
0.0042 mag; median stated error 0.0023, 0.0024, 0.0044 mag; pull σ 0.54, 0.40, 0.49 (the
0.01 mag per-star floor and the aperture correction's error keep the stated errors wide);
median stars in the fit 53, 50, 34.
"""

import argparse
import sys
import warnings
from pathlib import Path

import numpy as np
from astropy import units as u

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from photometry._synthetic import make_synthetic  # noqa: E402

from photpipe.photometry import measure_comet_frame  # noqa: E402

RATE = (311.8, 180.0) * u.arcsec / u.h
OPTIONS = {"band": "R", "apertures_km": (10000, 20000) * u.km}


def _zp(synthetic, **options):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = measure_comet_frame(synthetic.frame, synthetic.stars, synthetic.geometry,
                                  **OPTIONS, **options)
    return res.zero_point.zp, res.zero_point.zp_err, res.zero_point.n_stars


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=12)
    args = parser.parse_args(argv)
    rows = {"sidereal": [], "comet, stadium": [], "comet, circles": []}
    for seed in range(args.seeds):
        side = make_synthetic(rate=RATE, seed=100 + seed)
        tracked = make_synthetic(rate=RATE, seed=100 + seed, tracking="comet")
        rows["sidereal"].append(_zp(side, tracking="sidereal", tracking_check=False))
        rows["comet, stadium"].append(_zp(tracked, tracking="comet", tracking_check=False))
        rows["comet, circles"].append(_zp(tracked, tracking="none", tracking_check=False))
    print(f"{'mode':16s} {'bias':>8s} {'±':>6s} {'scatter':>8s} {'median err':>10s} "
          f"{'pull σ':>7s} {'stars':>6s}")
    for name, values in rows.items():
        zp, err, n = (np.array(v, float) for v in zip(*values, strict=True))
        d = zp - 25.0
        print(f"{name:16s} {d.mean():8.4f} {d.std(ddof=1) / np.sqrt(len(d)):6.4f} "
              f"{d.std(ddof=1):8.4f} {np.median(err):10.4f} {np.std(d / err, ddof=1):7.2f} "
              f"{np.median(n):6.0f}")


if __name__ == "__main__":
    main()
