package survey

// FITS binary tables (FITS Standard 4.0 §7.3), read by streaming the data
// unit in row batches and written whole through an io.Writer.
//
// Reading maps each binary-table field onto Table columns:
//
//	TFORM  stored as                 column
//	L      logical 'T'/'F'           Bool; 0x00 is null
//	X      bits, most significant    Bool, one per bit
//	       first
//	B      uint8                     Int64 (Float64 when scaled)
//	I      int16                     Int64 (Float64 when scaled)
//	J      int32                     Int64 (Float64 when scaled)
//	K      int64                     Int64 (Float64 when scaled)
//	E      float32                   Float64; NaN is null
//	D      float64                   Float64; NaN is null
//	rA     r characters              String, cut at the first NUL, trailing blanks removed
//	C, M   complex                   rejected (an InputError naming the column)
//	P, Q   variable-length arrays    rejected (an InputError naming the column)
//
// Integers with TSCALn = 1 (or absent) and an integral TZEROn stay integers:
// TZERO = -128 on B is the signed-byte convention, 32768 and 2147483648 are the
// unsigned 16- and 32-bit conventions (FITS 4.0 §7.3.2 Table 19) and all fit
// int64. TZERO = 9223372036854775808 is unsigned 64-bit; values up to
// math.MaxInt64 are read exactly and larger ones are an InputError naming
// the row and column (they do not fit the Int64 kind, and converting them to
// float64 would silently lose digits). Any other scaling gives
// Float64 = TZEROn + TSCALn × stored. TNULLn marks nulls by the stored
// integer, before scaling.
//
// A field with repeat count r > 1 (other than rA) is expanded into r columns
// named NAME_0 … NAME_{r-1}, each with the field's unit and description.
// TTYPEn is the column name ("col<n>" when absent or empty), TUNITn its unit,
// TCOMMn its description. A name already taken gets "_<n>" appended, n being
// the 1-based field number.

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"runtime/debug"
	"slices"
	"strconv"
	"strings"
)

const (
	// fitsBatchRows is the default number of rows returned by Next.
	fitsBatchRows = 65536
	// fitsMaxExpanded bounds the number of columns produced from one file by
	// expanding vector fields.
	fitsMaxExpanded = 100000
)

// fitsField is one binary-table field as declared by TFORMn.
type fitsField struct {
	num    int    // 1-based field number
	name   string // TTYPEn
	code   byte   // TFORM type letter
	repeat int64
	width  int64 // bytes per row
	off    int64 // byte offset within the row
}

// fitsCol is one output column: a field, or one element of a vector field.
type fitsCol struct {
	name, unit, desc string
	kind             Kind
	code             byte
	field            int   // 1-based field number
	off              int   // byte offset within the row of this element
	n                int   // characters for 'A'
	bit              uint8 // bit mask for 'X'
	unsupported      string

	scaled       bool // Float64 = zero + scale*stored
	scale, zero  float64
	izero        int64 // integer TZERO for Int64 output
	uint64Offset bool  // K with TZERO = 2^63
	hasNull      bool
	tnull        int64
}

// fitsReader streams one binary-table HDU.
type fitsReader struct {
	path    string
	f       *os.File
	schema  *Table
	cols    []fitsCol // selected columns, in schema order
	nrows   int64
	rowsz   int64
	dataOff int64
	next    int64 // 0-based index of the next row
	buf     []byte
}

// openFITS opens the binary table chosen by opt.HDU in the FITS file at path
// and returns a Reader streaming its rows. All header problems are reported
// here as *InputError; data problems are reported by Next.
func openFITS(path string, opt ReadOptions) (r Reader, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			r = nil
			f.Close()
		}
	}()
	defer fitsRecover(path, &err)
	return fitsOpenFile(f, path, opt)
}

// fitsRecover turns a panic into an InputError. It is a last resort: every
// check is meant to happen before it could panic, and the fuzz test fails on
// any error produced here.
func fitsRecover(path string, err *error) {
	if p := recover(); p != nil {
		*err = &InputError{File: path, Byte: -1,
			Msg: fmt.Sprintf("internal error while reading FITS: %v\n%s", p, debug.Stack())}
	}
}

