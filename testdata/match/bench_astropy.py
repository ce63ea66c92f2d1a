#!/usr/bin/python3
"""The astropy side of BenchmarkMatch1M (survey/match): nearest match of
10^6 against 10^6 positions uniform on the sphere within 1 arcsec, with
astropy 5.2.1 SkyCoord.match_to_catalog_sky (scipy 1.10.1 cKDTree), timing
only the match (building the SkyCoords from arrays is excluded). Prints
the median wall and CPU seconds of 3 runs and the pairs found.

Run: /usr/bin/python3 testdata/match/bench_astropy.py
"""
import time

import astropy
import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord

assert astropy.__version__ == "5.2.1", astropy.__version__
rng = np.random.default_rng(1)
n = 1_000_000


def uniform():
    return rng.uniform(0, 360, n), np.degrees(np.arcsin(rng.uniform(-1, 1, n)))


left = SkyCoord(*uniform(), unit="deg")
right = SkyCoord(*uniform(), unit="deg")
walls, cpus = [], []
for _ in range(3):
    w0, c0 = time.perf_counter(), time.process_time()
    idx, sep, _ = left.match_to_catalog_sky(right)
    pairs = int(np.sum(sep < 1 * u.arcsec))
    walls.append(time.perf_counter() - w0)
    cpus.append(time.process_time() - c0)
print("astropy %s match_to_catalog_sky 1e6 x 1e6 within 1 arcsec: median wall %.2f s, median CPU %.2f s, %d pairs"
      % (astropy.__version__, np.median(walls), np.median(cpus), pairs))
