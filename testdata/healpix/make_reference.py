#!/usr/bin/python3
"""Reference tables for package mask/healpix, computed with healpy 1.16.1
(Debian bookworm python3-healpy 1.16.1, numpy 1.24.2).

Regenerate with:  cd testdata/healpix && /usr/bin/python3 make_reference.py

All binary files are gzip-compressed little-endian arrays without headers;
the Go test (mask/healpix/reference_test.go) knows the layouts below.

directions.bin.gz        N records (theta, phi) float64, radians.  The first
                         ones are special directions (exact poles, equator,
                         phi = 0 and 2π-ε, z = ±2/3, near-pole points), then
                         10^4 random directions within 1e-3 rad of a pole,
                         then uniform random directions on the sphere.
ang2pix_<nside>.bin.gz   for the first M directions: (ring, nest) int64,
                         healpy.ang2pix.  M = N except for Nside 2^20 and
                         2^29, where M = NBIG to keep the files small.
pix2ang_<nside>.bin.gz   records (pix int64, theta_ring, phi_ring,
                         theta_nest, phi_nest float64): healpy.pix2ang of pix
                         read as a RING and as a NESTED pixel.
neighbours_<nside>.bin.gz  records (pix, 8 ring neighbours, 8 nest
                         neighbours) int64: healpy.get_all_neighbours of pix
                         read as RING and as NESTED.
ring2nest_<nside>.bin.gz records (pix, ring2nest(pix), nest2ring(pix)) int64.
queries.txt.gz           text; one query per line:
  disc NSIDE NEST INCLUSIVE X Y Z RADIUS | runs...
  poly NSIDE NEST INCLUSIVE NV X1 Y1 Z1 ... | runs...
  maxpixrad NSIDE VALUE
  pixarea NSIDE VALUE
                         NEST and INCLUSIVE are 0 or 1; the pixels of
                         healpy.query_disc / query_polygon (default fact=4)
                         are written as runs START+LENGTH of consecutive
                         pixel numbers, in increasing order.
"""
import gzip

import healpy as hp
import numpy as np

assert hp.__version__ == "1.16.1", hp.__version__

NSIDES = [1, 2, 1024, 1 << 20, 1 << 29]
N = 100000
NBIG = 25000
rng = np.random.default_rng(20051759)


def write(name, arr):
    with gzip.GzipFile(name, "wb", mtime=0) as f:
        f.write(np.ascontiguousarray(arr).astype(arr.dtype.newbyteorder("<")).tobytes())


# --- directions -----------------------------------------------------------
twopi = 2 * np.pi
special = []
for th in [0.0, np.pi, np.pi / 2, np.arccos(2 / 3), np.arccos(-2 / 3),
           np.nextafter(np.arccos(2 / 3), 0), np.nextafter(np.arccos(2 / 3), 4),
           1e-15, 1e-12, 1e-9, 1e-6, 1e-3, 0.01, np.nextafter(0.01, 0),
           np.pi - 1e-12, np.pi - 1e-9, np.pi - 1e-6, 3.14159 - 0.01,
           np.nextafter(np.pi, 0), 0.5, 2.5]:
    for ph in [0.0, np.nextafter(twopi, 0), twopi, np.pi / 4, np.pi / 2,
               np.pi, 1.5 * np.pi, 1e-300, -1e-9, -0.5, 7.0, 100.0]:
        special.append((th, ph))
special = np.array(special)
nrand = N - len(special) - 10000
u = rng.random(nrand)
theta_r = np.arccos(1 - 2 * u)
phi_r = rng.random(nrand) * twopi
# near-pole directions, log-uniform distance to the pole from 1e-10 to 1e-3
d = 10 ** rng.uniform(-10, -3, 10000)
north = rng.random(10000) < 0.5
theta_p = np.where(north, d, np.pi - d)
phi_p = rng.random(10000) * twopi
# near-pole directions come before the uniform ones so that they are among
# the first NBIG directions used at Nside 2^20 and 2^29
theta = np.concatenate([special[:, 0], theta_p, theta_r])
phi = np.concatenate([special[:, 1], phi_p, phi_r])
assert len(theta) == N
write("directions.bin.gz", np.stack([theta, phi], axis=1).astype("<f8"))

# --- ang2pix --------------------------------------------------------------
for ns in NSIDES:
    m = NBIG if ns >= 1 << 20 else N
    ring = hp.ang2pix(ns, theta[:m], phi[:m])
    nest = hp.ang2pix(ns, theta[:m], phi[:m], nest=True)
    write("ang2pix_%d.bin.gz" % ns, np.stack([ring, nest], axis=1).astype("<i8"))


