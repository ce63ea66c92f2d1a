#!/usr/bin/python3
"""Check a FITS file written by package survey against astropy.

Package used: astropy 5.2.1 (Debian python3-astropy), numpy.
Usage: /usr/bin/python3 testdata/fits/interop.py FILE.fits EXPECTED.json
(called by testdata/fits/interop.sh; the JSON is written by the Go test
TestFITSInterop next to the FITS file).

Checks, exiting 1 on any difference:
  - astropy opens the file and its own verification (HDUList.verify) passes;
  - EXTNAME, TTYPEn, TUNITn (and that astropy parses units), TCOMMn;
  - every value through astropy.table.Table.read: integers exact, floats
    bit-identical (infinities, -0 and 5e-324 included), strings, logicals;
    nulls masked (TNULL for integers, NaN for floats); a null logical is the
    byte 0x00 in the file (astropy 5.2.1 reads 0x00 as False, so the byte
    itself is checked);
  - the table metadata, decoded from astropy's parsed header cards (CONTINUE
    long strings joined by astropy) following the encoding documented in
    survey/fits_header.go: MKEYn/MVALn pairs with %XX escapes, plain keywords,
    HISTORY/COMMENT lines joined by newlines, in order.
"""

import json
import math
import re
import struct
import sys
import urllib.parse
import warnings

import numpy as np
from astropy.io import fits
from astropy.table import Table
import astropy.units as u

STRUCTURAL = {"SIMPLE", "XTENSION", "BITPIX", "NAXIS", "EXTEND", "PCOUNT", "GCOUNT",
              "TFIELDS", "THEAP", "EXTNAME", "END", "CHECKSUM", "DATASUM", "GROUPS",
              "LONGSTRN", "ZIMAGE", "ZTABLE"}
COLUMN_KEY = re.compile(r"^(NAXIS|TTYPE|TFORM|TUNIT|TSCAL|TZERO|TNULL|TDISP|TDIM|TBCOL|TCOMM|TUCD|TLMIN|TLMAX|TDMIN|TDMAX)[1-9][0-9]*$")
PAIR_KEY = re.compile(r"^(MKEY|MVAL)([1-9][0-9]*)$")

failures = []


def fail(msg):
    failures.append(msg)
    print("FAIL:", msg)


def unescape(s):
    return urllib.parse.unquote_to_bytes(s).decode("utf-8", "surrogateescape")


def decode_meta(hdr):
    cards = list(hdr.cards)
    keys, vals = {}, {}
    for c in cards:
        m = PAIR_KEY.match(c.keyword)
        if m and isinstance(c.value, str):
            (keys if m.group(1) == "MKEY" else vals).setdefault(int(m.group(2)), c.value)
    meta, lines = [], {}
    for c in cards:
        k = c.keyword
        if k in ("COMMENT", "HISTORY"):
            if k not in lines:
                lines[k] = []
                meta.append([k, None])
            lines[k].append(str(c.value))
            continue
        if k == "" or k in STRUCTURAL or COLUMN_KEY.match(k):
            continue
        m = PAIR_KEY.match(k)
        if m and int(m.group(2)) in keys and int(m.group(2)) in vals:
            if m.group(1) == "MKEY":
                n = int(m.group(2))
                meta.append([unescape(keys[n]), unescape(vals[n])])
            continue
        meta.append([k, c.value])
    for m in meta:
        if m[1] is None:
            m[1] = "\n".join(lines[m[0]])
    return meta


def same_meta_value(got, want):
    if isinstance(got, bool):
        return want == ("T" if got else "F")
    if isinstance(got, (int, float)) and not isinstance(got, bool):
        try:
            return float(want) == float(got)
        except ValueError:
            return False
    return got == want


def main():
    path, expected_path = sys.argv[1], sys.argv[2]
    with open(expected_path) as f:
        exp = json.load(f)

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        hdul = fits.open(path)
        hdul.verify("exception")
        hdr = hdul[1].header
        t = Table.read(path, hdu=1)
        datloc = hdul.fileinfo(1)["datLoc"]
        rowsz = hdr["NAXIS1"]
        offsets = {name: hdul[1].data.dtype.fields[name][1] for name in hdul[1].data.dtype.names}
    for w in caught:
        fail("astropy warned: %s" % w.message)
    with open(path, "rb") as f:
        raw = f.read()

    if hdr.get("EXTNAME") != exp["name"]:
        fail("EXTNAME %r, want %r" % (hdr.get("EXTNAME"), exp["name"]))
    if len(t.colnames) != len(exp["columns"]):
        fail("%d columns, want %d" % (len(t.colnames), len(exp["columns"])))

    for i, c in enumerate(exp["columns"], 1):
        name = c["name"]
        if hdr.get("TTYPE%d" % i) != name:
            fail("TTYPE%d = %r, want %r" % (i, hdr.get("TTYPE%d" % i), name))
            continue
        if hdr.get("TUNIT%d" % i, "") != c["unit"]:
            fail("TUNIT%d = %r, want %r" % (i, hdr.get("TUNIT%d" % i, ""), c["unit"]))
        if c["unit"]:
            if t[name].unit is None or t[name].unit != u.Unit(c["unit"]):
                fail("column %s: astropy unit %r, want %r" % (name, t[name].unit, c["unit"]))
        if hdr.get("TCOMM%d" % i, "") != c["desc"]:
            fail("TCOMM%d = %r, want %r" % (i, hdr.get("TCOMM%d" % i, ""), c["desc"]))

        col = t[name]
        data = np.ma.asarray(col)
        mask = np.ma.getmaskarray(data)
        for r, want in enumerate(c["values"]):
            where = "column %s row %d" % (name, r + 1)
            if c["kind"] == "bool":
                byte = raw[datloc + r * rowsz + offsets[name]]
                wbyte = 0 if want is None else (ord("T") if want else ord("F"))
                if byte != wbyte:
                    fail("%s: stored byte 0x%02x, want 0x%02x" % (where, byte, wbyte))
                if want is not None and bool(data[r]) != want:
                    fail("%s: astropy %r, want %r" % (where, data[r], want))
                continue
            if c["kind"] == "string":
                got = "" if mask[r] else str(data[r])
                want = "" if want is None else want  # FITS has no null string
                if got != want:
                    fail("%s: %r, want %r" % (where, got, want))
                continue
            if want is None:
                if not mask[r]:
                    fail("%s: %r, want masked (null)" % (where, data[r]))
                continue
            if mask[r]:
                fail("%s: masked, want %s" % (where, want))
                continue
            if c["kind"] == "int64":
                if int(data[r]) != int(want):
                    fail("%s: %d, want %s" % (where, int(data[r]), want))
            else:
                g, w = float(data[r]), float(want)
                if struct.pack(">d", g) != struct.pack(">d", w):
                    fail("%s: %r, want %r" % (where, g, w))

    meta = decode_meta(hdr)
    if len(meta) != len(exp["meta"]):
        fail("%d metadata entries, want %d:\n got %r\nwant %r" % (len(meta), len(exp["meta"]), meta, exp["meta"]))
    for (gk, gv), (wk, wv) in zip(meta, exp["meta"]):
        if gk != wk or not same_meta_value(gv, wv):
            fail("metadata %r = %r, want %r = %r" % (gk, gv, wk, wv))

    hdul.close()
    if failures:
        print("interop.py: %d failure(s)" % len(failures))
        return 1
    print("interop.py: astropy reads %s: %d columns x %d rows, %d metadata entries: all match"
          % (path, len(exp["columns"]), len(t), len(meta)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
