package survey

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// fitsNullTNULL is the preferred TNULLn sentinel for Int64 columns with nulls;
// another unused value is chosen when the data hold it.
const fitsNullTNULL = math.MinInt64

// writeFITS writes t as a FITS file: a primary HDU without data followed by
// one BINTABLE extension named t.Name ("CATALOGUE" when empty) holding every
// column, with TUNITn for units, TCOMMn for descriptions and the table
// metadata encoded as described under "Table metadata in FITS headers" in
// fits_header.go.
//
// Column kinds map to TFORM D (Float64), K (Int64), L (Bool) and rA (String,
// r the longest value in bytes, at least 1). Nulls are NaN for D, 0x00 for L
// and a TNULLn sentinel unused by the data for K (math.MinInt64 unless the
// data hold it). FITS has no null string: a null String is written as an
// empty string. Strings are padded with NUL bytes; the reader removes
// trailing blanks, so those of a value are lost. A String holding a NUL byte
// is cut there on reading. String bytes are written as they are: FITS 4.0
// §7.3.3.1 allows only ASCII text, so a value holding other bytes (UTF-8,
// say) makes fitsverify report an error, although astropy and this package
// read it back unchanged. A Float64 NaN that is not null reads back as null.
//
// t.Name must be printable ASCII, as EXTNAME requires. Column names, units
// and descriptions outside printable ASCII are %XX-escaped (fitsEscape) and
// the header carries TXTESC = T; metadata keys and values may hold any bytes.
func writeFITS(w io.Writer, t *Table) error {
	if err := t.Check(); err != nil {
		return err
	}
	name := t.Name
	if name == "" {
		name = "CATALOGUE"
	}
	if !fitsPrintable(name) {
		return fmt.Errorf("survey: FITS: table name %q is not printable ASCII, as EXTNAME must be", name)
	}

	var ph fitsHeaderWriter
	ph.logical("SIMPLE", true, "conforms to the FITS Standard 4.0")
	ph.int("BITPIX", 8, "")
	ph.int("NAXIS", 0, "no primary data; the table is in HDU 1")
	ph.logical("EXTEND", true, "extensions follow")
	ph.commentary("COMMENT", "Table metadata in HDU 1: plain keywords, or MKEYn/MVALn pairs of key and")
	ph.commentary("COMMENT", "value where %XX escapes bytes outside printable ASCII, '%' and a final")
	ph.commentary("COMMENT", "blank. Long strings use CONTINUE cards (FITS 4.0 sec. 4.2.1.2).")
	if _, err := w.Write(ph.end()); err != nil {
		return err
	}

	type wcol struct {
		c       *Column
		off     int
		width   int
		hasNull bool
		tnull   int64
	}
	cols := make([]wcol, len(t.Cols))
	rowsz := 0
	nrows := t.Len()
	var eh fitsHeaderWriter
	var colCards fitsHeaderWriter
	escaped := false
	for j, c := range t.Cols {
		n := j + 1
		// Header text must be printable ASCII; anything else (a unit "deg²",
		// a UTF-8 name from a Parquet file) is %XX-escaped and the header
		// says so with TXTESC, so our reader restores it exactly.
		cname, cunit, cdesc := c.Name, c.Unit, c.Desc
		if !fitsPrintable(cname) || !fitsPrintable(cunit) || !fitsPrintable(cdesc) {
			cname, cunit, cdesc = fitsEscape(cname), fitsEscape(cunit), fitsEscape(cdesc)
			escaped = true
		}
		wc := wcol{c: c, off: rowsz}
		var form string
		switch c.Kind {
		case Float64:
			form, wc.width = "D", 8
		case Int64:
			form, wc.width = "K", 8
			if c.NullCount() > 0 {
				wc.hasNull, wc.tnull = true, fitsPickNull(c)
			}
		case Bool:
			form, wc.width = "L", 1
		case String:
			wc.width = 1
			for _, s := range c.S {
				wc.width = max(wc.width, len(s))
			}
			form = strconv.Itoa(wc.width) + "A"
		default:
			return fmt.Errorf("survey: FITS: column %q has unknown kind %v", c.Name, c.Kind)
		}
		cols[j] = wc
		rowsz += wc.width
		colCards.str(fmt.Sprintf("TTYPE%d", n), cname, "")
		colCards.str(fmt.Sprintf("TFORM%d", n), form, "")
		if cunit != "" {
			colCards.str(fmt.Sprintf("TUNIT%d", n), cunit, "")
		}
		if wc.hasNull {
			colCards.int(fmt.Sprintf("TNULL%d", n), wc.tnull, "null value")
		}
		if cdesc != "" {
			colCards.str(fmt.Sprintf("TCOMM%d", n), cdesc, "")
		}
	}
	eh.str("XTENSION", "BINTABLE", "binary table extension")
	eh.int("BITPIX", 8, "")
	eh.int("NAXIS", 2, "")
	eh.int("NAXIS1", int64(rowsz), "bytes per row")
	eh.int("NAXIS2", int64(nrows), "rows")
	eh.int("PCOUNT", 0, "no heap")
	eh.int("GCOUNT", 1, "")
	eh.int("TFIELDS", int64(len(t.Cols)), "columns")
	var rest fitsHeaderWriter
	rest.str("EXTNAME", name, "")
	if escaped {
		rest.logical(fitsEscapeKey, true, "%XX escapes in TTYPEn, TUNITn, TCOMMn")
	}
	if err := fitsWriteMeta(&rest, t.Meta); err != nil {
		return err
	}
	if colCards.long || rest.long {
		// Not needed by FITS 4.0, which includes the convention, but
		// fitsverify warns without it (HEASARC long-string convention).
		eh.str("LONGSTRN", "OGIP 1.0", "CONTINUE cards hold long strings")
	}
	eh.buf = append(eh.buf, colCards.buf...)
	eh.buf = append(eh.buf, rest.buf...)
	if _, err := w.Write(eh.end()); err != nil {
		return err
	}

	// The rows, a chunk of about 1 MiB at a time.
	chunk := 1
	if rowsz > 0 {
		chunk = max(1, (1<<20)/rowsz)
	}
	buf := make([]byte, min(chunk, max(nrows, 1))*rowsz)
	var total int64
	for start := 0; start < nrows; start += chunk {
		n := min(chunk, nrows-start)
		for _, wc := range cols {
			c := wc.c
			for i := 0; i < n; i++ {
				row := start + i
				p := buf[i*rowsz+wc.off : i*rowsz+wc.off+wc.width]
				null := c.IsNull(row)
				switch c.Kind {
				case Float64:
					v := c.F[row]
					if null {
						v = nan
					}
					binary.BigEndian.PutUint64(p, math.Float64bits(v))
				case Int64:
					v := c.I[row]
					if null {
						v = wc.tnull
					}
					binary.BigEndian.PutUint64(p, uint64(v))
				case Bool:
					switch {
					case null:
						p[0] = 0
					case c.B[row]:
						p[0] = 'T'
					default:
						p[0] = 'F'
					}
				case String:
					s := ""
					if !null {
						s = c.S[row]
					}
					// NUL padding, as FITS 4.0 §7.3.3.1 allows, so that
					// readers that keep blanks (astropy) see the value.
					k := copy(p, s)
					clear(p[k:])
				}
			}
		}
		m, err := w.Write(buf[:n*rowsz])
		total += int64(m)
		if err != nil {
			return err
		}
	}
	if pad := fitsPadded(total) - total; pad > 0 {
		if _, err := w.Write(make([]byte, pad)); err != nil {
			return err
		}
	}
	return nil
}

