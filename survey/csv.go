package survey

// CSV dialect.
//
// Files are read by openCSV (through Open and Read) and written by writeCSV
// (through Write) in the dialect below. It is RFC 4180 text with three
// additions: `#` comment lines, typed metadata in those comments, and null
// tokens.
//
// Layout, top to bottom:
//
//   - An optional UTF-8 byte-order mark (EF BB BF), skipped.
//   - Comment lines, each starting with `#`. Before the header, a comment of
//     the form `# key: value` is metadata; any other comment is ignored.
//     Comment lines after the header are ignored wherever a record starts.
//   - The header: one record of column names. Unquoted names are trimmed of
//     spaces and tabs; an empty name becomes "col<N>" (N the 1-based
//     position). Duplicate names are an error.
//   - Data records, one per row, each with exactly as many fields as the
//     header. Empty lines are skipped.
//
// Records follow RFC 4180 §2: fields are separated by commas, a field may be
// enclosed in double quotes and then hold commas, line breaks and doubled
// quotes (""). Lines end in LF or CRLF; a line break inside a quoted field is
// kept byte for byte (CRLF stays CRLF, as the field's content in RFC 4180
// §2.6), so every string round-trips. A quote inside an unquoted field is taken
// literally (RFC 4180 §3, interoperability considerations, asks readers to
// "be liberal in what you accept"; quoted from memory); text after a closing
// quote, an unclosed quote, and a record longer than 64 MiB are errors.
//
// Metadata comments. The writer emits `# key: value` and the reader takes the
// key up to the first colon and the value after it, both trimmed of spaces
// and tabs. A key that is empty, contains a colon, a control character or
// invalid UTF-8, has surrounding spaces, starts with a quote, or starts with
// "unit.", "desc." or "type." is written as a Go-quoted string
// (strconv.Quote); likewise a value that starts with a quote, has surrounding
// spaces or holds control characters or invalid UTF-8. A value that starts
// with a quote is unquoted with strconv.Unquote when it is a valid Go string
// literal and kept as text otherwise. So every Table.Meta key and value is
// read back exactly. A later duplicate key replaces the earlier value.
//
// Column comments, written after the table metadata for every column in
// order: `# unit.NAME: Mpc/h` (when the unit is set), `# desc.NAME: text`
// (when the description is set) and `# type.NAME: float64` (always). NAME is
// the column name, Go-quoted after the dot (`# unit."a:b": m`) when it would
// need quoting as a key. A bare unit./desc./type. key whose NAME is not a
// header column, and every quoted key, is ordinary metadata. The type is one
// of float64, int64, bool, string (case-insensitive) and fixes the column's
// kind, so files written here read back with their kinds; a value that does
// not parse as that kind is an error.
//
// Nulls. A field is null when, after trimming spaces and tabs, it is empty or
// one of the tokens nan, NaN, NAN (any case of "nan", optionally signed),
// null (any case), NA, N/A, n/a. In a String column a quoted field is never
// null: `""` is the empty string and `"NA"` the two letters; in other columns
// quotes make no difference. A float beyond ±1.8e308 is an error. The writer
// writes nulls as empty fields (as `nan` in a one-column table, where an
// empty field would be an empty, skipped line) and quotes every string that
// would otherwise read back differently: empty strings, null tokens, strings
// with surrounding spaces, commas, quotes or line breaks, and strings
// starting with `#`. Consequences: a non-null NaN in a Float64 column is
// written as nan and reads back as null (its value is NaN either way); a
// Float64 null holds NaN, other kinds hold their zero value under a null.
//
// Kinds without a type comment are inferred from the first csvInferRows
// (50000) data rows or csvInferBytes (8 MiB) of field text, whichever ends
// first; those rows are buffered and replayed, so the reader still streams.
// (Later rows are buffered csvChunkRows at a time, and a chunk is converted
// one column per goroutine; the result does not depend on the thread count.)
// Among the non-null values of the prefix: all integers that fit in int64
// give Int64; all integers with one beyond int64 give String (so long
// identifiers keep every digit); all decimal numbers (strconv.ParseFloat
// syntax without its hexadecimal form and underscores; inf, -inf and 1e300
// are numbers) give Float64; all of true, false, t, f (any case) give Bool;
// anything else gives String; no value at all gives Float64. A later row
// whose value does not fit the inferred kind is an InputError that names the
// line, row and column, the value, and the `# type.NAME:` line that would
// read it. Leading zeros are not kept by Int64 columns ("007" reads as 7);
// declare such a column string.
//
// The writer ends lines with LF, writes floats with formatFloat (the shortest
// text that reads back to the same float64), integers in decimal, booleans as
// true/false. The table name is not stored.

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"unicode/utf8"
)

