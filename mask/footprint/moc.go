package footprint

import (
	"encoding/binary"
	"fmt"
	"math"
	"math/bits"
	"sort"
	"strings"

	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/survey"
)

// MOC is a footprint given by an IVOA Multi-Order Coverage map (MOC
// Recommendation 2.0, 2022): completeness 1 inside its cells, 0 outside.
// The cells are held as sorted, disjoint ranges of NESTED pixels at the
// MOC's order. A MOC is safe for concurrent use.
type MOC struct {
	name   string
	order  int
	ranges []healpix.Range
	area   float64 // deg²
}

// NewMOC returns the MOC at order (0 to 29) covering the NESTED pixel
// ranges r at that order, which may be unsorted and may overlap; name is
// used by Describe.
func NewMOC(name string, order int, r []healpix.Range) (*MOC, error) {
	if order < 0 || order > healpix.MaxOrder {
		return nil, fmt.Errorf("footprint: NewMOC: order %d outside 0-%d", order, healpix.MaxOrder)
	}
	npix := healpix.NPix(1 << order)
	for _, x := range r {
		if x.Start < 0 || x.End > npix || x.Start > x.End {
			return nil, fmt.Errorf("footprint: NewMOC: range [%d, %d) is not within the %d pixels of order %d", x.Start, x.End, npix, order)
		}
	}
	m := &MOC{name: name, order: order, ranges: normalise(append([]healpix.Range(nil), r...))}
	m.measure()
	return m, nil
}

// normalise sorts ranges and merges overlapping or touching ones, dropping
// empty ones.
func normalise(r []healpix.Range) []healpix.Range {
	sort.Slice(r, func(i, j int) bool { return r[i].Start < r[j].Start })
	out := r[:0]
	for _, x := range r {
		if x.End <= x.Start {
			continue
		}
		if n := len(out); n > 0 && x.Start <= out[n-1].End {
			out[n-1].End = max(out[n-1].End, x.End)
			continue
		}
		out = append(out, x)
	}
	return out
}

func (m *MOC) measure() {
	var n int64
	for _, x := range m.ranges {
		n += x.End - x.Start
	}
	m.area = float64(n) * healpix.PixelArea(1<<m.order) * deg2PerSr
}

// Order returns the MOC's order (its finest cells have Nside 2^order).
func (m *MOC) Order() int { return m.order }

// Ranges returns a copy of the sorted, disjoint NESTED pixel ranges at
// Order.
func (m *MOC) Ranges() []healpix.Range { return append([]healpix.Range(nil), m.ranges...) }

// Completeness returns 1 if (ra, dec) in degrees lies in a cell of the MOC,
// else 0 (also for invalid directions).
func (m *MOC) Completeness(ra, dec float64) float64 {
	p := healpix.RADec2PixNest(1<<m.order, ra, dec)
	if p < 0 {
		return 0
	}
	i := sort.Search(len(m.ranges), func(i int) bool { return m.ranges[i].End > p })
	if i < len(m.ranges) && m.ranges[i].Start <= p {
		return 1
	}
	return 0
}

// Area returns the total area of the cells in deg².
func (m *MOC) Area() float64 { return m.area }

// EffectiveArea equals Area: the completeness is 1 inside.
func (m *MOC) EffectiveArea() float64 { return m.area }

// Resolution returns the square root of the area of a cell at the MOC's
// order, in degrees.
func (m *MOC) Resolution() float64 {
	return math.Sqrt(healpix.PixelArea(1<<m.order) * deg2PerSr)
}

// Describe names the MOC, its order and area.
func (m *MOC) Describe() string {
	return fmt.Sprintf("MOC %s (order %d, %d ranges): area %.4g deg²", m.name, m.order, len(m.ranges), m.area)
}

// ReadMOC reads a spatial MOC from the first binary table of the FITS file
// at path in the MOC 2.0 FITS serialisation: ORDERING = 'NUNIQ', the order
// in MOCORDER (or MOC_ORDER or MOCORD_S), COORDSYS = 'C' when present, and
// one integer column (J or K) named UNIQ or NUNIQ holding uniq = 4·4^order
// + ipix for NESTED cells ipix. Errors are *survey.InputError values naming
// the file and the keyword, or the row of a value that does not decode.
func ReadMOC(path string) (*MOC, error) {
	t, err := survey.OpenFITSTable(path)
	if err != nil {
		return nil, err
	}
	defer t.Close()
	return readMOC(t)
}