def sample_pixels(ns, k):
    npix = 12 * ns * ns
    if npix <= 4 * k:
        return np.arange(npix, dtype=np.int64)
    ncap = 2 * ns * (ns - 1)
    fixed = [0, 1, 2, 3, 4, npix - 1, npix - 2, npix - 5, ncap - 1, ncap,
             npix - ncap - 1, npix - ncap, npix // 2, npix // 2 - 1]
    # face corners and edge midpoints, as NESTED numbers
    c = [0, ns - 1, ns // 2]
    xs, ys, fs = np.meshgrid(c, c, np.arange(12), indexing="ij")
    fixed += list(hp.pixelfunc.xyf2pix(ns, xs.ravel(), ys.ravel(), fs.ravel(), nest=True))
    rand = (rng.random(k) * npix).astype(np.int64)
    return np.concatenate([np.array(fixed, dtype=np.int64), rand])


# --- pix2ang --------------------------------------------------------------
for ns in NSIDES:
    pix = sample_pixels(ns, 2000)
    tr, pr = hp.pix2ang(ns, pix)
    tn, pn = hp.pix2ang(ns, pix, nest=True)
    rec = np.zeros(len(pix), dtype=[("p", "<i8"), ("tr", "<f8"), ("pr", "<f8"),
                                    ("tn", "<f8"), ("pn", "<f8")])
    rec["p"], rec["tr"], rec["pr"], rec["tn"], rec["pn"] = pix, tr, pr, tn, pn
    write("pix2ang_%d.bin.gz" % ns, rec)

# --- neighbours and ring2nest ---------------------------------------------
for ns in NSIDES:
    pix = sample_pixels(ns, 1000)
    nr = hp.get_all_neighbours(ns, pix).T
    nn = hp.get_all_neighbours(ns, pix, nest=True).T
    write("neighbours_%d.bin.gz" % ns,
          np.concatenate([pix[:, None], nr, nn], axis=1).astype("<i8"))
    pix = sample_pixels(ns, 2000)
    write("ring2nest_%d.bin.gz" % ns,
          np.stack([pix, hp.ring2nest(ns, pix), hp.nest2ring(ns, pix)], axis=1).astype("<i8"))

# --- queries --------------------------------------------------------------
lines = []
for ns in NSIDES:
    lines.append("maxpixrad %d %r" % (ns, float(hp.max_pixrad(ns))))
    lines.append("pixarea %d %r" % (ns, float(hp.nside2pixarea(ns))))


def runs(p):
    p = np.sort(np.asarray(p, dtype=np.int64))
    if len(p) == 0:
        return ""
    brk = np.nonzero(np.diff(p) != 1)[0] + 1
    starts = np.concatenate([[0], brk])
    ends = np.concatenate([brk, [len(p)]])
    return " ".join("%d+%d" % (p[a], b - a) for a, b in zip(starts, ends))


def fmt(v):
    return " ".join(repr(float(x)) for x in v)


discs = [
    ([1.0, 0.0, 0.0], 0.3),          # on the equator at phi = 0
    ([0.0, 0.0, 1.0], 0.2),          # centred on the north pole
    ([0.0, 0.0, -1.0], 0.05),        # centred on the south pole
    (list(hp.ang2vec(0.15, 2.0)), 0.25),   # contains the north pole off-centre
    (list(hp.ang2vec(np.arccos(2 / 3), 0.1)), 0.1),  # on the cap boundary
    (list(hp.ang2vec(2.0, 4.0)), 0.01),   # small
    (list(hp.ang2vec(1.2, 5.9)), 1.0),    # large
    ([0.3, -0.4, 0.5], 0.0025),          # about one pixel at Nside 256
]
for ns in [64, 256]:
    for v, r in discs:
        for nest in [0, 1]:
            for inc in [0, 1]:
                p = hp.query_disc(ns, np.array(v), r, inclusive=bool(inc), nest=bool(nest))
                lines.append("disc %d %d %d %s %r | %s" % (ns, nest, inc, fmt(v), r, runs(p)))

polys = [
    hp.ang2vec(np.array([1.0, 1.0, 1.4, 1.4]), np.array([0.2, 0.6, 0.6, 0.2])).tolist(),
    hp.ang2vec(np.array([0.3, 0.5, 0.2]), np.array([0.0, 2.0, 4.0])).tolist(),  # around the pole
    hp.ang2vec(np.array([2.0, 2.3, 2.2, 1.9, 1.8]),
               np.array([6.0, 6.2, 0.4, 0.5, 0.1])).tolist(),  # across phi = 0
    [[1, 0, 0.01], [0.01, 1, 0], [0, 0.02, 1]],  # nearly an octant, edges off the pixel-centre lines
    hp.ang2vec(np.array([1.5, 1.52, 1.51]), np.array([3.0, 3.0, 3.02])).tolist(),  # small
]
for ns in [64, 256]:
    for vs in polys:
        for nest in [0, 1]:
            for inc in [0, 1]:
                p = hp.query_polygon(ns, np.array(vs, dtype=float), inclusive=bool(inc), nest=bool(nest))
                flat = [x for v in vs for x in v]
                lines.append("poly %d %d %d %d %s | %s" % (ns, nest, inc, len(vs), fmt(flat), runs(p)))

with gzip.GzipFile("queries.txt.gz", "wb", mtime=0) as f:
    f.write(("\n".join(lines) + "\n").encode())