const (
	// csvBatchRows is the batch size of Next when it is given max <= 0.
	csvBatchRows = 1 << 16
	// csvChunkRows and csvChunkBytes bound the rows buffered after the prefix.
	csvChunkRows  = 8192
	csvChunkBytes = 4 << 20
	// csvInferRows and csvInferBytes bound the prefix used to infer kinds.
	csvInferRows  = 50000
	csvInferBytes = 8 << 20
	// csvMaxRecord bounds the size of one record (or one comment line), so a
	// file without line breaks cannot exhaust memory.
	csvMaxRecord = 64 << 20
)

// csvErrTooLong is the cause of the error for a line or record over csvMaxRecord bytes.
var csvErrTooLong = errors.New("record too long")

// csvPropPrefixes are the key prefixes of column comments.
var csvPropPrefixes = [...]string{"unit.", "desc.", "type."}

// openCSV opens a CSV file for streaming; see the dialect description at the
// top of this file.
func openCSV(path string, opt ReadOptions) (Reader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "cannot open", Err: err}
	}
	r, err := csvNewReader(path, f, f, opt)
	if err != nil {
		f.Close()
		return nil, err
	}
	return r, nil
}

// csvReader is the streaming CSV Reader. It scans rows into the scanner's
// buffers (the first fill is the inference prefix, later fills are chunks of
// csvChunkRows) and converts them column by column into batches.
type csvReader struct {
	file   string
	closer io.Closer
	sc     *csvScanner
	schema *Table
	names  []string // all header names
	sel    []int    // header index of each schema column
	hinted []bool   // kind of schema column k came from a type comment

	lines   []int64 // start line of each buffered row; row i has fields i*nf … i*nf+nf-1
	nf      int     // fields per row
	next    int     // next buffered row to convert
	row0    int64   // data rows before the first buffered row
	fillErr error   // what ended the last fill (io.EOF at the end), delivered after the buffered rows
	row     int64   // data rows scanned so far
	nInfer  int     // rows the kinds were inferred from
	err     error   // sticky: io.EOF or the first error
}

// csvComment is one parsed `# key: value` line.
type csvComment struct {
	line   int64
	key    string // the key as metadata (raw text for a column comment)
	value  string
	prop   string // "unit", "desc" or "type" for a column comment, else ""
	name   string // column name of a column comment
	quoted bool   // key was Go-quoted: always metadata
}

// csvNewReader reads the header of src (named file in errors) and the
// inference prefix. closer, when non-nil, is closed by Close.
func csvNewReader(file string, src io.Reader, closer io.Closer, opt ReadOptions) (*csvReader, error) {
	r := &csvReader{file: file, closer: closer}
	sc := &csvScanner{br: bufio.NewReaderSize(src, 1<<16)}
	r.sc = sc
	if b, err := sc.br.Peek(3); err == nil && b[0] == 0xEF && b[1] == 0xBB && b[2] == 0xBF {
		sc.br.Discard(3)
	}
	var comments []csvComment
	sc.onComment = func(line []byte) {
		if c, ok := csvParseComment(line); ok {
			c.line = sc.line
			comments = append(comments, c)
		}
	}
	err := sc.next()
	sc.onComment = nil
	if err == io.EOF {
		return nil, &InputError{File: file, Line: sc.line, Byte: -1,
			Msg: "no header line: expected a line of comma-separated column names"}
	}
	if err != nil {
		return nil, r.scanErr(err, 0)
	}

	// Header.
	headerLine := sc.start
	r.nf = len(sc.ends)
	r.names = make([]string, r.nf)
	pos := make(map[string]int, r.nf)
	for j := range r.names {
		v, q := sc.field(j)
		name := string(v)
		if !q {
			name = string(csvTrim(v))
		}
		if name == "" {
			name = fmt.Sprintf("col%d", j+1)
		}
		if i, dup := pos[name]; dup {
			return nil, &InputError{File: file, Line: headerLine, Column: name, Byte: -1,
				Msg: fmt.Sprintf("duplicate column name in the header (fields %d and %d); expected unique names", i+1, j+1)}
		}
		pos[name] = j
		r.names[j] = name
	}
	sc.reset()

	// Metadata and column comments.
	r.schema = &Table{}
	units := make(map[string]string)
	descs := make(map[string]string)
	types := make(map[string]csvComment)
	for _, c := range comments {
		if _, ok := pos[c.name]; c.prop == "" || c.quoted || !ok {
			r.schema.Meta.Set(c.key, c.value)
			continue
		}
		switch c.prop {
		case "unit":
			units[c.name] = c.value
		case "desc":
			descs[c.name] = c.value
		case "type":
			types[c.name] = c
		}
	}

	r.sel, err = ResolveColumns(file, r.names, opt.Columns)
	if err != nil {
		return nil, err
	}
	r.hinted = make([]bool, len(r.sel))
	for k, j := range r.sel {
		name := r.names[j]
		kind := Float64
		if c, ok := types[name]; ok {
			kind, ok = csvKindOf(c.value)
			if !ok {
				return nil, &InputError{File: file, Line: c.line, Column: name, Byte: -1,
					Msg: fmt.Sprintf("type comment gives %q; expected float64, int64, bool or string", c.value)}
			}
			r.hinted[k] = true
		}
		col := NewColumn(name, kind, 0)
		col.Unit, col.Desc = units[name], descs[name]
		r.schema.Cols = append(r.schema.Cols, col)
	}

	r.readPrefix()
	return r, nil
}

