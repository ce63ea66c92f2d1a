#!/bin/bash
# Live interoperability check of the footprint writers (package mask/footprint:
# WriteMap, WriteMOC, Rasterize, MOCFromMap). Exits nonzero on any mismatch.
#
# 1. `go test -run '^TestWriteInteropFiles$'` writes map.fits (a 9 deg cap of
#    completeness 0.9 with a 2 deg hole, rasterized at pixel centres at
#    Nside 64), moc.fits (its MOC) and expect.txt (Go's pixel count, areas and
#    MOC cell count) into a temporary folder.
# 2. fitsverify 4.20 (Debian fitsverify) must report both files OK, without
#    warnings.
# 3. /usr/bin/python3 reads them back with the reference libraries (Debian
#    packages): healpy 1.16.1 (python3-healpy), pymoc 0.5.0 (python3-pymoc),
#    astropy 5.2.1 (python3-astropy), numpy (python3-numpy):
#    - astropy.io.fits: the HEALPix and MOC 2.0 header keywords and types;
#    - healpy.read_map(partial=True): the pixel count, area and effective area
#      equal Go's, and the pixels are exactly healpy.query_disc(cap) minus
#      query_disc(hole) (inclusive=False: pixel centres), all with value 0.9;
#      NESTED and RING reads agree through healpy.reorder;
#    - pymoc: the MOC flattened to its order holds exactly the map's pixels,
#      its area_sq_deg equals Go's, and pymoc's own normalised, sorted FITS
#      rewrite of it has the same UNIQ column (so ours is minimal and sorted).
#
# Run from anywhere: bash testdata/footprint/check_writers.sh
set -euo pipefail

here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
root=$(cd "$here/../.." && pwd)
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT

(cd "$root" && FILIGREE_WRITERS_OUT="$out" go test -count=1 -run '^TestWriteInteropFiles$' ./mask/footprint/)

status=0
for f in map.fits moc.fits; do
	v=$(fitsverify -q "$out/$f" 2>&1) || true
	echo "fitsverify: $v"
	case "$v" in
	"verification OK"*) ;;
	*) echo "FAIL: fitsverify does not accept $f" >&2; status=1 ;;
	esac
done

/usr/bin/python3 - "$out" <<'EOF' || status=1
import os
import sys
import warnings

import healpy as hp
import numpy as np
from astropy.io import fits
from pymoc import MOC

warnings.simplefilter("ignore")
out = sys.argv[1]
exp = {}
for line in open(os.path.join(out, "expect.txt")):
    f = line.split()
    exp[f[0]] = [float(x) for x in f[1:]]
nside = int(exp["nside"][0])
failures = []
passed = [0]


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if ok:
        passed[0] += 1
    else:
        failures.append(what)


def close(a, b, rel):
    return abs(a - b) <= rel * max(abs(a), abs(b))


# --- the HEALPix map -------------------------------------------------------
mpath = os.path.join(out, "map.fits")
with fits.open(mpath) as hl:
    h = hl[1].header
    for k, v in [("PIXTYPE", "HEALPIX"), ("ORDERING", "NESTED"), ("INDXSCHM", "EXPLICIT"),
                 ("OBJECT", "PARTIAL"), ("COORDSYS", "C"), ("TTYPE1", "PIXEL"), ("TFORM1", "K"),
                 ("TTYPE2", "COMPLETENESS"), ("TFORM2", "D"), ("SURVEY", "writer test")]:
        check(h.get(k) == v, "map %s = %r (want %r)" % (k, h.get(k), v))
    check(isinstance(h.get("NSIDE"), int) and h["NSIDE"] == nside, "map NSIDE = %r is the integer %d" % (h.get("NSIDE"), nside))
    rows = len(hl[1].data)

