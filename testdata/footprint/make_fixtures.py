#!/usr/bin/python3
"""Regenerates the fixtures of package mask/footprint.

Reference libraries (Debian packages):
  healpy 1.16.1   (python3-healpy)  writes the HEALPix maps (healpy.write_map)
  pymoc 0.5.0     (python3-pymoc)   writes the MOC files (MOC.write, FITS)
  astropy 5.2.1   (python3-astropy) writes the deliberately bad files

Run from this directory: /usr/bin/python3 make_fixtures.py
Outputs, besides the FITS files:
  maps_ref.txt   per map: area (deg^2) and effective area from healpy, and
                 for every nonzero pixel the NESTED index and the value
                 returned by healpy.read_map(nest=True)
  points_ref.txt.gz per map and MOC: random points (ra, dec) and the expected
                 completeness: map value at healpy.ang2pix(nest=True), or
                 pymoc MOC.contains at the MOC's order for MOCs
  mocs_ref.txt   per MOC: order and pymoc area_sq_deg
"""
import gzip
import warnings

import healpy as hp
import numpy as np
from astropy.io import fits
from pymoc import MOC

warnings.simplefilter("ignore")
rng = np.random.default_rng(20261202)
UNSEEN = hp.UNSEEN


def deg2(nside):
    return hp.nside2pixarea(nside, degrees=True)


def disc(nside, ra, dec, rad, nest):
    v = hp.ang2vec(ra, dec, lonlat=True)
    return hp.query_disc(nside, v, np.radians(rad), nest=nest)


def random_points(n):
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    return ra, dec


maps = []
# 1. Full-sky RING map, Nside 32, float32 values with a completeness gradient,
#    UNSEEN outside; healpy stores it as 12 rows of 1024E.
nside = 32
m = np.full(hp.nside2npix(nside), UNSEEN, dtype=np.float32)
pix = disc(nside, 150.0, 20.0, 25.0, nest=False)
theta, phi = hp.pix2ang(nside, pix)
m[pix] = (0.3 + 0.7 * (np.sin(theta) ** 2)).astype(np.float32)
m[disc(nside, 150.0, 20.0, 5.0, nest=False)] = 0.0  # a hole of zeros
hp.write_map("map_ring32.fits", m, nest=False, dtype=np.float32, overwrite=True)
maps.append(("map_ring32.fits", nside))

# 2. Full-sky NESTED map, Nside 16, 0/1 mask with NaN as "outside".
nside = 16
m = np.full(hp.nside2npix(nside), np.nan, dtype=np.float64)
m[disc(nside, 30.0, -40.0, 30.0, nest=True)] = 1.0
m[disc(nside, 280.0, 60.0, 15.0, nest=True)] = 0.5
hp.write_map("map_nest16.fits", m, nest=True, dtype=np.float64, overwrite=True)
maps.append(("map_nest16.fits", nside))

# 3. Partial (explicit) RING map, Nside 64.
nside = 64
m = np.full(hp.nside2npix(nside), UNSEEN, dtype=np.float32)
pix = disc(nside, 165.0, 10.0, 8.0, nest=False)
m[pix] = rng.uniform(0.1, 1.0, len(pix)).astype(np.float32)
hp.write_map("map_partial64.fits", m, nest=False, partial=True, dtype=np.float32, overwrite=True)
maps.append(("map_partial64.fits", nside))

# 4. Partial NESTED map, Nside 64.
m = np.full(hp.nside2npix(nside), UNSEEN, dtype=np.float32)
pix = disc(nside, 10.0, 70.0, 6.0, nest=True)
m[pix] = 0.75
hp.write_map("map_partial64_nest.fits", m, nest=True, partial=True, dtype=np.float32, overwrite=True)
maps.append(("map_partial64_nest.fits", nside))