// readPrefix buffers the first rows and infers the kinds of the columns
// that have no type comment.
func (r *csvReader) readPrefix() {
	r.fill(csvInferRows, csvInferBytes)
	r.nInfer = len(r.lines)
	for c, col := range r.schema.Cols {
		if r.hinted[c] {
			continue
		}
		var g csvGuess
		for i := range r.lines {
			v, _ := r.sc.field(i*r.nf + r.sel[c])
			g.see(v)
		}
		col.Kind = g.kind()
	}
}

// fill replaces the buffered rows by up to maxRows next rows, stopping
// early after maxBytes of field text, at the end of the file or at an error
// (kept in fillErr).
func (r *csvReader) fill(maxRows, maxBytes int) {
	r.row0 += int64(len(r.lines))
	r.lines, r.next = r.lines[:0], 0
	r.sc.reset()
	if cap(r.sc.rec) > 4*csvChunkBytes && maxBytes <= csvChunkBytes {
		r.sc.rec, r.sc.ends, r.sc.quoted = nil, nil, nil // let the prefix's buffers go
	}
	for len(r.lines) < maxRows && len(r.sc.rec) < maxBytes {
		if err := r.scanRow(); err != nil {
			r.fillErr = err
			return
		}
		r.lines = append(r.lines, r.sc.start)
	}
}

// scanRow reads the next data record and checks its field count. It returns
// io.EOF at the end of the file and an *InputError otherwise.
func (r *csvReader) scanRow() error {
	err := r.sc.next()
	if err == io.EOF {
		return io.EOF
	}
	if err != nil {
		return r.scanErr(err, r.row+1)
	}
	r.row++
	if n := len(r.sc.ends) - r.sc.first; n != len(r.names) {
		r.sc.drop()
		e := &InputError{File: r.file, Line: r.sc.start, Row: r.row, Byte: -1,
			Msg: fmt.Sprintf("expected %s as in the header, found %d", csvFields(len(r.names)), n),
			Err: &csv.ParseError{StartLine: int(r.sc.start), Line: int(r.sc.line), Column: 1, Err: csv.ErrFieldCount}}
		if n < len(r.names) {
			e.Column = r.names[n]
			e.Msg += " (missing from this column on)"
		}
		return e
	}
	return nil
}

// csvFields returns "1 field" or "n fields".
func csvFields(n int) string {
	if n == 1 {
		return "1 field"
	}
	return strconv.Itoa(n) + " fields"
}

// scanErr turns a scanner error into an *InputError for data row row (0 for
// the header).
func (r *csvReader) scanErr(err error, row int64) error {
	var se *csvSyntaxError
	if errors.As(err, &se) {
		e := &InputError{File: r.file, Line: se.line, Row: row, Byte: -1, Msg: se.msg, Err: se.pe}
		if se.field >= 0 && se.field < len(r.names) {
			e.Column = r.names[se.field]
		}
		return e
	}
	return &InputError{File: r.file, Line: r.sc.line + 1, Row: row, Byte: -1, Msg: "read failed", Err: err}
}

// Schema returns the columns (names, kinds, units, descriptions) and metadata.
func (r *csvReader) Schema() *Table { return r.schema }

// NumRows returns -1: a CSV file does not state its row count.
func (r *csvReader) NumRows() int64 { return -1 }

// Close closes the file. Next then fails.
func (r *csvReader) Close() error {
	r.lines, r.next = nil, 0
	if r.err == nil {
		r.err = &InputError{File: r.file, Byte: -1, Msg: "read after Close"}
	}
	r.sc.rec, r.sc.ends, r.sc.quoted = nil, nil, nil
	if r.closer != nil {
		c := r.closer
		r.closer = nil
		return c.Close()
	}
	return nil
}

