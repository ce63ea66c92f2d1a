#!/usr/bin/python3
"""Reference sky cross-matches for survey/match, made with astropy 5.2.1
(Debian python3-astropy 5.2.1, numpy 1.24.2, scipy 1.10.1).

Writes, next to this script:
  left.csv, right.csv   the catalogues: id, ra, dec (degrees), z, mag (and a
                        text column in right.csv). Clustered around random
                        seeds so rows have 0 to many counterparts within the
                        radius; seeds within 1e-5 deg of RA 0, so clusters
                        straddle RA 0/360; clusters within 1e-6 deg of both
                        poles, RA all round, and left rows exactly on the
                        poles; exact duplicates of
                        right rows in left, within right and within left.
  nearest.csv           SkyCoord.match_to_catalog_sky(left -> right), kept
                        where the separation is <= RADIUS_ARCSEC.
  all.csv               astropy.coordinates.search_around_sky(left, right,
                        RADIUS_ARCSEC), sorted by left, separation, right.
  zero.csv              search_around_sky with a radius of 0.
Separations are astropy's Angle.deg, written with repr (round trip exact).

Conventions made explicit so the Go test can compare exactly:
  * match_to_catalog_sky picks one of several right rows with identical
    coordinates (scipy cKDTree's choice); the Go matcher breaks ties by the
    lower right row, so the chosen index is replaced by the lowest right row
    with the same (ra, dec). The script asserts that any other right row
    within 1e-9 arcsec of the nearest separation has identical coordinates,
    so no other tie exists.
  * search_around_sky selects pairs by chord <= 2 sin(r/2) on the unit
    vectors, the Go matcher by Vincenty separation <= r. The script asserts
    no pair has a separation within 1e-6 relative of the radius, so the two
    rules select the same pairs here.

Run: /usr/bin/python3 testdata/match/make_reference.py
"""
import csv
import os

import astropy
import numpy as np
import scipy
from astropy import units as u
from astropy.coordinates import SkyCoord, search_around_sky

assert astropy.__version__ == "5.2.1", astropy.__version__
assert scipy.__version__ == "1.10.1", scipy.__version__

RADIUS_ARCSEC = 5.0
HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20261202)


def offset(ra, dec, max_arcsec):
    """Offset each (ra, dec) by a random position angle and a separation
    uniform in [0, max_arcsec], exactly on the sphere (astropy)."""
    c = SkyCoord(ra=ra * u.deg, dec=dec * u.deg)
    pa = rng.uniform(0, 360, len(ra)) * u.deg
    sep = rng.uniform(0, max_arcsec, len(ra)) * u.arcsec
    o = c.directional_offset_by(pa, sep)
    return o.ra.deg, o.dec.deg


def uniform(n):
    return rng.uniform(0, 360, n), np.degrees(np.arcsin(rng.uniform(-1, 1, n)))


# Seeds: uniform and near RA 0/360 (the poles are added below).
s_ra, s_dec = uniform(2400)
pole_n = 60
w = 120
wr_ra = np.where(rng.uniform(size=w) < 0.5, rng.uniform(0, 1e-5, w), 360 - rng.uniform(1e-12, 1e-5, w))
wr_dec = rng.uniform(-60, 60, w)
seeds = [
    (s_ra, s_dec, 1.5 * RADIUS_ARCSEC),
    (wr_ra, wr_dec, 1.5 * RADIUS_ARCSEC),
]

L_ra, L_dec, R_ra, R_dec = [], [], [], []
for ra, dec, off in seeds:
    a, d = offset(ra, dec, off)
    L_ra.append(a)
    L_dec.append(d)
    k = rng.integers(0, 4, len(ra))  # 0..3 right rows per seed
    rep_ra, rep_dec = np.repeat(ra, k), np.repeat(dec, k)
    a, d = offset(rep_ra, rep_dec, off)
    R_ra.append(a)
    R_dec.append(d)
# Near the poles the rows are drawn directly, Dec within 1e-6 deg of the
# pole and RA all round: directional_offset_by rounds such points onto the
# pole itself, where rows differing only in RA would tie to 1e-11 arcsec.
for sign in (1, -1):
    for lst_ra, lst_dec, n in ((L_ra, L_dec, pole_n), (R_ra, R_dec, 2 * pole_n)):
        lst_ra.append(rng.uniform(0, 360, n))
        lst_dec.append(sign * (90 - rng.uniform(1e-8, 1e-6, n)))
    # Left rows exactly on the pole (their separations do not depend on RA).
    L_ra.append(rng.uniform(0, 360, 3))
    L_dec.append(np.full(3, sign * 90.0))
# Uniform background.
for lst_ra, lst_dec in ((L_ra, L_dec), (R_ra, R_dec)):
    a, d = uniform(300)
    lst_ra.append(a)
    lst_dec.append(d)
