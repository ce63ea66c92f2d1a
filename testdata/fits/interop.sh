#!/usr/bin/env bash
# Interoperability check of the FITS writer of package survey.
#
# Needs: go, fitsverify (Debian fitsverify 4.20), /usr/bin/python3 with
# python3-astropy (5.2.1). Run from the repository root:
#     bash testdata/fits/interop.sh
#
# 1. `go test -run TestFITSInterop` writes a table through survey.Write (every
#    column kind, nulls, units, descriptions, long and odd metadata) and the
#    values it holds, as JSON, into a temporary directory.
# 2. fitsverify must report 0 errors. Its only accepted warnings are about
#    column names with characters other than letters, digits and "_" (the
#    sample has a column named "Count Of Things" on purpose: such names come
#    from the data, and FITS 4.0 allows them).
# 3. testdata/fits/interop.py reads the file with astropy and checks every
#    value, null, unit, description and metadata entry.
# Exits non-zero on any failure.
set -euo pipefail

cd "$(dirname "$0")/../.."
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

for tool in go fitsverify /usr/bin/python3; do
	if ! command -v "$tool" >/dev/null; then
		echo "interop.sh: $tool is not installed" >&2
		exit 1
	fi
done

FILIGREE_FITS_INTEROP_DIR="$tmp" go test ./survey/ -run '^TestFITSInterop$' -count=1
fits="$tmp/interop.fits"
test -s "$fits" || { echo "interop.sh: $fits was not written" >&2; exit 1; }

# fitsverify exits non-zero when it finds warnings, so its status is not used.
report=$(fitsverify "$fits" || true)
summary=$(printf '%s\n' "$report" | grep -E '^\*\*\*\* Verification found' || true)
if [ -z "$summary" ]; then
	printf '%s\n' "$report"
	echo "interop.sh: no summary line from fitsverify" >&2
	exit 1
fi
echo "fitsverify: $summary"
errors=$(printf '%s\n' "$summary" | sed -E 's/.* and ([0-9]+) error.*/\1/')
if [ "$errors" != "0" ]; then
	printf '%s\n' "$report"
	echo "interop.sh: fitsverify found $errors error(s)" >&2
	exit 1
fi
unexpected=$(printf '%s\n' "$report" | grep -E '^\*\*\* Warning' | grep -v -E 'Column #[0-9]+: Name ".*" contains character' || true)
if [ -n "$unexpected" ]; then
	printf '%s\n' "$report"
	echo "interop.sh: unexpected fitsverify warnings:" >&2
	printf '%s\n' "$unexpected" >&2
	exit 1
fi

/usr/bin/python3 testdata/fits/interop.py "$fits" "$tmp/interop_expected.json"
echo "interop.sh: OK"