// Next returns up to max rows (csvBatchRows when max <= 0). Rows before an
// error are returned first; the error comes on the following call and stays.
func (r *csvReader) Next(max int) (*Table, error) {
	if r.err != nil {
		return nil, r.err
	}
	if max <= 0 {
		max = csvBatchRows
	}
	capacity := min(max, csvBatchRows)
	if r.fillErr != nil {
		capacity = min(capacity, len(r.lines)-r.next)
	}
	b := &Table{Name: r.schema.Name, Cols: make([]*Column, len(r.schema.Cols))}
	for k, c := range r.schema.Cols {
		b.Cols[k] = c.cloneEmpty(capacity)
	}
	n := 0
	for n < max && r.err == nil {
		if r.next == len(r.lines) {
			if r.fillErr != nil {
				r.err = r.fillErr
				break
			}
			r.fill(csvChunkRows, csvChunkBytes)
			continue
		}
		m := min(max-n, len(r.lines)-r.next)
		if i, k := r.convert(b, r.next, r.next+m); i >= 0 {
			n += i - r.next
			v, _ := r.sc.field(i*r.nf + r.sel[k])
			r.err = r.valueErr(k, v, r.lines[i], r.row0+int64(i)+1)
			break
		}
		r.next += m
		n += m
	}
	if n == 0 {
		return nil, r.err
	}
	for _, c := range b.Cols {
		csvTruncate(c, n)
	}
	return b, nil
}

// convert appends buffered rows lo to hi-1 to the columns of b, one column
// per goroutine when the work is large enough. It returns the first row and
// column (in reading order) whose field does not fit the column's kind, or
// -1, -1; columns then hold rows up to different points and the caller
// truncates them.
func (r *csvReader) convert(b *Table, lo, hi int) (badRow, badCol int) {
	k := len(b.Cols)
	bad := make([]int, k)
	one := func(c int) {
		col, j := b.Cols[c], r.sel[c]
		for i := lo; i < hi; i++ {
			v, q := r.sc.field(i*r.nf + j)
			if !csvPut(col, v, q) {
				bad[c] = i
				return
			}
		}
		bad[c] = -1
	}
	workers := min(runtime.GOMAXPROCS(0), k)
	if workers < 2 || (hi-lo)*k < 1<<14 {
		for c := range k {
			one(c)
		}
	} else {
		var wg sync.WaitGroup
		var nextCol atomic.Int64
		for range workers {
			wg.Go(func() {
				for c := int(nextCol.Add(1) - 1); c < k; c = int(nextCol.Add(1) - 1) {
					one(c)
				}
			})
		}
		wg.Wait()
	}
	badRow, badCol = -1, -1
	for c, i := range bad {
		if i >= 0 && (badRow < 0 || i < badRow) {
			badRow, badCol = i, c
		}
	}
	return badRow, badCol
}

// valueErr describes field v of schema column k that does not parse as the
// column's kind.
func (r *csvReader) valueErr(k int, v []byte, line, row int64) *InputError {
	c := r.schema.Cols[k]
	t := csvTrim(v)
	var msg string
	if r.hinted[k] {
		msg = fmt.Sprintf("expected %s (declared by its type comment), found %q", c.Kind, v)
	} else {
		want := String
		if c.Kind == Int64 && csvIsFloat(t) {
			want = Float64
		}
		msg = fmt.Sprintf("expected %s (inferred from the first %d rows), found %q; "+
			"to read the column as %s, add the line %q before the header",
			c.Kind, r.nInfer, v, want, "# type."+csvPropName(c.Name)+": "+want.String())
	}
	if c.Kind == Float64 {
		if _, err := csvParseFloat(t); errors.Is(err, strconv.ErrRange) {
			msg = fmt.Sprintf("value %q is beyond the float64 range (±1.8e308)", v)
		}
	}
	return &InputError{File: r.file, Line: line, Row: row, Column: c.Name, Byte: -1, Msg: msg}
}

// csvTruncate cuts c to n rows, dropping a partly appended row.
func csvTruncate(c *Column, n int) {
	switch c.Kind {
	case Float64:
		c.F = c.F[:min(n, len(c.F))]
	case Int64:
		c.I = c.I[:min(n, len(c.I))]
	case Bool:
		c.B = c.B[:min(n, len(c.B))]
	case String:
		c.S = c.S[:min(n, len(c.S))]
	}
	if c.Null != nil {
		c.Null = c.Null[:min(n, len(c.Null))]
	}
}

