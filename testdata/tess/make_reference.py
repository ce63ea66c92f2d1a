#!/usr/bin/python3
"""Regenerate qhull_reference.txt: reference Delaunay tetrahedra for package
reconstruct/tess.

Reference library: scipy 1.10.1 (Debian 12 package python3-scipy), whose
scipy.spatial.Delaunay and scipy.spatial.ConvexHull wrap Qhull 2020.2.
Run with the Debian interpreter:

    /usr/bin/python3 testdata/tess/make_reference.py > testdata/tess/qhull_reference.txt

The table holds 2000 points drawn uniformly in [0, 100)^3 with numpy's
default_rng(20261202) (random floating-point coordinates are in general
position with probability one, so the Delaunay tessellation is unique and
must equal Qhull's), written with %.17g so they read back bit for bit; then
every tetrahedron as its four point indices in increasing order, the list
sorted; then the volume of the convex hull (scipy ConvexHull.volume).

Lines:  "p x y z" (point, in index order), "t i j k l" (tetrahedron),
        "hullvolume V".
"""
import sys

import numpy as np
import scipy
from scipy.spatial import ConvexHull, Delaunay

n = 2000
rng = np.random.default_rng(20261202)
p = rng.random((n, 3)) * 100.0
d = Delaunay(p)
s = np.sort(d.simplices, axis=1)
s = s[np.lexsort(s.T[::-1])]
out = sys.stdout
out.write(f"# scipy {scipy.__version__} scipy.spatial.Delaunay (Qhull), numpy {np.__version__}\n")
out.write(f"# {n} points uniform in [0,100)^3, numpy default_rng(20261202); {len(s)} tetrahedra\n")
for x, y, z in p:
    out.write(f"p {x:.17g} {y:.17g} {z:.17g}\n")
for t in s:
    out.write(f"t {t[0]} {t[1]} {t[2]} {t[3]}\n")
out.write(f"hullvolume {ConvexHull(p).volume:.17g}\n")
