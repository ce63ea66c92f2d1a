package survey

// FITS header cards: parsing (FITS Standard 4.0 §4), the long-string CONTINUE
// convention (§4.2.1.2), and the encoding of Table.Meta into header cards.
//
// The cards are parsed and written here rather than by
// github.com/astrogo/fitsio v0.3.0 because its decoder loads every HDU's data
// into memory while parsing headers, panics on malformed values through
// unchecked type assertions (NAXIS = 'x'), and drops the last character of
// any string followed by a CONTINUE card whether or not it is '&'; its
// encoder does not double quotes inside strings (O'Neil gives an invalid
// card). fitsio is used by the tests as an independent reader of the files
// written here.

import (
	"bytes"
	"fmt"
	"io"
	"strconv"
	"strings"
)

const (
	// fitsBlock is the FITS logical record length in bytes (FITS 4.0 §3.1).
	fitsBlock = 2880
	// fitsCardLen is the length of one header card (keyword record) in bytes.
	fitsCardLen = 80
	// fitsMaxCards bounds the header of one HDU, so that a file without an
	// END card cannot make the reader hold the whole file as cards.
	fitsMaxCards = 200000
	// fitsMaxMetaPairs is the largest n of the MKEYn/MVALn metadata keywords
	// (8-character keyword names).
	fitsMaxMetaPairs = 9999
)

// fitsCard is one header card, with CONTINUE cards already merged into the
// string value they continue.
type fitsCard struct {
	key      string // keyword, trailing blanks removed; for HIERARCH cards the words after HIERARCH
	num      int    // 1-based card number within the HDU's header
	off      int64  // byte offset of the card in the file
	hasValue bool   // the card has a value indicator ("= " in columns 9-10, or HIERARCH ... =)
	isStr    bool   // the value is a quoted string
	str      string // string value, quotes undoubled, trailing blanks removed
	raw      string // non-string value as written (logical, integer, float, complex); "" when undefined
	text     string // commentary text for cards without a value (COMMENT, HISTORY, blank keyword, ...)
	hierarch bool
}

// valueString returns the card's value as text: the string itself, or the
// literal as written for other values ("" for an undefined value).
func (c *fitsCard) valueString() string {
	if c.isStr {
		return c.str
	}
	return c.raw
}

// fitsHeader is the parsed header of one HDU.
type fitsHeader struct {
	hdu      int   // 0-based HDU index
	off      int64 // byte offset of the first card
	dataOff  int64 // byte offset of the data unit (just after the header's last block)
	cards    []fitsCard
	first    map[string]int // keyword -> index of its first card
	nblocks  int
	endFound bool
}

// fitsParseCard parses one 80-byte card. The error text names what was expected.
func fitsParseCard(b []byte) (fitsCard, error) {
	var c fitsCard
	key := strings.TrimRight(string(b[:8]), " ")
	c.key = key
	switch {
	case key == "HIERARCH":
		// ESO HIERARCH convention: "HIERARCH word word = value".
		rest := b[8:]
		i := bytes.IndexByte(rest, '=')
		if i < 0 || bytes.IndexByte(rest[:i], '\'') >= 0 {
			c.text = strings.TrimRight(string(rest), " ")
			return c, nil
		}
		c.key = strings.Join(strings.Fields(string(rest[:i])), " ")
		c.hierarch = true
		c.hasValue = true
		return c, fitsParseValue(&c, rest[i+1:])
	case key == "CONTINUE":
		// Long-string continuation: a quoted string anywhere from column 9.
		rest := bytes.TrimLeft(b[8:], " ")
		if len(rest) > 0 && rest[0] == '\'' {
			c.hasValue = true
			return c, fitsParseValue(&c, rest)
		}
		c.text = strings.TrimRight(string(b[8:]), " ")
		return c, nil
	case key == "COMMENT" || key == "HISTORY" || key == "" || b[8] != '=' || b[9] != ' ':
		c.text = strings.TrimRight(string(b[8:]), " ")
		return c, nil
	}
	c.hasValue = true
	return c, fitsParseValue(&c, b[10:])
}