// csvPut appends field v (quoted: it was enclosed in quotes) to c, as a value
// or a null. It returns false, appending nothing, when v is neither.
func csvPut(c *Column, v []byte, quoted bool) bool {
	if c.Kind == String {
		if !quoted && csvIsNull(csvTrim(v)) {
			c.S = append(c.S, "")
			csvMark(c, len(c.S), true)
			return true
		}
		c.S = append(c.S, string(v))
		csvMark(c, len(c.S), false)
		return true
	}
	t := csvTrim(v)
	switch c.Kind {
	case Float64:
		f, err := csvParseFloat(t)
		if err == nil && !math.IsNaN(f) {
			c.F = append(c.F, f)
			csvMark(c, len(c.F), false)
			return true
		}
		if err == nil || csvIsNull(t) {
			c.F = append(c.F, nan)
			csvMark(c, len(c.F), true)
			return true
		}
	case Int64:
		i, err := strconv.ParseInt(string(t), 10, 64)
		if err == nil {
			c.I = append(c.I, i)
			csvMark(c, len(c.I), false)
			return true
		}
		if csvIsNull(t) {
			c.I = append(c.I, 0)
			csvMark(c, len(c.I), true)
			return true
		}
	case Bool:
		if b, ok := csvParseBool(t); ok {
			c.B = append(c.B, b)
			csvMark(c, len(c.B), false)
			return true
		}
		if csvIsNull(t) {
			c.B = append(c.B, false)
			csvMark(c, len(c.B), true)
			return true
		}
	}
	return false
}

// csvMark records whether the value just appended (the column now has n
// rows) is null, allocating the mask at the first null.
func csvMark(c *Column, n int, null bool) {
	if null {
		if c.Null == nil {
			c.Null = make([]bool, n-1, max(n, cap(c.F), cap(c.I), cap(c.B), cap(c.S)))
		}
		c.Null = append(c.Null, true)
	} else if c.Null != nil {
		c.Null = append(c.Null, false)
	}
}

// csvGuess accumulates what the non-null values seen so far of one column
// could be.
type csvGuess struct {
	any          bool // a non-null value was seen
	notInt       bool // a value is not an integer within int64
	notIntSyntax bool // a value is not an integer at all
	notFloat     bool // a value does not parse as a float
	notBool      bool // a value is not a boolean
}

// see takes one field into account.
func (g *csvGuess) see(v []byte) {
	t := csvTrim(v)
	if csvIsNull(t) {
		return
	}
	g.any = true
	if !g.notIntSyntax {
		if _, err := strconv.ParseInt(string(t), 10, 64); err != nil {
			g.notInt = true
			if !errors.Is(err, strconv.ErrRange) {
				g.notIntSyntax = true
			}
		}
	}
	if g.notIntSyntax && !g.notFloat && !csvIsFloat(t) {
		g.notFloat = true
	}
	if !g.notBool {
		if _, ok := csvParseBool(t); !ok {
			g.notBool = true
		}
	}
}

// kind returns the inferred kind.
func (g *csvGuess) kind() Kind {
	switch {
	case !g.any:
		return Float64
	case !g.notInt:
		return Int64
	case !g.notIntSyntax:
		return String // integers beyond int64: keep every digit
	case !g.notFloat:
		return Float64
	case !g.notBool:
		return Bool
	}
	return String
}

// csvIsFloat reports whether t has float syntax (an out-of-range value
// counts: it is reported when converted).
func csvIsFloat(t []byte) bool {
	_, err := csvParseFloat(t)
	return err == nil || errors.Is(err, strconv.ErrRange)
}

// csvParseFloat is strconv.ParseFloat restricted to decimal text: it refuses
// the hexadecimal form and digit-separating underscores, which ParseFloat
// accepts, so that identifiers such as 0x1F or 12_34 are not taken for numbers.
func csvParseFloat(t []byte) (float64, error) {
	for _, c := range t {
		if c == '_' || c == 'x' || c == 'X' {
			return 0, strconv.ErrSyntax
		}
	}
	return strconv.ParseFloat(string(t), 64)
}

// csvParseBool parses true, false, t, f in any case.
func csvParseBool(t []byte) (v, ok bool) {
	switch len(t) {
	case 1:
		switch t[0] {
		case 't', 'T':
			return true, true
		case 'f', 'F':
			return false, true
		}
	case 4:
		return true, strings.EqualFold(string(t), "true")
	case 5:
		return false, strings.EqualFold(string(t), "false")
	}
	return false, false
}

// csvIsNull reports whether the trimmed field t is a null token.
func csvIsNull(t []byte) bool {
	switch len(t) {
	case 0:
		return true
	case 2:
		return string(t) == "NA"
	case 3:
		s := string(t)
		return strings.EqualFold(s, "nan") || s == "N/A" || s == "n/a"
	case 4:
		s := string(t)
		if s[0] == '-' || s[0] == '+' {
			return strings.EqualFold(s[1:], "nan")
		}
		return strings.EqualFold(s, "null")
	}
	return false
}