with open("maps_ref.txt", "w") as out, gzip.open("points_ref.txt.gz", "wt") as pts:
    out.write("# healpy %s: file nside area_deg2 effective_area_deg2 npix_nonzero, then lines 'nestpix value'\n" % hp.__version__)
    pts.write("# healpy %s / pymoc: file npoints, then lines 'ra dec expected_completeness'\n" % hp.__version__)
    for name, nside in maps:
        v = hp.read_map(name, nest=True)
        v = np.where((v == UNSEEN) | ~np.isfinite(v), 0.0, v)
        nz = np.nonzero(v > 0)[0]
        out.write("map %s %d %.12g %.12g %d\n" % (name, nside, len(nz) * deg2(nside), v.sum() * deg2(nside), len(nz)))
        for p in nz:
            out.write("%d %.9g\n" % (p, v[p]))
        ra, dec = random_points(1000)
        ip = hp.ang2pix(nside, ra, dec, nest=True, lonlat=True)
        pts.write("points %s %d\n" % (name, len(ra)))
        for a, d, c in zip(ra, dec, v[ip]):
            pts.write("%.8f %.8f %.9g\n" % (a, d, c))

    # MOCs written by pymoc: discs at orders 6-10.
    mocs = []
    moc = MOC()
    for order, ra, dec, rad in [(6, 40.0, 10.0, 12.0), (8, 60.0, 25.0, 4.0), (10, 300.0, -30.0, 1.5), (9, 190.0, -45.0, 5.0)]:
        moc.add(order, disc(2 ** order, ra, dec, rad, nest=True))
    moc.normalize()
    moc.write("moc_discs.fits", filetype="fits", overwrite=True)
    mocs.append(("moc_discs.fits", moc))
    moc2 = MOC()
    moc2.add(7, disc(128, 180.0, -60.0, 20.0, nest=True))
    moc2.remove(7, disc(128, 180.0, -60.0, 5.0, nest=True))
    moc2.normalize()
    moc2.write("moc_ring7.fits", filetype="fits", overwrite=True)
    mocs.append(("moc_ring7.fits", moc2))
    with open("mocs_ref.txt", "w") as mo:
        mo.write("# pymoc 0.5.0: file order area_sq_deg ncells; then combination areas in deg^2\n")
        for name, mc in mocs:
            mo.write("moc %s %d %.12g %d\n" % (name, mc.order, mc.area_sq_deg, mc.cells))
            # 10^4 random points; half of them drawn near the MOC so that
            # both answers occur often.
            ra, dec = random_points(5000)
            cells = np.array(sorted(mc.flattened(mc.order)))
            sel = rng.choice(cells, 5000)
            ra2, dec2 = hp.pix2ang(2 ** mc.order, sel, nest=True, lonlat=True)
            ra2 = np.mod(ra2 + rng.normal(0, 0.3, 5000), 360)
            dec2 = np.clip(dec2 + rng.normal(0, 0.3, 5000), -90, 90)
            ra = np.concatenate([ra, ra2])
            dec = np.concatenate([dec, dec2])
            ip = hp.ang2pix(2 ** mc.order, ra, dec, nest=True, lonlat=True)
            pts.write("points %s %d\n" % (name, len(ra)))
            for a, d, p in zip(ra, dec, ip):
                pts.write("%.8f %.8f %d\n" % (a, d, 1 if mc.contains(mc.order, int(p)) else 0))
        # Combinations of the two MOCs, computed by pymoc.
        mo.write("union %.12g\n" % (moc + moc2).area_sq_deg)
        mo.write("intersection %.12g\n" % moc.intersection(moc2).area_sq_deg)
        mo.write("difference %.12g\n" % (moc - moc2).area_sq_deg)
        # Intersection of moc_ring7 with the cap of region cap.reg
        # (centre 175,-50, radius 10 deg), by healpy at Nside 4096: pixels
        # whose centre is in the cap and whose parent at order 7 is in the
        # MOC (healpy 1.16.1 query_disc, inclusive=False).
        big = disc(4096, 175.0, -50.0, 10.0, nest=True)
        cells7 = set(int(c) for c in moc2.flattened(7))
        keep = sum(1 for p in big if int(p) >> (2 * (12 - 7)) in cells7)
        mo.write("cap_and_ring7 %.12g\n" % (keep * deg2(4096)))
        mo.write("cap %.12g\n" % (len(big) * deg2(4096)))


with open("cap.reg", "w") as f:
    f.write("# a 10 deg cap used with moc_ring7.fits\ninclude cap centre=175,-50 radius=10\n")


# Bad files, written with astropy from a valid healpy-style header.
def healpix_table(nside, values, **keys):
    col = fits.Column(name="SIGNAL", format="E", array=np.asarray(values, dtype=np.float32))
    h = fits.BinTableHDU.from_columns([col])
    for k, v in keys.items():
        h.header[k] = v
    return h


def write(name, hdu):
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(name, overwrite=True)


n = 12 * 2 * 2
ok = dict(PIXTYPE="HEALPIX", ORDERING="RING", NSIDE=2, INDXSCHM="IMPLICIT", OBJECT="FULLSKY", FIRSTPIX=0, LASTPIX=n - 1)
bad = dict(ok)
del bad["NSIDE"]
write("bad_no_nside.fits", healpix_table(2, np.ones(n), **bad))
bad = dict(ok, ORDERING="SPIRAL")
write("bad_ordering.fits", healpix_table(2, np.ones(n), **bad))
vals = np.ones(n)
vals[17] = 1.5
write("bad_value.fits", healpix_table(2, vals, **ok))
bad = dict(ok, NSIDE=3)
write("bad_nside.fits", healpix_table(2, np.ones(n), **bad))
write("bad_rows.fits", healpix_table(2, np.ones(n - 3), **ok))
# A MOC whose single column is a float, not J or K.
col = fits.Column(name="UNIQ", format="E", array=np.array([4 * 4 ** 3 + 5], dtype=np.float32))
h = fits.BinTableHDU.from_columns([col])
h.header.update(PIXTYPE="HEALPIX", ORDERING="NUNIQ", COORDSYS="C", MOCORDER=3)
write("bad_moc_layout.fits", h)
# A MOC with a uniq value (3) that does not decode.
col = fits.Column(name="UNIQ", format="J", array=np.array([3, 4 * 4 ** 2 + 1], dtype=np.int32))
h = fits.BinTableHDU.from_columns([col])
h.header.update(PIXTYPE="HEALPIX", ORDERING="NUNIQ", COORDSYS="C", MOCORDER=2)
write("bad_moc_uniq.fits", h)