// fitsParseValue parses the value field (and ignores the comment) of a card.
func fitsParseValue(c *fitsCard, v []byte) error {
	v = bytes.TrimLeft(v, " ")
	if len(v) == 0 || v[0] == '/' {
		return nil // undefined value
	}
	if v[0] == '\'' {
		var s []byte
		i := 1
		for {
			if i >= len(v) {
				return fmt.Errorf("string value has no closing quote")
			}
			if v[i] == '\'' {
				if i+1 < len(v) && v[i+1] == '\'' {
					s = append(s, '\'')
					i += 2
					continue
				}
				break
			}
			s = append(s, v[i])
			i++
		}
		c.isStr = true
		c.str = strings.TrimRight(string(s), " ")
		return nil
	}
	end := len(v)
	if v[0] == '(' { // complex: the slash cannot occur inside, but a comma can
		if j := bytes.IndexByte(v, ')'); j >= 0 {
			end = j + 1
		}
	} else if j := bytes.IndexByte(v, '/'); j >= 0 {
		end = j
	}
	c.raw = strings.TrimSpace(string(v[:end]))
	return nil
}

// fitsReadHeader reads and parses the header starting at byte off of r, a
// file of size bytes. hdu is the HDU's 0-based index, used in messages.
func fitsReadHeader(r io.ReaderAt, path string, off, size int64, hdu int) (*fitsHeader, error) {
	h := &fitsHeader{hdu: hdu, off: off, first: map[string]int{}}
	block := make([]byte, fitsBlock)
	num := 0
	pending := -1 // index of a string card waiting for CONTINUE cards
	for !h.endFound {
		pos := off + int64(h.nblocks)*fitsBlock
		if pos+fitsBlock > size {
			msg := fmt.Sprintf("HDU %d header is truncated: %d bytes left where a %d-byte header block was expected, and no END card was found", hdu, size-pos, fitsBlock)
			if pos >= size {
				msg = fmt.Sprintf("HDU %d header is truncated: the file ends before the END card", hdu)
			}
			return nil, &InputError{File: path, Byte: pos, Msg: msg}
		}
		if _, err := r.ReadAt(block, pos); err != nil {
			return nil, &InputError{File: path, Byte: pos, Msg: fmt.Sprintf("reading HDU %d header", hdu), Err: err}
		}
		h.nblocks++
		for k := 0; k < fitsBlock/fitsCardLen; k++ {
			num++
			if num > fitsMaxCards {
				return nil, &InputError{File: path, Byte: pos, Msg: fmt.Sprintf("HDU %d header has more than %d cards and no END card", hdu, fitsMaxCards)}
			}
			line := block[k*fitsCardLen : (k+1)*fitsCardLen]
			coff := pos + int64(k*fitsCardLen)
			c, err := fitsParseCard(line)
			if err != nil {
				return nil, &InputError{File: path, Byte: coff,
					Msg: fmt.Sprintf("HDU %d header card %d (%s): %v", hdu, num, fitsShowKey(c.key), err)}
			}
			c.num, c.off = num, coff
			if c.key == "END" && !c.hasValue {
				h.endFound = true
				break
			}
			if c.key == "CONTINUE" && c.hasValue && c.isStr && pending >= 0 {
				// FITS 4.0 §4.2.1.2: the '&' ending the previous piece is dropped.
				p := &h.cards[pending]
				p.str = p.str[:len(p.str)-1] + c.str
				if !strings.HasSuffix(c.str, "&") {
					pending = -1
				}
				continue
			}
			pending = -1
			h.cards = append(h.cards, c)
			i := len(h.cards) - 1
			if c.hasValue {
				if _, dup := h.first[c.key]; !dup {
					h.first[c.key] = i
				}
				if c.isStr && strings.HasSuffix(c.str, "&") {
					pending = i
				}
			}
		}
	}
	h.dataOff = off + int64(h.nblocks)*fitsBlock
	return h, nil
}

// fitsShowKey returns a keyword for messages.
func fitsShowKey(k string) string {
	switch {
	case k == "":
		return "blank keyword"
	case !fitsPrintable(k):
		return strconv.Quote(k)
	}
	return k
}