// csvTrim trims spaces and tabs.
func csvTrim(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	return b
}

// csvKindOf parses a type comment's value.
func csvKindOf(s string) (Kind, bool) {
	for _, k := range []Kind{Float64, Int64, Bool, String} {
		if strings.EqualFold(s, k.String()) {
			return k, true
		}
	}
	return 0, false
}

// csvParseComment parses a comment line (starting with '#', without its line
// break) as `key: value`; ok is false for other comments.
func csvParseComment(line []byte) (c csvComment, ok bool) {
	s := strings.Trim(string(line[1:]), " \t")
	for _, p := range csvPropPrefixes {
		if !strings.HasPrefix(s, p+`"`) {
			continue
		}
		q, err := strconv.QuotedPrefix(s[len(p):])
		if err != nil {
			break
		}
		rest := strings.TrimLeft(s[len(p)+len(q):], " \t")
		if !strings.HasPrefix(rest, ":") {
			break
		}
		name, _ := strconv.Unquote(q)
		return csvComment{key: s[:len(p)+len(q)], value: csvUnquoteValue(rest[1:]),
			prop: p[:4], name: name}, true
	}
	if strings.HasPrefix(s, `"`) {
		if q, err := strconv.QuotedPrefix(s); err == nil {
			rest := strings.TrimLeft(s[len(q):], " \t")
			if strings.HasPrefix(rest, ":") {
				key, _ := strconv.Unquote(q)
				return csvComment{key: key, value: csvUnquoteValue(rest[1:]), quoted: true}, true
			}
		}
	}
	i := strings.IndexByte(s, ':')
	if i < 0 {
		return c, false
	}
	key := strings.TrimRight(s[:i], " \t")
	if key == "" {
		return c, false
	}
	c = csvComment{key: key, value: csvUnquoteValue(s[i+1:])}
	for _, p := range csvPropPrefixes {
		if strings.HasPrefix(key, p) {
			c.prop, c.name = p[:4], key[len(p):]
		}
	}
	return c, true
}

// csvUnquoteValue trims v and unquotes it when it is a Go string literal.
func csvUnquoteValue(v string) string {
	v = strings.Trim(v, " \t")
	if strings.HasPrefix(v, `"`) {
		if u, err := strconv.Unquote(v); err == nil {
			return u
		}
	}
	return v
}

// csvScanner splits text into RFC 4180 records.
type csvScanner struct {
	br     *bufio.Reader
	line   int64  // text lines read so far
	start  int64  // line on which the current record starts
	rec    []byte // field text of the records read since reset, concatenated
	ends   []int  // end of each field in rec
	quoted []bool // each field was enclosed in quotes
	first  int    // index of the current record's first field
	long   []byte // holds a line longer than br's buffer

	// onComment, when set, receives the comment lines met before a record.
	onComment func(line []byte)
}

// csvSyntaxError is a malformed record, as encoding/csv reports it.
type csvSyntaxError struct {
	pe    *csv.ParseError
	line  int64 // the line to report: where an unclosed quote opened, else where the problem is
	field int   // 0-based index of the field, -1 when unknown
	msg   string
}

func (e *csvSyntaxError) Error() string { return e.msg + ": " + e.pe.Error() }

// field returns field g (counted over all records since reset) and whether
// it was quoted.
func (s *csvScanner) field(g int) ([]byte, bool) {
	lo := 0
	if g > 0 {
		lo = s.ends[g-1]
	}
	return s.rec[lo:s.ends[g]], s.quoted[g]
}

// reset empties the buffers.
func (s *csvScanner) reset() {
	s.rec, s.ends, s.quoted, s.first = s.rec[:0], s.ends[:0], s.quoted[:0], 0
}

// drop removes the current (last) record from the buffers.
func (s *csvScanner) drop() {
	lo := 0
	if s.first > 0 {
		lo = s.ends[s.first-1]
	}
	s.rec, s.ends, s.quoted = s.rec[:lo], s.ends[:s.first], s.quoted[:s.first]
}

