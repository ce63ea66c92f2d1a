#!/usr/bin/env bash
# Interoperability check of the FITS cube writer of package survey
# (survey.WriteCubes).
#
# Needs: go, fitsverify (Debian fitsverify 4.20), /usr/bin/python3 with
# python3-astropy (5.2.1) and python3-numpy. Run from the repository root:
#     bash testdata/grid/cube_interop.sh
#
# 1. `go test -run TestFITSCubeInterop` writes two cubes (NaN, -0, infinity,
#    float32 extremes; cards of every value type; a long string; provenance
#    metadata) and the content they should have, as JSON, into a temporary
#    directory.
# 2. fitsverify must report 0 errors and 0 warnings.
# 3. astropy must read every cube with the expected EXTNAME, BUNIT, shape
#    (N1, N2, N3) = (x, y, z), values (bit for bit, NaN included) and
#    keywords, and the primary header's keywords and metadata pairs.
# Exits non-zero on any failure.
set -euo pipefail

cd "$(dirname "$0")/../.."
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

for tool in go fitsverify /usr/bin/python3; do
	if ! command -v "$tool" >/dev/null; then
		echo "cube_interop.sh: $tool is not installed" >&2
		exit 1
	fi
done

FILIGREE_CUBE_INTEROP_DIR="$tmp" go test ./survey/ -run '^TestFITSCubeInterop$' -count=1
fits="$tmp/cubes.fits"
test -s "$fits" || { echo "cube_interop.sh: $fits was not written" >&2; exit 1; }

# fitsverify exits non-zero when it finds warnings, so its status is not used.
report=$(fitsverify "$fits" || true)
summary=$(printf '%s\n' "$report" | grep -E '^\*\*\*\* Verification found' || true)
if [ -z "$summary" ]; then
	printf '%s\n' "$report"
	echo "cube_interop.sh: no summary line from fitsverify" >&2
	exit 1
fi
echo "fitsverify: $summary"
if ! printf '%s\n' "$summary" | grep -qE 'found 0 warning\(s\) and 0 error\(s\)'; then
	printf '%s\n' "$report"
	echo "cube_interop.sh: fitsverify found warnings or errors" >&2
	exit 1
fi

/usr/bin/python3 - "$fits" "$tmp/cubes_expected.json" <<'PY'
import json
import sys

import numpy as np
from astropy.io import fits

path, expected = sys.argv[1], sys.argv[2]
with open(expected) as f:
    want = json.load(f)
bad = []


def check_cards(where, header, cards):
    for key, kind, text in cards or []:
        if key in ("COMMENT", "HISTORY"):
            lines = [str(v) for v in header[key]] if key in header else []
            if text not in lines:
                bad.append(f"{where}: {key} {text!r} not in {lines!r}")
            continue
        if key not in header:
            bad.append(f"{where}: no keyword {key}")
            continue
        v = header[key]
        if kind == "float":
            ok = isinstance(v, float) and v == float(text)
        elif kind == "int":
            ok = isinstance(v, int) and not isinstance(v, bool) and v == int(text)
        elif kind == "bool":
            ok = isinstance(v, bool) and v == (text == "true")
        else:
            ok = isinstance(v, str) and v == text
        if not ok:
            bad.append(f"{where}: {key} = {v!r} ({type(v).__name__}), want {kind} {text}")


with fits.open(path) as hdul:
    if len(hdul) != 1 + len(want["cubes"]):
        bad.append(f"{len(hdul)} HDUs, want {1 + len(want['cubes'])}")
    check_cards("primary", hdul[0].header, want["primary"])
    # Metadata pairs: astropy must see every (key, value) of the provenance.
    h0 = hdul[0].header
    pairs = {}
    n = 1
    while f"MKEY{n}" in h0:
        pairs[h0[f"MKEY{n}"]] = h0[f"MVAL{n}"]
        n += 1
    for key, value in want["meta"] or []:
        got = pairs.get(key, h0.get(key) if len(key) <= 8 else None)
        # Values were written %XX-escaped only where needed; the sample has none.
        if got is None or str(got) != value:
            bad.append(f"meta {key!r} = {got!r}, want {value!r}")
    for i, c in enumerate(want["cubes"]):
        hdu = hdul[i + 1]
        where = f"HDU {i + 1}"
        if hdu.header.get("EXTNAME", "") != c["name"]:
            bad.append(f"{where}: EXTNAME {hdu.header.get('EXTNAME')!r}, want {c['name']!r}")
        if hdu.header.get("BUNIT", "") != c["unit"]:
            bad.append(f"{where}: BUNIT {hdu.header.get('BUNIT')!r}, want {c['unit']!r}")
        data = hdu.data
        if data is None or data.dtype.kind != "f" or data.dtype.itemsize != 4:
            bad.append(f"{where}: data {None if data is None else data.dtype}, want float32")
            continue
        if list(data.shape) != c["shape"]:
            bad.append(f"{where}: shape {data.shape}, want {c['shape']}")
            continue
        exp = np.array([float(s) for s in c["data"]], dtype=np.float32).reshape(c["shape"])
        got_bits = np.ascontiguousarray(data, dtype=np.float32).view(np.uint32)
        if not np.array_equal(got_bits, exp.view(np.uint32)):
            bad.append(f"{where}: values differ")
        check_cards(where, hdu.header, c["cards"])

if bad:
    print("\n".join(bad), file=sys.stderr)
    sys.exit(1)
print(f"astropy: {len(want['cubes'])} cubes, values, keywords and metadata match")
PY
echo "cube_interop.sh: OK"