// fitsPickNull returns a value not held by the non-null rows of an Int64
// column: math.MinInt64 when free, else the smallest free value above it.
func fitsPickNull(c *Column) int64 {
	used := false
	for i, v := range c.I {
		if v == fitsNullTNULL && !c.IsNull(i) {
			used = true
			break
		}
	}
	if !used {
		return fitsNullTNULL
	}
	vals := make([]int64, 0, len(c.I))
	for i, v := range c.I {
		if !c.IsNull(i) {
			vals = append(vals, v)
		}
	}
	slices.Sort(vals)
	cand := int64(fitsNullTNULL)
	for _, v := range vals {
		if v > cand {
			break
		}
		if v == cand {
			cand++
		}
	}
	return cand
}

// fitsWriteMeta appends the metadata cards (the encoding is described under
// "Table metadata in FITS headers" in fits_header.go).
func fitsWriteMeta(hw *fitsHeaderWriter, m Meta) error {
	plain := map[string]bool{}
	pair := 0
	for _, kv := range m {
		k, v := kv.Key, kv.Value
		switch {
		case (k == "COMMENT" || k == "HISTORY") && !plain[k] && fitsCommentaryOK(v):
			plain[k] = true
			for _, line := range strings.Split(v, "\n") {
				hw.commentary(k, line)
			}
		case fitsKeywordOK(k) && !fitsReservedKey(k) && !plain[k] && fitsPrintable(v) && !strings.HasSuffix(v, " ") &&
			!(fitsContinued(v) && strings.Contains(v, "''")):
			plain[k] = true
			if fitsIsLiteral(v) && fitsLiteralInRange(v) {
				hw.literal(k, v, "")
			} else {
				hw.str(k, v, "")
			}
		default:
			pair++
			if pair > fitsMaxMetaPairs {
				return fmt.Errorf("survey: FITS: more than %d metadata entries need MKEYn/MVALn keywords", fitsMaxMetaPairs)
			}
			hw.str(fmt.Sprintf("MKEY%d", pair), fitsEscape(k), fmt.Sprintf("metadata key; value in MVAL%d", pair))
			hw.str(fmt.Sprintf("MVAL%d", pair), fitsEscape(v), fmt.Sprintf("metadata value of MKEY%d", pair))
		}
	}
	return nil
}

// fitsContinued reports whether fitsHeaderWriter.str writes s on more than one card.
func fitsContinued(s string) bool {
	return len(s)+strings.Count(s, "'") > 68 || strings.HasSuffix(s, "&")
}