// readLine returns the next line without its LF or CRLF (a CR before the end
// of the file is dropped too); nl reports whether a line break ended it and
// cr whether a CR was dropped, so a quoted field spanning lines keeps its
// line break byte for byte (RFC 4180 §2.6). At the end it returns io.EOF.
// The line is valid until the next call.
func (s *csvScanner) readLine() (line []byte, nl, cr bool, err error) {
	line, err = s.br.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		s.long = append(s.long[:0], line...)
		for err == bufio.ErrBufferFull && len(s.long) <= csvMaxRecord {
			line, err = s.br.ReadSlice('\n')
			s.long = append(s.long, line...)
		}
		if err == bufio.ErrBufferFull {
			return nil, false, false, &csvSyntaxError{
				pe:    &csv.ParseError{StartLine: int(s.line + 1), Line: int(s.line + 1), Column: 1, Err: csvErrTooLong},
				line:  s.line + 1,
				field: -1,
				msg:   fmt.Sprintf("line longer than %d MiB; expected a line break", csvMaxRecord>>20)}
		}
		line = s.long
	}
	if err == io.EOF && len(line) > 0 {
		err = nil
	}
	if err != nil {
		return nil, false, false, err
	}
	s.line++
	n := len(line)
	if line[n-1] == '\n' {
		nl = true
		n--
	}
	if n > 0 && line[n-1] == '\r' {
		cr = true
		n--
	}
	return line[:n], nl, cr, nil
}

// next appends the next record to the buffers, skipping empty lines and
// comment lines. It returns io.EOF at the end, a *csvSyntaxError for a
// malformed record and other errors from the underlying reader; after an
// error the buffers hold only the earlier records.
func (s *csvScanner) next() error {
	s.first = len(s.ends)
	err := s.scan()
	if err != nil {
		s.drop()
	}
	return err
}

// scan appends the next record; see next.
func (s *csvScanner) scan() error {
	var line []byte
	var nl, cr bool
	var err error
	for {
		line, nl, cr, err = s.readLine()
		if err != nil {
			return err
		}
		if len(line) == 0 {
			continue
		}
		if line[0] == '#' {
			if s.onComment != nil {
				s.onComment(line)
			}
			continue
		}
		break
	}
	s.start = s.line
	pos := 0
	for {
		if pos >= len(line) || line[pos] != '"' {
			// Unquoted field: up to the next comma or the end of the line.
			i := bytes.IndexByte(line[pos:], ',')
			if i < 0 {
				s.rec = append(s.rec, line[pos:]...)
				s.ends = append(s.ends, len(s.rec))
				s.quoted = append(s.quoted, false)
				return nil
			}
			s.rec = append(s.rec, line[pos:pos+i]...)
			s.ends = append(s.ends, len(s.rec))
			s.quoted = append(s.quoted, false)
			pos += i + 1
			continue
		}
		// Quoted field, possibly over several lines.
		pos++
		for {
			i := bytes.IndexByte(line[pos:], '"')
			if i < 0 {
				s.rec = append(s.rec, line[pos:]...)
				if !nl || len(s.rec) > csvMaxRecord {
					return s.unclosed()
				}
				if cr {
					s.rec = append(s.rec, '\r')
				}
				s.rec = append(s.rec, '\n')
				line, nl, cr, err = s.readLine()
				if err == io.EOF {
					return s.unclosed()
				}
				if err != nil {
					return err
				}
				pos = 0
				continue
			}
			s.rec = append(s.rec, line[pos:pos+i]...)
			pos += i + 1
			if pos < len(line) && line[pos] == '"' {
				s.rec = append(s.rec, '"')
				pos++
				continue
			}
			break
		}
		s.ends = append(s.ends, len(s.rec))
		s.quoted = append(s.quoted, true)
		if pos == len(line) {
			return nil
		}
		if line[pos] != ',' {
			return &csvSyntaxError{
				pe:    &csv.ParseError{StartLine: int(s.start), Line: int(s.line), Column: pos + 1, Err: csv.ErrQuote},
				line:  s.line,
				field: len(s.ends) - 1 - s.first,
				msg:   fmt.Sprintf("text after the closing quote of a field; expected a comma or the end of the line, found %q", line[pos])}
		}
		pos++
	}
}

// unclosed is the error for a quoted field with no closing quote.
func (s *csvScanner) unclosed() error {
	msg := fmt.Sprintf("quoted field starting on line %d is never closed; expected a closing quote", s.start)
	cause := csv.ErrQuote
	if len(s.rec) > csvMaxRecord {
		msg = fmt.Sprintf("record starting on line %d is longer than %d MiB; expected a closing quote", s.start, csvMaxRecord>>20)
		cause = csvErrTooLong
	}
	return &csvSyntaxError{
		pe:    &csv.ParseError{StartLine: int(s.start), Line: int(s.line), Column: 1, Err: cause},
		line:  s.start,
		field: len(s.ends) - s.first,
		msg:   msg}
}