// get returns the first card with a value for keyword key, or nil.
func (h *fitsHeader) get(key string) *fitsCard {
	if i, ok := h.first[key]; ok {
		return &h.cards[i]
	}
	return nil
}

// cardErr returns an InputError at card c of the header (at the header's
// start when c is nil).
func (h *fitsHeader) cardErr(path string, c *fitsCard, msg string) *InputError {
	if c == nil {
		return &InputError{File: path, Byte: h.off, Msg: fmt.Sprintf("HDU %d header: %s", h.hdu, msg)}
	}
	return &InputError{File: path, Byte: c.off,
		Msg: fmt.Sprintf("HDU %d header card %d (%s): %s", h.hdu, c.num, fitsShowKey(c.key), msg)}
}

// missingErr returns an InputError for a required keyword that is absent.
func (h *fitsHeader) missingErr(path, key, what string) *InputError {
	return &InputError{File: path, Byte: h.off,
		Msg: fmt.Sprintf("HDU %d header has no %s keyword (%s)", h.hdu, key, what)}
}

// int returns the integer value of keyword key. A missing keyword gives
// def when required is false. The value must lie in [lo, hi].
func (h *fitsHeader) int(path, key string, required bool, def, lo, hi int64) (int64, error) {
	c := h.get(key)
	if c == nil {
		if required {
			return 0, h.missingErr(path, key, fmt.Sprintf("an integer from %d to %d is required", lo, hi))
		}
		return def, nil
	}
	if c.isStr {
		return 0, h.cardErr(path, c, fmt.Sprintf("expected an integer, found the string %q", c.str))
	}
	v, err := strconv.ParseInt(c.raw, 10, 64)
	if err != nil {
		// Integral values written as floats ("2.0") are tolerated.
		f, ferr := strconv.ParseFloat(strings.Replace(c.raw, "D", "E", 1), 64)
		if ferr != nil || f != float64(int64(f)) {
			return 0, h.cardErr(path, c, fmt.Sprintf("expected an integer, found %q", c.raw))
		}
		v = int64(f)
	}
	if v < lo || v > hi {
		return 0, h.cardErr(path, c, fmt.Sprintf("expected an integer from %d to %d, found %d", lo, hi, v))
	}
	return v, nil
}

// str returns the string value of keyword key, "" when absent.
func (h *fitsHeader) str(key string) string {
	if c := h.get(key); c != nil {
		return c.valueString()
	}
	return ""
}

// extName returns the EXTNAME value, trimmed.
func (h *fitsHeader) extName() string { return strings.TrimSpace(h.str("EXTNAME")) }

// kind returns "primary", or the XTENSION value ("BINTABLE", "TABLE", "IMAGE", ...).
func (h *fitsHeader) kind() string {
	if h.hdu == 0 {
		return "primary"
	}
	return strings.TrimSpace(h.str("XTENSION"))
}

// describe names the HDU for messages: `1 (BINTABLE "GALAXIES")`.
func (h *fitsHeader) describe() string {
	s := fmt.Sprintf("%d (%s", h.hdu, h.kind())
	if n := h.extName(); n != "" {
		s += fmt.Sprintf(" %q", n)
	}
	return s + ")"
}