L_ra, L_dec = np.concatenate(L_ra), np.concatenate(L_dec)
R_ra, R_dec = np.concatenate(R_ra), np.concatenate(R_dec)
# Exact duplicates: right rows repeated in right, right rows copied into
# left, left rows repeated in left.
rd = rng.choice(len(R_ra), 30, replace=False)
R_ra, R_dec = np.concatenate([R_ra, R_ra[rd]]), np.concatenate([R_dec, R_dec[rd]])
lc = rng.choice(len(R_ra), 60, replace=False)
L_ra, L_dec = np.concatenate([L_ra, R_ra[lc]]), np.concatenate([L_dec, R_dec[lc]])
ld = rng.choice(len(L_ra), 20, replace=False)
L_ra, L_dec = np.concatenate([L_ra, L_ra[ld]]), np.concatenate([L_dec, L_dec[ld]])
# Shuffle so that duplicates are not adjacent.
pl, pr = rng.permutation(len(L_ra)), rng.permutation(len(R_ra))
L_ra, L_dec, R_ra, R_dec = L_ra[pl], L_dec[pl], R_ra[pr], R_dec[pr]
assert np.all((L_ra >= 0) & (L_ra < 360)) and np.all((R_ra >= 0) & (R_ra < 360))
nl, nr = len(L_ra), len(R_ra)
L_z, R_z = rng.uniform(0.01, 0.5, nl), rng.uniform(0.01, 0.5, nr)
L_mag, R_mag = rng.uniform(15, 22, nl), rng.uniform(15, 22, nr)
L_id = rng.permutation(np.arange(1, nl + 1)) * 3  # some shared with right
R_id = rng.permutation(np.arange(1, nr + 1)) * 2

left = SkyCoord(ra=L_ra * u.deg, dec=L_dec * u.deg)
right = SkyCoord(ra=R_ra * u.deg, dec=R_dec * u.deg)
# The catalogues' values must be astropy's exactly (no wrapping on input).
assert np.array_equal(left.ra.deg, L_ra) and np.array_equal(right.dec.deg, R_dec)

radius = RADIUS_ARCSEC * u.arcsec
i1, i2, sep, _ = search_around_sky(left, right, radius)
sep_as = sep.arcsec
assert not np.any(np.abs(sep_as - RADIUS_ARCSEC) < 1e-6 * RADIUS_ARCSEC), "a pair on the radius"
wide1, wide2, wsep, _ = search_around_sky(left, right, radius * 1.001)
assert not np.any((wsep.arcsec > RADIUS_ARCSEC) & (wsep.arcsec < RADIUS_ARCSEC * (1 + 1e-6)))
order = np.lexsort((i2, sep.deg, i1))
i1, i2, sep_deg = i1[order], i2[order], sep.deg[order]

idx, nsep, _ = left.match_to_catalog_sky(right)
keep = np.nonzero(nsep.deg <= radius.to_value(u.deg))[0]
near_rows = []
n_canonical = 0
for i in keep:
    j = int(idx[i])
    same = np.nonzero((R_ra == R_ra[j]) & (R_dec == R_dec[j]))[0]
    if same.min() != j:
        n_canonical += 1
        j = int(same.min())
    # No other near-tie: any right row within 1e-9 arcsec of the nearest
    # separation has the same coordinates.
    m = i1 == i
    close = i2[m][np.abs(sep_deg[m] * 3600 - nsep[i].arcsec) <= 1e-9]
    assert all(R_ra[c] == R_ra[j] and R_dec[c] == R_dec[j] for c in close), (i, close)
    near_rows.append((int(i), j, repr(float(nsep.deg[i]))))
# match_to_catalog_sky's nearest must be the first of search_around_sky's.
for i, j, s in near_rows:
    m = np.nonzero(i1 == i)[0]
    assert len(m) > 0 and i2[m[0]] == j, (i, j)

z1, z2, zsep, _ = search_around_sky(left, right, 0 * u.deg)
zo = np.lexsort((z2, z1))


def write(name, header, rows):
    with open(os.path.join(HERE, name), "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(header)
        wr.writerows(rows)


write("left.csv", ["id", "ra", "dec", "z", "mag"],
      [(int(L_id[i]), repr(float(L_ra[i])), repr(float(L_dec[i])), repr(float(L_z[i])), repr(float(L_mag[i])))
       for i in range(nl)])
write("right.csv", ["id", "ra", "dec", "z", "mag", "name"],
      [(int(R_id[j]), repr(float(R_ra[j])), repr(float(R_dec[j])), repr(float(R_z[j])), repr(float(R_mag[j])), "R%05d" % j)
       for j in range(nr)])
write("nearest.csv", ["left", "right", "sep_deg"], near_rows)
write("all.csv", ["left", "right", "sep_deg"],
      [(int(a), int(b), repr(float(s))) for a, b, s in zip(i1, i2, sep_deg)])
write("zero.csv", ["left", "right", "sep_deg"],
      [(int(z1[k]), int(z2[k]), repr(float(zsep.deg[k]))) for k in zo])
counts = np.bincount(i1, minlength=nl)
print("left %d right %d; nearest %d (%d ties canonicalised); pairs %d (max %d per left row); zero-radius pairs %d"
      % (nl, nr, len(near_rows), n_canonical, len(i1), counts.max(), len(z1)))
print("rows within 1e-6 deg of a pole: left %d right %d; RA within 1e-4 deg of 0/360: left %d right %d"
      % (np.sum(90 - np.abs(L_dec) < 1e-6), np.sum(90 - np.abs(R_dec) < 1e-6),
         np.sum((L_ra < 1e-4) | (L_ra > 360 - 1e-4)), np.sum((R_ra < 1e-4) | (R_ra > 360 - 1e-4))))