// writeCSV writes t in the dialect described at the top of this file: the
// metadata comments (Table.Meta in order, then unit, desc and type comments
// for each column), the header and one record per row.
func writeCSV(w io.Writer, t *Table) error {
	if err := t.Check(); err != nil {
		return err
	}
	if len(t.Cols) == 0 {
		return errors.New("survey: a CSV file needs at least one column")
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	var line []byte
	for _, kv := range t.Meta {
		line = csvAppendComment(line[:0], csvMetaKey(kv.Key), kv.Value)
		bw.Write(line)
	}
	for _, c := range t.Cols {
		if c.Kind > String {
			return fmt.Errorf("survey: column %q has unknown kind %d", c.Name, c.Kind)
		}
		name := csvPropName(c.Name)
		if c.Unit != "" {
			line = csvAppendComment(line[:0], "unit."+name, c.Unit)
			bw.Write(line)
		}
		if c.Desc != "" {
			line = csvAppendComment(line[:0], "desc."+name, c.Desc)
			bw.Write(line)
		}
		line = csvAppendComment(line[:0], "type."+name, c.Kind.String())
		bw.Write(line)
	}
	line = line[:0]
	for j, c := range t.Cols {
		if j > 0 {
			line = append(line, ',')
		}
		line = csvAppendString(line, c.Name)
	}
	line = append(line, '\n')
	bw.Write(line)

	nullText := ""
	if len(t.Cols) == 1 {
		nullText = "nan" // an empty line would be skipped
	}
	n := t.Len()
	for i := 0; i < n; i++ {
		line = line[:0]
		for j, c := range t.Cols {
			if j > 0 {
				line = append(line, ',')
			}
			if c.IsNull(i) {
				line = append(line, nullText...)
				continue
			}
			switch c.Kind {
			case Float64:
				if v := c.F[i]; math.IsNaN(v) || math.IsInf(v, 0) {
					line = append(line, formatFloat(v)...)
				} else {
					// formatFloat's encoding of a finite value, without allocating.
					line = strconv.AppendFloat(line, v, 'g', -1, 64)
				}
			case Int64:
				line = strconv.AppendInt(line, c.I[i], 10)
			case Bool:
				line = strconv.AppendBool(line, c.B[i])
			case String:
				line = csvAppendString(line, c.S[i])
			}
		}
		line = append(line, '\n')
		if _, err := bw.Write(line); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// csvAppendString appends s as a field, quoted when reading it unquoted would
// give something else.
func csvAppendString(dst []byte, s string) []byte {
	if !csvStringNeedsQuotes(s) {
		return append(dst, s...)
	}
	dst = append(dst, '"')
	for {
		i := strings.IndexByte(s, '"')
		if i < 0 {
			break
		}
		dst = append(dst, s[:i+1]...)
		dst = append(dst, '"')
		s = s[i+1:]
	}
	dst = append(dst, s...)
	return append(dst, '"')
}

// csvStringNeedsQuotes reports whether s must be quoted as a field.
func csvStringNeedsQuotes(s string) bool {
	if s == "" || s[0] == '#' || csvHasSpaceEdge(s) || csvIsNull([]byte(s)) {
		return true
	}
	return strings.ContainsAny(s, ",\"\r\n")
}

// csvHasSpaceEdge reports whether s starts or ends with a space or tab.
func csvHasSpaceEdge(s string) bool {
	if s == "" {
		return false
	}
	a, z := s[0], s[len(s)-1]
	return a == ' ' || a == '\t' || z == ' ' || z == '\t'
}

// csvHasControl reports whether s holds a control character or invalid UTF-8.
func csvHasControl(s string) bool {
	for i := 0; i < len(s); i++ {
		if c := s[i]; c < 0x20 || c == 0x7f {
			return true
		}
	}
	return !utf8.ValidString(s)
}

// csvMetaKey returns key as written in a metadata comment.
func csvMetaKey(key string) string {
	q := key == "" || key[0] == '"' || strings.IndexByte(key, ':') >= 0 ||
		csvHasSpaceEdge(key) || csvHasControl(key)
	for _, p := range csvPropPrefixes {
		q = q || strings.HasPrefix(key, p)
	}
	if q {
		return strconv.Quote(key)
	}
	return key
}

// csvPropName returns a column name as written after "unit.", "desc." or
// "type." in a column comment.
func csvPropName(name string) string {
	if name == "" || name[0] == '"' || strings.IndexByte(name, ':') >= 0 ||
		csvHasSpaceEdge(name) || csvHasControl(name) {
		return strconv.Quote(name)
	}
	return name
}

// csvAppendComment appends the line `# key: value` (key already in written
// form), quoting the value when needed.
func csvAppendComment(dst []byte, key, value string) []byte {
	dst = append(dst, "# "...)
	dst = append(dst, key...)
	dst = append(dst, ':')
	if value != "" {
		dst = append(dst, ' ')
		if value[0] == '"' || csvHasSpaceEdge(value) || csvHasControl(value) {
			dst = strconv.AppendQuote(dst, value)
		} else {
			dst = append(dst, value...)
		}
	}
	return append(dst, '\n')
}