// dataSize returns the size in bytes of the HDU's data unit without padding
// (FITS 4.0 eqs. 1 and 2), after checking the structural keywords it uses.
func (h *fitsHeader) dataSize(path string) (int64, error) {
	if len(h.cards) == 0 {
		return 0, &InputError{File: path, Byte: h.off, Msg: fmt.Sprintf("HDU %d header is empty", h.hdu)}
	}
	first := &h.cards[0]
	if h.hdu == 0 {
		if first.key != "SIMPLE" || !first.hasValue {
			return 0, &InputError{File: path, Byte: 0, Msg: "not a FITS file: it does not start with the SIMPLE keyword"}
		}
	} else if first.key != "XTENSION" || !first.hasValue {
		return 0, &InputError{File: path, Byte: h.off,
			Msg: fmt.Sprintf("HDU %d header does not start with the XTENSION keyword", h.hdu)}
	}
	bitpix, err := h.int(path, "BITPIX", true, 0, -64, 64)
	if err != nil {
		return 0, err
	}
	switch bitpix {
	case 8, 16, 32, 64, -32, -64:
	default:
		return 0, h.cardErr(path, h.get("BITPIX"), fmt.Sprintf("expected 8, 16, 32, 64, -32 or -64, found %d", bitpix))
	}
	naxis, err := h.int(path, "NAXIS", true, 0, 0, 999)
	if err != nil {
		return 0, err
	}
	const limit = int64(1) << 60
	prod := int64(1)
	groups := false
	if h.hdu == 0 {
		if c := h.get("GROUPS"); c != nil && c.raw == "T" {
			groups = true
		}
	}
	for i := int64(1); i <= naxis; i++ {
		n, err := h.int(path, "NAXIS"+strconv.FormatInt(i, 10), true, 0, 0, limit)
		if err != nil {
			return 0, err
		}
		if i == 1 && groups && n == 0 {
			continue // random groups (FITS 4.0 §6): NAXIS1 = 0 is not a dimension
		}
		if n != 0 && prod > limit/n {
			return 0, &InputError{File: path, Byte: h.off, Msg: fmt.Sprintf("HDU %d data size overflows: NAXISn product exceeds %d", h.hdu, limit)}
		}
		prod *= n
	}
	if naxis == 0 {
		prod = 0
	}
	ext := h.hdu > 0
	pcount, err := h.int(path, "PCOUNT", false, 0, 0, limit)
	if err != nil {
		return 0, err
	}
	gcount, err := h.int(path, "GCOUNT", false, 1, 0, limit)
	if err != nil {
		return 0, err
	}
	if !ext && !groups {
		pcount, gcount = 0, 1
	}
	elems := prod + pcount
	if elems > limit || (gcount != 0 && elems > limit/gcount) {
		return 0, &InputError{File: path, Byte: h.off, Msg: fmt.Sprintf("HDU %d data size overflows", h.hdu)}
	}
	abs := bitpix
	if abs < 0 {
		abs = -abs
	}
	size := abs / 8 * gcount * elems
	if size < 0 || size > limit {
		return 0, &InputError{File: path, Byte: h.off, Msg: fmt.Sprintf("HDU %d data size overflows", h.hdu)}
	}
	return size, nil
}

// fitsPadded rounds n up to a whole number of FITS blocks.
func fitsPadded(n int64) int64 {
	return (n + fitsBlock - 1) / fitsBlock * fitsBlock
}

// Table metadata in FITS headers.
//
// Table.Meta is written into the BINTABLE header after the column keywords,
// in order, one entry at a time, using only FITS 4.0 constructs:
//
//   - An entry whose key is a valid FITS keyword (1-8 of A-Z, 0-9, '-', '_')
//     that has no structural meaning (see fitsReservedKey) and whose value is
//     printable ASCII without trailing blanks is written as that keyword:
//     quoted as a string, unless the value is a FITS logical (T, F), integer
//     or floating-point literal, which is written unquoted so that keywords
//     read from other files keep their type. HISTORY and COMMENT entries
//     whose lines are printable ASCII of at most 72 characters are written as
//     one HISTORY or COMMENT card per line.
//   - Any other entry becomes a pair of string keywords MKEYn (the key) and
//     MVALn (the value), n = 1, 2, ... in order. In both strings, every byte
//     outside printable ASCII (0x20-0x7E), every '%', a final blank and a
//     quote that follows a quote are written as %XX (two upper-case
//     hexadecimal digits), as in RFC 3986 percent-encoding, so any byte
//     string survives. (astropy 5.2.1 turns two consecutive quotes of a
//     continued string into one; a plain keyword whose value would meet
//     that is written as a pair too.)
//
// Strings longer than one card use the long-string convention of FITS 4.0
// §4.2.1.2: each piece but the last ends in '&' and is followed by a
// CONTINUE card. A value that itself ends in '&' gets one more CONTINUE card
// with an empty string, so the '&' is never mistaken for a continuation.
//
// Reading reverses this: MKEYn/MVALn pairs are decoded back into one entry
// at the position of MKEYn; other non-structural keywords become entries
// keyed by the keyword with the value's text (strings unquoted, other values
// as written); COMMENT and HISTORY cards become one entry each, their lines
// joined by "\n". Keywords whose values the writer could not have produced
// verbatim (a non-FITS-literal in an unquoted value) are still read as text.

