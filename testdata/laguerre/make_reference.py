#!/usr/bin/python3
"""Reference Voronoi cells for reconstruct/laguerre tests.

Package: scipy 1.10.1 (Debian python3-scipy 1.10.1-2), numpy from Debian.
Run:     /usr/bin/python3 make_reference.py   (in this directory)

Writes
  voronoi_points.csv  index,x,y,z of 300 uniform random points in [0,1]^3
                      (numpy default_rng(20261202)), printed with 17 digits.
  voronoi_cells.csv   index,volume,cx,cy,cz,neighbours for every point whose Voronoi
                      cell (scipy.spatial.Voronoi) is bounded and lies inside
                      [0,1]^3 with a margin of 1e-6, so that clipping to the
                      box does not change it. volume is
                      scipy.spatial.ConvexHull(cell vertices).volume;
                      (cx, cy, cz) is the centroid, summed over tetrahedra
                      from the vertex mean to the ConvexHull.simplices
                      triangles; neighbours are the points sharing a ridge
                      (Voronoi.ridge_points), space separated, increasing.
  voronoi_facets.csv  i,j,area for every ridge of those cells: the area is
                      ConvexHull(...).volume of the ridge vertices projected
                      on the ridge plane (2-D hull volume = area).
"""
import numpy as np
import scipy
from scipy.spatial import Voronoi, ConvexHull

assert scipy.__version__ == "1.10.1", scipy.__version__
rng = np.random.default_rng(20261202)
n = 300
pts = rng.random((n, 3))
vor = Voronoi(pts)
nbrs = [set() for _ in range(n)]
for a, b in vor.ridge_points:
    nbrs[a].add(int(b))
    nbrs[b].add(int(a))
with open("voronoi_points.csv", "w") as f:
    f.write("index,x,y,z\n")
    for i, p in enumerate(pts):
        f.write("%d,%.17g,%.17g,%.17g\n" % (i, p[0], p[1], p[2]))
count = 0
ref = []
with open("voronoi_cells.csv", "w") as f:
    f.write("index,volume,cx,cy,cz,neighbours\n")
    for i in range(n):
        reg = vor.regions[vor.point_region[i]]
        if len(reg) == 0 or -1 in reg:
            continue
        v = vor.vertices[reg]
        if v.min() < 1e-6 or v.max() > 1 - 1e-6:
            continue
        hull = ConvexHull(v)
        vol = hull.volume
        r = v.mean(axis=0)
        m = np.zeros(3)
        tv = 0.0
        for tri in hull.simplices:
            a, b, c = v[tri]
            t = abs(np.dot(np.cross(a - r, b - r), c - r)) / 6
            tv += t
            m += t * (r + a + b + c) / 4
        cen = m / tv
        f.write("%d,%.17g,%.17g,%.17g,%.17g,%s\n" % (i, vol, cen[0], cen[1], cen[2],
                                                   " ".join(str(j) for j in sorted(nbrs[i]))))
        ref.append(i)
        count += 1
refset = set(ref)
nf = 0
with open("voronoi_facets.csv", "w") as f:
    f.write("i,j,area\n")
    for (a, b), rv in zip(vor.ridge_points, vor.ridge_vertices):
        if a not in refset and b not in refset:
            continue
        if -1 in rv:
            raise SystemExit("unbounded ridge of a bounded cell")
        u = pts[b] - pts[a]
        u /= np.linalg.norm(u)
        e1 = np.cross(u, [1.0, 0, 0] if abs(u[0]) < 0.9 else [0, 1.0, 0])
        e1 /= np.linalg.norm(e1)
        e2 = np.cross(u, e1)
        w = vor.vertices[rv]
        area = ConvexHull(np.column_stack([w @ e1, w @ e2])).volume
        f.write("%d,%d,%.17g\n" % (min(a, b), max(a, b), area))
        nf += 1
print("cells written:", count, "facets written:", nf)