// mocOrderKeyword returns the value and name of the keyword giving the MOC
// order, trying MOCORDER, MOC_ORDER and MOCORD_S.
func mocOrderKeyword(t *survey.FITSTable) (string, string) {
	for _, k := range []string{"MOCORDER", "MOC_ORDER", "MOCORD_S"} {
		if v, ok := t.Keyword(k); ok {
			return v, k
		}
	}
	return "", ""
}

func readMOC(t *survey.FITSTable) (*MOC, error) {
	ord, ok := t.Keyword("ORDERING")
	if !ok {
		return nil, t.KeywordError("ORDERING", "missing ORDERING keyword: a MOC needs ORDERING = 'NUNIQ'")
	}
	if !strings.EqualFold(strings.TrimSpace(ord), "NUNIQ") {
		return nil, t.KeywordError("ORDERING", fmt.Sprintf("ORDERING = %q: a MOC needs 'NUNIQ'", ord))
	}
	if cs, ok := t.Keyword("COORDSYS"); ok && !strings.EqualFold(strings.TrimSpace(cs), "C") {
		return nil, t.KeywordError("COORDSYS", fmt.Sprintf("COORDSYS = %q: only equatorial (ICRS) MOCs, COORDSYS = 'C', are read", cs))
	}
	_, key := mocOrderKeyword(t)
	if key == "" {
		return nil, t.KeywordError("MOCORDER", "missing MOC order: none of MOCORDER, MOC_ORDER, MOCORD_S is present")
	}
	order64, err := t.Int(key, true, 0, math.MinInt64, math.MaxInt64)
	if err != nil {
		return nil, err
	}
	if order64 < 0 || order64 > healpix.MaxOrder {
		return nil, t.KeywordError(key, fmt.Sprintf("MOC order %d is outside 0-%d", order64, healpix.MaxOrder))
	}
	order := int(order64)
	f, ok := t.Field("UNIQ")
	if !ok {
		f, ok = t.Field("NUNIQ")
	}
	if !ok {
		names := make([]string, len(t.Fields))
		for i, x := range t.Fields {
			names[i] = x.Name
		}
		return nil, t.KeywordError("TTYPE1", fmt.Sprintf("a MOC needs a column UNIQ (or NUNIQ); the table has %q", names))
	}
	if f.Repeat != 1 || (f.Code != 'J' && f.Code != 'K') {
		return nil, t.KeywordError(fmt.Sprintf("TFORM%d", f.Num),
			fmt.Sprintf("the MOC column %q must hold one 32- or 64-bit integer (TFORM 1J or 1K) per row, found %d × %q", f.Name, f.Repeat, f.Code))
	}
	m := &MOC{name: t.Path, order: order}
	batch := max(1, min(t.Rows, readBatchBytes/max(t.RowBytes, 1)))
	buf := make([]byte, batch*t.RowBytes)
	for r0 := int64(0); r0 < t.Rows; r0 += batch {
		n := min(batch, t.Rows-r0)
		b := buf[:n*t.RowBytes]
		if err := t.ReadRows(b, r0); err != nil {
			return nil, err
		}
		for r := range n {
			row := b[r*t.RowBytes+f.Offset:]
			var u int64
			if f.Code == 'J' {
				u = int64(int32(binary.BigEndian.Uint32(row)))
			} else {
				u = int64(binary.BigEndian.Uint64(row))
			}
			o, ipix, ok := decodeUniq(u)
			if !ok {
				return nil, &survey.InputError{File: t.Path, Row: r0 + r + 1, Column: f.Name, Byte: -1,
					Msg: fmt.Sprintf("uniq value %d does not decode: expected 4·4^order + ipix with ipix < 12·4^order", u)}
			}
			if o > order {
				return nil, &survey.InputError{File: t.Path, Row: r0 + r + 1, Column: f.Name, Byte: -1,
					Msg: fmt.Sprintf("uniq value %d is a cell of order %d, finer than the MOC order %d (%s)", u, o, order, key)}
			}
			s := uint(2 * (order - o))
			m.ranges = append(m.ranges, healpix.Range{Start: ipix << s, End: (ipix + 1) << s})
		}
	}
	m.ranges = normalise(m.ranges)
	m.measure()
	return m, nil
}

// decodeUniq splits uniq = 4·4^order + ipix (MOC 2.0 §4.3.1) into order
// (at most 29) and ipix.
func decodeUniq(u int64) (order int, ipix int64, ok bool) {
	if u < 4 {
		return 0, 0, false
	}
	order = (bits.Len64(uint64(u)) - 3) / 2
	if order > healpix.MaxOrder {
		return 0, 0, false
	}
	return order, u - 4<<(2*order), true
}