// fitsStructural lists keywords that describe the HDU's layout and are never
// table metadata.
var fitsStructural = map[string]bool{
	"SIMPLE": true, "XTENSION": true, "BITPIX": true, "NAXIS": true, "EXTEND": true,
	"PCOUNT": true, "GCOUNT": true, "TFIELDS": true, "THEAP": true, "EXTNAME": true,
	"END": true, "CONTINUE": true, "CHECKSUM": true, "DATASUM": true, "GROUPS": true,
	"ZIMAGE": true, "ZTABLE": true, "HIERARCH": true, "LONGSTRN": true,
	fitsEscapeKey: true,
}

// fitsEscapeKey marks a header whose TTYPEn, TUNITn and TCOMMn values hold
// fitsEscape escapes (written by writeFITS only when some text needed it).
const fitsEscapeKey = "TXTESC"

// fitsColumnPrefixes are the prefixes of the per-column keywords of a
// binary table (FITS 4.0 §7.3.2 and Table 26; TCOMM and TUCD are registered
// conventions), each followed by the column number.
var fitsColumnPrefixes = []string{
	"TTYPE", "TFORM", "TUNIT", "TSCAL", "TZERO", "TNULL", "TDISP", "TDIM",
	"TBCOL", "TCOMM", "TUCD", "TLMIN", "TLMAX", "TDMIN", "TDMAX",
}

// fitsImageKeys are image keywords that have no place in a table header
// (fitsverify flags them); a Meta entry with such a key is written as a pair.
var fitsImageKeys = map[string]bool{
	"BSCALE": true, "BZERO": true, "BUNIT": true, "BLANK": true, "DATAMAX": true, "DATAMIN": true,
}

// fitsIndexed reports whether key is prefix followed by a positive decimal number.
func fitsIndexed(key, prefix string) (int, bool) {
	if !strings.HasPrefix(key, prefix) || len(key) == len(prefix) {
		return 0, false
	}
	digits := key[len(prefix):]
	if digits[0] == '0' {
		return 0, false
	}
	n := 0
	for i := 0; i < len(digits); i++ {
		d := digits[i]
		if d < '0' || d > '9' {
			return 0, false
		}
		n = n*10 + int(d-'0')
	}
	return n, true
}

// fitsStructuralKey reports whether a header keyword is layout rather than metadata.
func fitsStructuralKey(key string) bool {
	if fitsStructural[key] {
		return true
	}
	if _, ok := fitsIndexed(key, "NAXIS"); ok {
		return true
	}
	for _, p := range fitsColumnPrefixes {
		if _, ok := fitsIndexed(key, p); ok {
			return true
		}
	}
	return false
}

// fitsReservedKey reports whether a Meta key must not be written as a plain
// keyword: it is structural, an image keyword, commentary, or part of the
// MKEYn/MVALn encoding.
func fitsReservedKey(key string) bool {
	if fitsStructuralKey(key) || fitsImageKeys[key] || key == "COMMENT" || key == "HISTORY" {
		return true
	}
	if _, ok := fitsIndexed(key, "MKEY"); ok {
		return true
	}
	_, ok := fitsIndexed(key, "MVAL")
	return ok
}

// fitsKeywordOK reports whether key is a valid standard keyword name (FITS 4.0 §4.1.2.1).
func fitsKeywordOK(key string) bool {
	if key == "" || len(key) > 8 {
		return false
	}
	for i := 0; i < len(key); i++ {
		c := key[i]
		if !(c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_') {
			return false
		}
	}
	return true
}

// fitsPrintable reports whether s is printable ASCII (FITS 4.0 §4.1.2.3).
func fitsPrintable(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] > 0x7e {
			return false
		}
	}
	return true
}

