package survey

// Direct access to the rows of a FITS binary table, for readers that decode
// the fields themselves (HEALPix maps stored as 1024-element vector rows,
// MOC cell lists) instead of going through Table columns, which would expand
// a vector field into one column per element.

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
)

// FITSField is one field of a FITS binary table as declared by TFORMn and
// TTYPEn (FITS Standard 4.0 §7.3.1).
type FITSField struct {
	Num    int    // 1-based field number n
	Name   string // TTYPEn, blanks trimmed; "col<n>" when absent
	Code   byte   // TFORMn type letter: L X B I J K A E D C M P Q
	Repeat int64  // TFORMn repeat count
	Offset int64  // byte offset of the field within a row
	Width  int64  // bytes taken by the field in each row
}

// FITSTable is a FITS binary-table HDU opened for reading the raw bytes of
// its rows. Values are stored big-endian (FITS 4.0 §7.3.3). Close releases
// the file.
type FITSTable struct {
	Path     string // file name used in errors
	HDU      int    // 0-based HDU index
	Rows     int64  // NAXIS2
	RowBytes int64  // NAXIS1
	Fields   []FITSField

	f *os.File
	h *fitsHeader
}

// OpenFITSTable opens the first binary-table extension of the FITS file at
// path, after checking its structural keywords (BITPIX = 8, NAXIS = 2,
// GCOUNT = 1, TFORMn widths adding up to NAXIS1) and that the data unit is
// present in full. Problems are reported as *InputError naming the file
// and the header card.
func OpenFITSTable(path string) (t *FITSTable, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			t = nil
			f.Close()
		}
	}()
	defer fitsRecover(path, &err)
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	size := st.Size()
	var seen []string
	off := int64(0)
	for hdu := 0; hdu == 0 || off < size; hdu++ {
		if hdu > 0 {
			probe := make([]byte, min(8, size-off))
			if _, err := f.ReadAt(probe, off); err != nil {
				return nil, &InputError{File: path, Byte: off, Msg: "reading HDU header", Err: err}
			}
			if !strings.HasPrefix("XTENSION", string(probe)) {
				break
			}
		}
		h, err := fitsReadHeader(f, path, off, size, hdu)
		if err != nil {
			return nil, err
		}
		dsize, err := h.dataSize(path)
		if err != nil {
			return nil, err
		}
		if h.kind() == "BINTABLE" {
			return fitsNewTable(f, path, h, size)
		}
		seen = append(seen, h.describe())
		off = h.dataOff + fitsPadded(dsize)
	}
	return nil, &InputError{File: path, Byte: -1,
		Msg: fmt.Sprintf("no binary table extension; the file holds HDU %s", strings.Join(seen, ", "))}
}

// fitsNewTable checks the BINTABLE header h and lays out its fields.
func fitsNewTable(f *os.File, path string, h *fitsHeader, size int64) (*FITSTable, error) {
	rowsz, nrows, nfields, err := fitsTableLayout(path, h, size)
	if err != nil {
		return nil, err
	}
	t := &FITSTable{Path: path, HDU: h.hdu, Rows: nrows, RowBytes: rowsz, f: f, h: h}
	off := int64(0)
	for n := 1; n <= int(nfields); n++ {
		fl, err := fitsParseField(path, h, n)
		if err != nil {
			return nil, err
		}
		fl.off = off
		off += fl.width
		if off > rowsz {
			return nil, h.cardErr(path, h.get(fmt.Sprintf("TFORM%d", n)),
				fmt.Sprintf("fields 1-%d take %d bytes per row, more than NAXIS1 = %d", n, off, rowsz))
		}
		t.Fields = append(t.Fields, FITSField{Num: n, Name: fl.name, Code: fl.code, Repeat: fl.repeat, Offset: fl.off, Width: fl.width})
	}
	if off != rowsz {
		return nil, h.cardErr(path, h.get("NAXIS1"),
			fmt.Sprintf("the TFORMn fields take %d bytes per row but NAXIS1 = %d", off, rowsz))
	}
	return t, nil
}

// Close closes the file.
func (t *FITSTable) Close() error { return t.f.Close() }

// Keyword returns the value of the first card with keyword key in the
// table's header: a string value without quotes and trailing blanks, or
// any other value as written. ok is false when the keyword is absent.
func (t *FITSTable) Keyword(key string) (value string, ok bool) {
	c := t.h.get(key)
	if c == nil {
		return "", false
	}
	return c.valueString(), true
}

// Int returns the integer value of keyword key, which must lie in
// [lo, hi]. A missing keyword is an error when required is true and gives
// def otherwise.
func (t *FITSTable) Int(key string, required bool, def, lo, hi int64) (int64, error) {
	return t.h.int(t.Path, key, required, def, lo, hi)
}

// Float returns the real value of keyword key (a FITS integer or real,
// with D or E exponent), or def when the keyword is absent.
func (t *FITSTable) Float(key string, def float64) (float64, error) {
	c := t.h.get(key)
	if c == nil {
		return def, nil
	}
	if c.isStr {
		return 0, t.h.cardErr(t.Path, c, fmt.Sprintf("expected a number, found the string %q", c.str))
	}
	v, err := strconv.ParseFloat(strings.Replace(strings.Replace(c.raw, "D", "E", 1), "d", "e", 1), 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, t.h.cardErr(t.Path, c, fmt.Sprintf("expected a finite number, found %q", c.raw))
	}
	return v, nil
}

// KeywordError returns an *InputError about keyword key of the table's
// header, pointing at its card when present: "file: byte N: HDU 1 header
// card 12 (NSIDE): msg".
func (t *FITSTable) KeywordError(key, msg string) error {
	return t.h.cardErr(t.Path, t.h.get(key), msg)
}

// Field returns the field whose TTYPEn equals name, ignoring case and
// surrounding blanks.
func (t *FITSTable) Field(name string) (FITSField, bool) {
	name = strings.TrimSpace(name)
	for _, f := range t.Fields {
		if strings.EqualFold(f.Name, name) {
			return f, true
		}
	}
	return FITSField{}, false
}

// ReadRows fills dst with the raw bytes of the rows starting at 0-based row
// first; len(dst) must be a multiple of RowBytes and the rows must exist,
// otherwise ReadRows panics (a programming error: the caller knows Rows).
func (t *FITSTable) ReadRows(dst []byte, first int64) error {
	if t.RowBytes == 0 {
		return nil
	}
	n := int64(len(dst)) / t.RowBytes
	if int64(len(dst))%t.RowBytes != 0 || first < 0 || first+n > t.Rows {
		panic(fmt.Sprintf("survey: ReadRows of %d bytes at row %d of a %d-row table of %d-byte rows", len(dst), first, t.Rows, t.RowBytes))
	}
	off := t.h.dataOff + first*t.RowBytes
	if _, err := t.f.ReadAt(dst, off); err != nil {
		return &InputError{File: t.Path, Row: first + 1, Byte: off, Msg: "reading binary-table rows", Err: err}
	}
	return nil
}