// fitsOpenFile walks the HDUs of f up to the chosen one and prepares the reader.
func fitsOpenFile(f *os.File, path string, opt ReadOptions) (*fitsReader, error) {
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	size := st.Size()
	want := strings.TrimSpace(opt.HDU)
	index := -1
	if want != "" {
		if n, err := strconv.Atoi(want); err == nil && n >= 0 {
			index = n
		}
	}
	var seen []string
	off := int64(0)
	for hdu := 0; ; hdu++ {
		if hdu > 0 && off >= size {
			break // no further HDU
		}
		if hdu > 0 {
			probe := make([]byte, min(8, size-off))
			if _, err := f.ReadAt(probe, off); err != nil {
				return nil, &InputError{File: path, Byte: off, Msg: "reading HDU header", Err: err}
			}
			if !strings.HasPrefix("XTENSION", string(probe)) {
				// FITS 4.0 §3.5 allows special records after the last HDU.
				seen = append(seen, fmt.Sprintf("%d bytes after byte %d that are not an extension", size-off, off))
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
		kind := h.kind()
		var chosen bool
		switch {
		case index >= 0:
			chosen = hdu == index
		case want != "":
			chosen = strings.EqualFold(h.extName(), want)
		default:
			chosen = kind == "BINTABLE"
		}
		if chosen {
			switch kind {
			case "BINTABLE":
				return fitsNewReader(f, path, h, size, opt)
			case "TABLE":
				return nil, &InputError{File: path, Byte: h.off,
					Msg: fmt.Sprintf("HDU %s is an ASCII table; only binary tables (XTENSION = 'BINTABLE') are read", h.describe())}
			default:
				return nil, &InputError{File: path, Byte: h.off,
					Msg: fmt.Sprintf("HDU %s is not a binary table (XTENSION = 'BINTABLE')", h.describe())}
			}
		}
		seen = append(seen, h.describe())
		if h.dataOff+dsize > size {
			return nil, &InputError{File: path, Byte: h.dataOff,
				Msg: fmt.Sprintf("HDU %d data unit is truncated: %d bytes expected, %d present", hdu, dsize, size-h.dataOff)}
		}
		off = h.dataOff + fitsPadded(dsize)
	}
	what := "no binary table extension"
	if want != "" {
		what = fmt.Sprintf("no HDU with index or EXTNAME %q", want)
	}
	return nil, &InputError{File: path, Byte: -1,
		Msg: fmt.Sprintf("%s; the file holds HDU %s", what, strings.Join(seen, ", "))}
}

// fitsNewReader checks a BINTABLE header and builds its column plan.
// fitsTableLayout checks the mandatory keywords of a BINTABLE header h
// (FITS 4.0 §7.3.1: BITPIX 8, NAXIS 2, GCOUNT 1) and that the data unit,
// NAXIS1 × NAXIS2 + PCOUNT bytes, fits in a file of size bytes. It returns
// the row width, row count and number of fields.
func fitsTableLayout(path string, h *fitsHeader, size int64) (rowsz, nrows, nfields int64, err error) {
	const limit = int64(1) << 60
	if b, err := h.int(path, "BITPIX", true, 0, -64, 64); err != nil {
		return 0, 0, 0, err
	} else if b != 8 {
		return 0, 0, 0, h.cardErr(path, h.get("BITPIX"), fmt.Sprintf("a binary table needs BITPIX = 8, found %d", b))
	}
	if n, err := h.int(path, "NAXIS", true, 0, 0, 999); err != nil {
		return 0, 0, 0, err
	} else if n != 2 {
		return 0, 0, 0, h.cardErr(path, h.get("NAXIS"), fmt.Sprintf("a binary table needs NAXIS = 2, found %d", n))
	}
	if rowsz, err = h.int(path, "NAXIS1", true, 0, 0, limit); err != nil {
		return 0, 0, 0, err
	}
	if nrows, err = h.int(path, "NAXIS2", true, 0, 0, limit); err != nil {
		return 0, 0, 0, err
	}
	pcount, err := h.int(path, "PCOUNT", true, 0, 0, limit)
	if err != nil {
		return 0, 0, 0, err
	}
	if g, err := h.int(path, "GCOUNT", true, 1, 0, limit); err != nil {
		return 0, 0, 0, err
	} else if g != 1 {
		return 0, 0, 0, h.cardErr(path, h.get("GCOUNT"), fmt.Sprintf("a binary table needs GCOUNT = 1, found %d", g))
	}
	if nfields, err = h.int(path, "TFIELDS", true, 0, 0, 999); err != nil {
		return 0, 0, 0, err
	}
	if rowsz != 0 && nrows > limit/rowsz {
		return 0, 0, 0, h.cardErr(path, h.get("NAXIS2"), "NAXIS1 × NAXIS2 overflows")
	}
	need := rowsz*nrows + pcount
	if have := size - h.dataOff; need > have {
		return 0, 0, 0, &InputError{File: path, Byte: h.dataOff,
			Msg: fmt.Sprintf("HDU %d data unit is truncated: NAXIS1 × NAXIS2 + PCOUNT = %d × %d + %d = %d bytes expected, %d present",
				h.hdu, rowsz, nrows, pcount, need, max(have, 0))}
	}
	return rowsz, nrows, nfields, nil
}

func fitsNewReader(f *os.File, path string, h *fitsHeader, size int64, opt ReadOptions) (*fitsReader, error) {
	rowsz, nrows, nfields, err := fitsTableLayout(path, h, size)
	if err != nil {
		return nil, err
	}

	fields := make([]fitsField, 0, nfields)
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
		fields = append(fields, fl)
	}
	if off != rowsz {
		return nil, h.cardErr(path, h.get("NAXIS1"),
			fmt.Sprintf("the TFORMn fields take %d bytes per row but NAXIS1 = %d", off, rowsz))
	}

	all, err := fitsColumns(path, h, fields)
	if err != nil {
		return nil, err
	}
	names := make([]string, len(all))
	for i := range all {
		names[i] = all[i].name
	}
	idx, err := ResolveColumns(path, names, opt.Columns)
	if err != nil {
		return nil, err
	}
	r := &fitsReader{path: path, f: f, nrows: nrows, rowsz: rowsz, dataOff: h.dataOff}
	r.schema = &Table{Name: h.extName(), Meta: h.meta()}
	for _, i := range idx {
		c := all[i]
		if c.unsupported != "" {
			return nil, &InputError{File: path, Byte: h.off, Column: c.name,
				Msg: c.unsupported + "; leave this column out of the selection to read the others"}
		}
		r.cols = append(r.cols, c)
		sc := NewColumn(c.name, c.kind, 0)
		sc.Unit, sc.Desc = c.unit, c.desc
		r.schema.Cols = append(r.schema.Cols, sc)
	}
	return r, nil
}

// fitsParseField reads TFORMn (and TTYPEn) of field n.
func fitsParseField(path string, h *fitsHeader, n int) (fitsField, error) {
	fl := fitsField{num: n}
	key := fmt.Sprintf("TFORM%d", n)
	c := h.get(key)
	if c == nil {
		return fl, h.missingErr(path, key, fmt.Sprintf("the format of field %d", n))
	}
	form := strings.TrimSpace(c.valueString())
	i := 0
	for i < len(form) && form[i] >= '0' && form[i] <= '9' {
		i++
	}
	fl.repeat = 1
	if i > 0 {
		r, err := strconv.ParseInt(form[:i], 10, 64)
		if err != nil || r > 1<<40 {
			return fl, h.cardErr(path, c, fmt.Sprintf("repeat count %q is too large", form[:i]))
		}
		fl.repeat = r
	}
	if i == len(form) {
		return fl, h.cardErr(path, c, fmt.Sprintf("expected a format rT with T one of L X B I J K A E D C M P Q, found %q", form))
	}
	fl.code = form[i]
	rest := strings.TrimSpace(form[i+1:])
	var size int64
	switch fl.code {
	case 'L', 'B', 'A':
		size = 1
	case 'I':
		size = 2
	case 'J', 'E':
		size = 4
	case 'K', 'D', 'C':
		size = 8
	case 'M':
		size = 16
	case 'P':
		size = 8
	case 'Q':
		size = 16
	case 'X':
		fl.width = (fl.repeat + 7) / 8
	default:
		return fl, h.cardErr(path, c, fmt.Sprintf("expected a format rT with T one of L X B I J K A E D C M P Q, found %q", form))
	}
	if fl.code != 'A' && fl.code != 'P' && fl.code != 'Q' && rest != "" {
		return fl, h.cardErr(path, c, fmt.Sprintf("unexpected text %q after the type code", rest))
	}
	if fl.code != 'X' {
		fl.width = fl.repeat * size
	}
	fl.name = strings.TrimSpace(h.str(fmt.Sprintf("TTYPE%d", n)))
	if fl.name == "" {
		fl.name = fmt.Sprintf("col%d", n)
	}
	return fl, nil
}

// fitsColumns expands the fields into output columns and works out their
// kinds, scaling and null values.
func fitsColumns(path string, h *fitsHeader, fields []fitsField) ([]fitsCol, error) {
	var cols []fitsCol
	taken := map[string]bool{}
	unique := func(name string, field int) string {
		for taken[name] {
			name = fmt.Sprintf("%s_%d", name, field)
		}
		taken[name] = true
		return name
	}
	unesc := func(s string) string { return s }
	if c := h.get(fitsEscapeKey); c != nil && !c.isStr && strings.TrimSpace(c.raw) == "T" {
		unesc = fitsUnescape
	}
	for _, fl := range fields {
		fl.name = unesc(fl.name)
		if fl.repeat == 0 {
			continue // a field of width 0 holds no data (FITS 4.0 §7.3.1)
		}
		n := fl.num
		tmpl := fitsCol{
			code:  fl.code,
			field: n,
			unit:  unesc(strings.TrimSpace(h.str(fmt.Sprintf("TUNIT%d", n)))),
			desc:  unesc(strings.TrimSpace(h.str(fmt.Sprintf("TCOMM%d", n)))),
			off:   int(fl.off),
		}
		elems := fl.repeat
		switch fl.code {
		case 'A':
			tmpl.kind = String
			tmpl.n = int(fl.repeat)
			elems = 1
		case 'L', 'X':
			tmpl.kind = Bool
		case 'E', 'D':
			tmpl.kind = Float64
			if err := fitsScaling(path, h, &tmpl); err != nil {
				return nil, err
			}
		case 'B', 'I', 'J', 'K':
			tmpl.kind = Int64
			if err := fitsScaling(path, h, &tmpl); err != nil {
				return nil, err
			}
			if tmpl.scaled {
				tmpl.kind = Float64
			}
		case 'C', 'M':
			tmpl.kind = Float64
			tmpl.unsupported = fmt.Sprintf("field %d has complex format %q, which is not read", n, h.str(fmt.Sprintf("TFORM%d", n)))
			elems = 1
		case 'P', 'Q':
			tmpl.kind = Float64
			tmpl.unsupported = fmt.Sprintf("field %d is a variable-length array (format %q), which is not read", n, h.str(fmt.Sprintf("TFORM%d", n)))
			elems = 1
		}
		if int64(len(cols))+elems > fitsMaxExpanded {
			return nil, h.cardErr(path, h.get(fmt.Sprintf("TFORM%d", n)),
				fmt.Sprintf("expanding vector fields would give more than %d columns", fitsMaxExpanded))
		}
		if elems == 1 {
			c := tmpl
			c.name = unique(fl.name, n)
			if c.code == 'X' {
				c.bit = 0x80
			}
			cols = append(cols, c)
			continue
		}
		size := fl.width / fl.repeat
		for k := int64(0); k < elems; k++ {
			c := tmpl
			c.name = unique(fl.name+"_"+strconv.FormatInt(k, 10), n)
			if c.code == 'X' {
				c.off += int(k / 8)
				c.bit = 0x80 >> uint(k%8)
			} else {
				c.off += int(k * size)
			}
			cols = append(cols, c)
		}
	}
	return cols, nil
}

// fitsScaling reads TSCALn, TZEROn and TNULLn for a numeric field.
func fitsScaling(path string, h *fitsHeader, c *fitsCol) error {
	n := c.field
	c.scale, c.zero = 1, 0
	if k := h.get(fmt.Sprintf("TSCAL%d", n)); k != nil && k.valueString() != "" {
		v, err := fitsParseReal(k)
		if err != nil {
			return h.cardErr(path, k, err.Error())
		}
		c.scale = v
	}
	zcard := h.get(fmt.Sprintf("TZERO%d", n))
	if zcard != nil && zcard.valueString() != "" {
		v, err := fitsParseReal(zcard)
		if err != nil {
			return h.cardErr(path, zcard, err.Error())
		}
		c.zero = v
	}
	if c.kind == Float64 {
		c.scaled = c.scale != 1 || c.zero != 0
		return nil
	}
	if k := h.get(fmt.Sprintf("TNULL%d", n)); k != nil && k.valueString() != "" {
		v, err := strconv.ParseInt(strings.TrimSpace(k.valueString()), 10, 64)
		if err != nil {
			return h.cardErr(path, k, fmt.Sprintf("expected an integer null value, found %q", k.valueString()))
		}
		c.hasNull, c.tnull = true, v
	}
	if c.scale != 1 {
		c.scaled = true
		return nil
	}
	switch {
	case c.zero == 0:
	case c.code == 'K' && c.zero == 1<<63:
		// 2^63 is exact in float64 whether written as 9223372036854775808 or in E notation.
		c.uint64Offset = true
	case c.zero == math.Trunc(c.zero) && math.Abs(c.zero) < 1<<62:
		c.izero = int64(c.zero)
	default:
		c.scaled = true
	}
	return nil
}

// fitsParseReal parses a numeric header value (integer or real, E or D exponent).
func fitsParseReal(c *fitsCard) (float64, error) {
	s := strings.TrimSpace(c.valueString())
	v, err := strconv.ParseFloat(strings.Replace(s, "D", "E", 1), 64)
	if err != nil {
		return 0, fmt.Errorf("expected a number, found %q", s)
	}
	return v, nil
}

// Schema returns the selected columns (no rows), EXTNAME as Name and the
// header's metadata.
func (r *fitsReader) Schema() *Table { return r.schema }

// NumRows returns NAXIS2.
func (r *fitsReader) NumRows() int64 { return r.nrows }

// Close closes the file.
func (r *fitsReader) Close() error {
	if r.f == nil {
		return nil
	}
	err := r.f.Close()
	r.f = nil
	return err
}

// Next returns up to max rows (fitsBatchRows when max <= 0).
func (r *fitsReader) Next(max int) (t *Table, err error) {
	defer fitsRecover(r.path, &err)
	t = &Table{Name: r.schema.Name}
	for _, c := range r.schema.Cols {
		t.Cols = append(t.Cols, c.cloneEmpty(0))
	}
	if _, err := r.appendNext(t, max); err != nil {
		return nil, err
	}
	return t, nil
}

// appendNext decodes up to max rows (fitsBatchRows when max <= 0) and
// appends them to the columns of dst, which must be those of Schema in the
// same order. It returns the number of rows appended, or io.EOF at the end.
// After an error, dst's columns may differ in length.
//
// Decoding into the caller's table avoids the garbage of one batch table per
// call: ReadAll could use it to read a whole file with the table as its only
// large allocation (see BenchmarkReadFITS1Mx20/direct).
func (r *fitsReader) appendNext(dst *Table, max int) (rows int, err error) {
	defer fitsRecover(r.path, &err)
	if r.f == nil {
		return 0, &InputError{File: r.path, Byte: -1, Msg: "reader is closed"}
	}
	if len(dst.Cols) != len(r.cols) {
		return 0, fmt.Errorf("survey: FITS: appending %d columns to a table of %d", len(r.cols), len(dst.Cols))
	}
	if r.next >= r.nrows || len(r.cols) == 0 {
		return 0, io.EOF
	}
	n := int64(max)
	if n <= 0 {
		n = fitsBatchRows
	}
	n = min(n, r.nrows-r.next)
	need := int(n * r.rowsz)
	if cap(r.buf) < need {
		r.buf = make([]byte, need)
	}
	buf := r.buf[:need]
	pos := r.dataOff + r.next*r.rowsz
	if got, err := r.f.ReadAt(buf, pos); err != nil {
		row := r.next + 1
		if r.rowsz > 0 {
			row += int64(got) / r.rowsz
		}
		return 0, &InputError{File: r.path, Row: row, Byte: pos + int64(got),
			Msg: "data unit ends early (the file changed or was truncated after it was opened)", Err: err}
	}
	for i := range r.cols {
		if err := r.decode(&r.cols[i], dst.Cols[i], buf, int(n)); err != nil {
			return 0, err
		}
	}
	r.next += n
	return int(n), nil
}

// rowErr returns an InputError for row i (0-based within the batch) of column c.
func (r *fitsReader) rowErr(c *fitsCol, i int, msg string) *InputError {
	row := r.next + int64(i)
	return &InputError{File: r.path, Row: row + 1, Column: c.name,
		Byte: r.dataOff + row*r.rowsz + int64(c.off), Msg: msg}
}

// decode appends column c of the n rows held in buf to out.
func (r *fitsReader) decode(c *fitsCol, out *Column, buf []byte, n int) error {
	if out.Kind != c.kind {
		return fmt.Errorf("survey: FITS: column %q is %v, decoding %v", out.Name, out.Kind, c.kind)
	}
	rowsz := int(r.rowsz)
	base := out.Len()
	var (
		fs []float64
		is []int64
		bs []bool
		ss []string
	)
	capacity := 0
	switch c.kind {
	case Float64:
		out.F = slices.Grow(out.F, n)[:base+n]
		fs, capacity = out.F[base:], cap(out.F)
	case Int64:
		out.I = slices.Grow(out.I, n)[:base+n]
		is, capacity = out.I[base:], cap(out.I)
	case Bool:
		out.B = slices.Grow(out.B, n)[:base+n]
		bs, capacity = out.B[base:], cap(out.B)
	case String:
		out.S = slices.Grow(out.S, n)[:base+n]
		ss, capacity = out.S[base:], cap(out.S)
	}
	if out.Null != nil {
		out.Null = slices.Grow(out.Null, n)[:base+n]
		clear(out.Null[base:])
	}
	setNull := func(i int) {
		if out.Null == nil {
			// The capacity of the values, so later batches need not grow the mask.
			out.Null = make([]bool, base+n, capacity)
		}
		out.Null[base+i] = true
	}
	switch c.code {
	case 'A':
		for i := 0; i < n; i++ {
			b := buf[i*rowsz+c.off : i*rowsz+c.off+c.n]
			if j := fitsIndexNUL(b); j >= 0 {
				b = b[:j]
			}
			j := len(b)
			for j > 0 && b[j-1] == ' ' {
				j--
			}
			ss[i] = string(b[:j])
		}
	case 'L':
		for i := 0; i < n; i++ {
			switch buf[i*rowsz+c.off] {
			case 'T':
				bs[i] = true
			case 'F':
				bs[i] = false
			case 0:
				bs[i] = false
				setNull(i)
			default:
				return r.rowErr(c, i, fmt.Sprintf("expected a logical 'T', 'F' or 0x00, found byte 0x%02x", buf[i*rowsz+c.off]))
			}
		}
	case 'X':
		for i := 0; i < n; i++ {
			bs[i] = buf[i*rowsz+c.off]&c.bit != 0
		}
	case 'E', 'D':
		for i := 0; i < n; i++ {
			p := buf[i*rowsz+c.off:]
			var v float64
			if c.code == 'E' {
				v = float64(math.Float32frombits(binary.BigEndian.Uint32(p)))
			} else {
				v = math.Float64frombits(binary.BigEndian.Uint64(p))
			}
			if c.scaled {
				v = c.zero + c.scale*v
			}
			if v != v {
				setNull(i)
				v = nan
			}
			fs[i] = v
		}
	case 'B', 'I', 'J', 'K':
		for i := 0; i < n; i++ {
			p := buf[i*rowsz+c.off:]
			var raw int64
			switch c.code {
			case 'B':
				raw = int64(p[0])
			case 'I':
				raw = int64(int16(binary.BigEndian.Uint16(p)))
			case 'J':
				raw = int64(int32(binary.BigEndian.Uint32(p)))
			case 'K':
				raw = int64(binary.BigEndian.Uint64(p))
			}
			if c.hasNull && raw == c.tnull {
				setNull(i)
				if c.scaled {
					fs[i] = nan
				} else {
					is[i] = 0
				}
				continue
			}
			switch {
			case c.scaled:
				fs[i] = c.zero + c.scale*float64(raw)
			case c.uint64Offset:
				u := uint64(raw) ^ 1<<63 // raw + 2^63, as unsigned
				if u > math.MaxInt64 {
					return r.rowErr(c, i, fmt.Sprintf("unsigned 64-bit value %d does not fit the int64 column kind", u))
				}
				is[i] = int64(u)
			default:
				v := raw + c.izero
				if (c.izero > 0 && v < raw) || (c.izero < 0 && v > raw) {
					return r.rowErr(c, i, fmt.Sprintf("stored value %d + TZERO %d overflows int64", raw, c.izero))
				}
				is[i] = v
			}
		}
	default:
		return r.rowErr(c, 0, fmt.Sprintf("format %q is not read", string(c.code)))
	}
	return nil
}

// fitsIndexNUL returns the index of the first NUL byte in b, or -1.
func fitsIndexNUL(b []byte) int {
	for i, c := range b {
		if c == 0 {
			return i
		}
	}
	return -1
}