// fitsIsLiteral reports whether s is a FITS logical, integer or real literal
// (FITS 4.0 §4.2.2-4.2.4) that reads back as exactly the same text.
func fitsIsLiteral(s string) bool {
	if s == "T" || s == "F" {
		return true
	}
	if s == "" || len(s) > 70 {
		return false
	}
	i := 0
	if s[0] == '+' || s[0] == '-' {
		i++
	}
	digits := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
		digits++
	}
	if i < len(s) && s[i] == '.' {
		i++
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
			digits++
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'E' || s[i] == 'D') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		exp := 0
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
			exp++
		}
		if exp == 0 {
			return false
		}
	}
	return i == len(s)
}

// fitsEscape percent-encodes the bytes of s that a header string cannot hold
// or that would be lost: non-printable or non-ASCII bytes, '%', a final
// blank, and a quote following a quote (see the metadata encoding above).
func fitsEscape(s string) string {
	const hex = "0123456789ABCDEF"
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c < 0x20 || c > 0x7e || c == '%' || (c == ' ' && i == len(s)-1) || (c == '\'' && i > 0 && s[i-1] == '\'') {
			b.WriteByte('%')
			b.WriteByte(hex[c>>4])
			b.WriteByte(hex[c&15])
			continue
		}
		b.WriteByte(c)
	}
	return b.String()
}

// fitsUnescape reverses fitsEscape; malformed escapes are kept as written.
func fitsUnescape(s string) string {
	if !strings.Contains(s, "%") {
		return s
	}
	unhex := func(c byte) int {
		switch {
		case c >= '0' && c <= '9':
			return int(c - '0')
		case c >= 'A' && c <= 'F':
			return int(c-'A') + 10
		case c >= 'a' && c <= 'f':
			return int(c-'a') + 10
		}
		return -1
	}
	b := make([]byte, 0, len(s))
	for i := 0; i < len(s); i++ {
		if s[i] == '%' && i+2 < len(s) {
			hi, lo := unhex(s[i+1]), unhex(s[i+2])
			if hi >= 0 && lo >= 0 {
				b = append(b, byte(hi<<4|lo))
				i += 2
				continue
			}
		}
		b = append(b, s[i])
	}
	return string(b)
}

// meta returns the header's table metadata, decoded as described under
// "Table metadata in FITS headers" above.
func (h *fitsHeader) meta() Meta {
	keys := map[int]string{}
	vals := map[int]string{}
	for i := range h.cards {
		c := &h.cards[i]
		if !c.hasValue || !c.isStr || c.hierarch {
			continue
		}
		if n, ok := fitsIndexed(c.key, "MKEY"); ok {
			if _, dup := keys[n]; !dup {
				keys[n] = c.str
			}
		} else if n, ok := fitsIndexed(c.key, "MVAL"); ok {
			if _, dup := vals[n]; !dup {
				vals[n] = c.str
			}
		}
	}
	var m Meta
	at := map[string]int{} // key -> index in m; a repeated keyword keeps its first place and last value
	add := func(k, v string) {
		if j, ok := at[k]; ok {
			m[j].Value = v
			return
		}
		at[k] = len(m)
		m = append(m, KeyValue{k, v})
	}
	var lines map[string][]string // COMMENT/HISTORY lines, joined at the end
	for i := range h.cards {
		c := &h.cards[i]
		if !c.hasValue {
			if c.key == "COMMENT" || c.key == "HISTORY" {
				if lines == nil {
					lines = map[string][]string{}
				}
				if _, ok := lines[c.key]; !ok {
					add(c.key, "")
				}
				lines[c.key] = append(lines[c.key], c.text)
			}
			continue
		}
		if !c.hierarch {
			if fitsStructuralKey(c.key) {
				continue
			}
			if n, ok := fitsIndexed(c.key, "MKEY"); ok && c.isStr {
				if v, ok := vals[n]; ok {
					add(fitsUnescape(c.str), fitsUnescape(v))
					continue
				}
			}
			if n, ok := fitsIndexed(c.key, "MVAL"); ok && c.isStr {
				if _, ok := keys[n]; ok {
					continue
				}
			}
		}
		add(c.key, c.valueString())
	}
	for k, l := range lines {
		m[at[k]].Value = strings.Join(l, "\n")
	}
	return m
}
