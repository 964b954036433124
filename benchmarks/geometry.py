"""Benchmark: full observing geometry for 10^5 epochs against astropy's cost of the Earth alone.

Run as ``python benchmarks/geometry.py``. The floor is astropy's own
``get_body_barycentric_posvel("earth", times)`` at the same UTC epochs (which includes its
UTC -> TDB conversion); a second floor is the bare ERFA series on ready TDB dates. Each figure
is the best of a few repeats with fresh Time objects (astropy caches scale conversions).
Numbers are noisy on a shared machine.
"""

import time

import erfa
import numpy as np
from astropy import units as u
from astropy.coordinates import get_body_barycentric_posvel
from astropy.time import Time

from photpipe.geometry import Orbit, observing_geometry, site_location

N = 100_000
REPEATS = 3


def _times():
    return Time("2026-06-01T00:00", scale="utc") + np.linspace(0.0, 365.25, N) * u.day


def _best(func):
    best = np.inf
    for _ in range(REPEATS):
        times = _times()
        t0 = time.perf_counter()
        func(times)
        best = min(best, time.perf_counter() - t0)
    return best


def main():
    # invented hyperbolic comet (demo scenario)
    orbit = Orbit(1.31 * u.au, 2.85, 137.6 * u.deg, 57.4 * u.deg, 2.6 * u.deg,
                  Time("2026-11-20T09:30:00", scale="tdb"))
    site = site_location(-111.42 * u.deg, 34.17 * u.deg, 1710 * u.m)
    quiet = {"caution_elongation": 0 * u.deg}

    floor = _best(lambda t: get_body_barycentric_posvel("earth", t, ephemeris="builtin"))
    tdb = _times().tdb
    t0 = time.perf_counter()
    erfa.epv00(tdb.jd1, tdb.jd2)
    bare = time.perf_counter() - t0

    cases = {
        "geocentre, builtin": lambda t: observing_geometry(orbit, t, **quiet),
        "geocentre, de421": lambda t: observing_geometry(orbit, t, ephemeris="de421", **quiet),
        "site, builtin": lambda t: observing_geometry(orbit, t, location=site, **quiet),
    }
    print(f"observing geometry, {N} epochs over one year (best of {REPEATS})")
    print(f"floor: astropy Earth position (get_body_barycentric_posvel)  {floor:8.3f} s")
    print(f"       bare ERFA epv00 on ready TDB dates                    {bare:8.3f} s")
    for label, func in cases.items():
        sec = _best(func)
        print(f"{label:20s} {sec:8.3f} s   ratio to astropy Earth {sec / floor:6.2f}   "
              f"to bare epv00 {sec / bare:6.2f}")
    print("goal: < 1 s and ratio < 3 (numbers are noisy on a shared CPU)")


if __name__ == "__main__":
    main()