// fitsCommentaryOK reports whether every line of v fits one COMMENT or
// HISTORY card and reads back unchanged.
func fitsCommentaryOK(v string) bool {
	for _, line := range strings.Split(v, "\n") {
		if len(line) > 72 || !fitsPrintable(line) || strings.HasSuffix(line, " ") {
			return false
		}
	}
	return true
}

// fitsLiteralInRange reports whether a literal accepted by fitsIsLiteral is
// also a finite float64 and, without '.' or exponent, an int64.
func fitsLiteralInRange(s string) bool {
	if s == "T" || s == "F" {
		return true
	}
	if !strings.ContainsAny(s, ".ED") {
		_, err := strconv.ParseInt(s, 10, 64)
		return err == nil
	}
	v, err := strconv.ParseFloat(strings.Replace(s, "D", "E", 1), 64)
	return err == nil && !math.IsInf(v, 0)
}

// fitsHeaderWriter accumulates 80-byte header cards.
type fitsHeaderWriter struct {
	buf  []byte
	long bool // a string was continued on CONTINUE cards
}

// card appends one card, padded with blanks; line must be at most 80 bytes.
func (hw *fitsHeaderWriter) card(line string) {
	hw.buf = append(hw.buf, line...)
	for i := len(line); i < fitsCardLen; i++ {
		hw.buf = append(hw.buf, ' ')
	}
}

// cardComment appends line with " / comment" when the comment fits on the card.
func (hw *fitsHeaderWriter) cardComment(line, comment string) {
	if comment != "" && len(line)+3+len(comment) <= fitsCardLen {
		line += " / " + comment
	}
	hw.card(line)
}

// int appends an integer card in fixed format (value right-justified in columns 11-30).
func (hw *fitsHeaderWriter) int(key string, v int64, comment string) {
	hw.cardComment(fmt.Sprintf("%-8s= %20d", key, v), comment)
}

// logical appends a logical card in fixed format.
func (hw *fitsHeaderWriter) logical(key string, v bool, comment string) {
	s := "F"
	if v {
		s = "T"
	}
	hw.cardComment(fmt.Sprintf("%-8s= %20s", key, s), comment)
}

// literal appends a card whose value is a FITS literal of at most 70 bytes.
func (hw *fitsHeaderWriter) literal(key, v, comment string) {
	hw.cardComment(fmt.Sprintf("%-8s= %20s", key, v), comment)
}

// commentary appends a COMMENT or HISTORY card; text is at most 72 bytes.
func (hw *fitsHeaderWriter) commentary(key, text string) {
	hw.card(fmt.Sprintf("%-8s%s", key, text))
}

// str appends a string card (s printable ASCII), continued on CONTINUE cards
// when longer than one card can hold (FITS 4.0 §4.2.1.2). Short strings are
// padded to 8 characters, as fixed format requires of mandatory keywords.
// astropy 5.2.1 reads two consecutive quotes of a continued string as one;
// writeFITS avoids that for metadata, but a column name, unit or description
// needing CONTINUE cards and holding two consecutive quotes reads back with
// one of them in astropy.
func (hw *fitsHeaderWriter) str(key, s, comment string) {
	quote := func(seg string) string { return strings.ReplaceAll(seg, "'", "''") }
	cost := func(c byte) int {
		if c == '\'' {
			return 2
		}
		return 1
	}
	// A card holds 68 characters between the quotes that open in column 11.
	if !fitsContinued(s) {
		v := quote(s)
		if v != "" && len(v) < 8 {
			v += strings.Repeat(" ", 8-len(v))
		}
		hw.cardComment(fmt.Sprintf("%-8s= '%s'", key, v), comment)
		return
	}
	hw.long = true
	var segs []string
	for start := 0; start < len(s); {
		c, end := 0, start
		for end < len(s) && c+cost(s[end]) <= 67 { // 67 plus the '&'
			c += cost(s[end])
			end++
			// astropy 5.2.1 ends a continued piece at any quote followed
			// by a blank or '/', so such a quote closes the piece here.
			if s[end-1] == '\'' && end < len(s) && (s[end] == ' ' || s[end] == '/') {
				break
			}
		}
		segs = append(segs, s[start:end])
		start = end
	}
	for i, seg := range segs {
		prefix := "CONTINUE  "
		if i == 0 {
			prefix = fmt.Sprintf("%-8s= ", key)
		}
		last := i == len(segs)-1
		if last && !strings.HasSuffix(seg, "&") {
			hw.cardComment(prefix+"'"+quote(seg)+"'", comment)
			return
		}
		hw.card(prefix + "'" + quote(seg) + "&'")
	}
	// The value ends in '&': one more, empty, piece ends the string.
	hw.cardComment("CONTINUE  ''", comment)
}

// end appends the END card and pads the header to a whole block with blanks.
func (hw *fitsHeaderWriter) end() []byte {
	hw.card("END")
	for len(hw.buf)%fitsBlock != 0 {
		hw.buf = append(hw.buf, ' ')
	}
	return hw.buf
}