m = hp.read_map(mpath, nest=True, partial=True, dtype=np.float64)
seen = np.flatnonzero(m != hp.UNSEEN)
pixarea = hp.nside2pixarea(nside, degrees=True)
check(len(m) == hp.nside2npix(nside), "healpy map length %d" % len(m))
check(len(seen) == int(exp["npix"][0]) == rows, "healpy pixels %d, Go %d, rows %d" % (len(seen), int(exp["npix"][0]), rows))
check(close(len(seen) * pixarea, exp["area_deg2"][0], 1e-12), "area healpy %.10f deg2, Go %.10f" % (len(seen) * pixarea, exp["area_deg2"][0]))
eff = m[seen].sum() * pixarea
check(close(eff, exp["eff_area_deg2"][0], 1e-12), "effective area healpy %.10f deg2, Go %.10f" % (eff, exp["eff_area_deg2"][0]))
ra, dec, rad, c = exp["cap"]
hra, hdec, hrad = exp["hole"]
cap = hp.query_disc(nside, hp.ang2vec(ra, dec, lonlat=True), np.radians(rad), inclusive=False, nest=True)
hole = hp.query_disc(nside, hp.ang2vec(hra, hdec, lonlat=True), np.radians(hrad), inclusive=False, nest=True)
want = np.setdiff1d(cap, hole)
check(np.array_equal(np.sort(seen), want), "map pixels equal healpy query_disc(cap) - query_disc(hole): %d vs %d" % (len(seen), len(want)))
check(np.all(m[seen] == np.float64(np.float32(c))), "every map value is float32(%g)" % c)
ring = hp.read_map(mpath, nest=False, partial=True, dtype=np.float64)
check(np.array_equal(hp.reorder(ring, r2n=True), m), "RING read reordered to NESTED equals the NESTED read")

# --- the MOC ---------------------------------------------------------------
cpath = os.path.join(out, "moc.fits")
order = int(exp["moc_order"][0])
with fits.open(cpath) as hl:
    h = hl[1].header
    for k, v in [("ORDERING", "NUNIQ"), ("COORDSYS", "C"), ("MOCDIM", "SPACE"), ("MOCVERS", "2.0"),
                 ("PIXTYPE", "HEALPIX"), ("TTYPE1", "UNIQ"), ("TFORM1", "K"), ("SURVEY", "writer test")]:
        check(h.get(k) == v, "moc %s = %r (want %r)" % (k, h.get(k), v))
    for k in ("MOCORDER", "MOCORD_S"):
        check(isinstance(h.get(k), int) and h[k] == order, "moc %s = %r is the integer %d" % (k, h.get(k), order))
    uniq = np.array(hl[1].data.field("UNIQ"), dtype=np.int64)
check(len(uniq) == int(exp["moc_cells"][0]), "moc rows %d, Go cells %d" % (len(uniq), int(exp["moc_cells"][0])))
check(bool(np.all(np.diff(uniq) > 0)), "UNIQ strictly ascending")

moc = MOC()
moc.read(cpath, filetype="fits")
flat = np.array(sorted(moc.flattened(order)), dtype=np.int64)
check(moc.order == order, "pymoc order %d, Go %d" % (moc.order, order))
check(np.array_equal(flat, np.sort(seen)), "pymoc cells at order %d equal the map pixels: %d vs %d" % (order, len(flat), len(seen)))
check(close(moc.area_sq_deg, exp["area_deg2"][0], 1e-9), "pymoc area %.10f deg2, Go %.10f" % (moc.area_sq_deg, exp["area_deg2"][0]))
check(moc.cells == len(uniq), "pymoc normalised cells %d, our rows %d" % (moc.cells, len(uniq)))
rpath = os.path.join(out, "pymoc_rewrite.fits")
moc.write(rpath, filetype="fits", overwrite=True)
with fits.open(rpath) as hl:
    theirs = np.array(hl[1].data.field("UNIQ"), dtype=np.int64)
check(np.array_equal(theirs, uniq), "pymoc's normalised rewrite has the same UNIQ column (%d values)" % len(theirs))

print("python checks: %d ok, %d failed" % (passed[0], len(failures)))
sys.exit(1 if failures else 0)
EOF

if [ "$status" -ne 0 ]; then
	echo "check_writers: FAILED" >&2
	exit 1
fi
echo "check_writers: all checks passed"
