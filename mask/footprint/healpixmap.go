package footprint

import (
	"encoding/binary"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"sync"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/survey"
)

// Unseen is the HEALPix value marking a pixel without data, -1.6375e30
// (HEALPix FITS conventions, from memory: healpy.UNSEEN). Pixels holding it,
// or NaN, have completeness 0.
const Unseen = -1.6375e30

// deg2PerSr converts steradians to square degrees.
const deg2PerSr = (180 / math.Pi) * (180 / math.Pi)

// Map is a footprint given by a HEALPix map of completeness: the
// completeness at a direction is the value of the pixel containing it. A
// full-sky map holds one float32 per pixel, indexed by NESTED pixel
// number; a partial map holds the sorted NESTED numbers of its listed
// pixels and their values. A Map is safe for concurrent use.
type Map struct {
	name  string
	nside int
	order int
	full  []float32 // len 12·nside² or nil
	pix   []int64   // sorted NESTED pixels of a partial map
	val   []float32 // values of pix
	area  float64   // deg²
	eff   float64   // deg²
}

// NewMap returns the full-sky map at nside whose NESTED pixel p has
// completeness values[p]. NaN and Unseen give 0; other values must lie in
// [0, 1]. name is used by Describe. The values are copied.
func NewMap(name string, nside int, values []float32) (*Map, error) {
	if err := healpix.CheckNside(nside); err != nil {
		return nil, err
	}
	if int64(len(values)) != healpix.NPix(nside) {
		return nil, fmt.Errorf("footprint: NewMap: %d values for the %d pixels at Nside %d", len(values), healpix.NPix(nside), nside)
	}
	m := &Map{name: name, nside: nside, order: healpix.Order(nside), full: make([]float32, len(values))}
	for p, v := range values {
		c, ok := cleanValue(float64(v))
		if !ok {
			return nil, fmt.Errorf("footprint: NewMap: completeness %g of pixel %d is outside [0, 1]", v, p)
		}
		m.full[p] = float32(c)
	}
	m.measure()
	return m, nil
}

// cleanValue maps NaN and Unseen to 0 and reports whether v is a valid
// completeness.
func cleanValue(v float64) (float64, bool) {
	if math.IsNaN(v) || math.Abs(v-Unseen) <= 1e-6*math.Abs(Unseen) {
		return 0, true
	}
	return v, v >= 0 && v <= 1
}

// measure computes the areas.
func (m *Map) measure() {
	var n int64
	var s float64
	vals := m.full
	if vals == nil {
		vals = m.val
	}
	for _, v := range vals {
		if v > 0 {
			n++
			s += float64(v)
		}
	}
	pa := healpix.PixelArea(m.nside) * deg2PerSr
	m.area = float64(n) * pa
	m.eff = s * pa
}

// Nside returns the map's Nside.
func (m *Map) Nside() int { return m.nside }

// Completeness returns the value of the pixel containing (ra, dec), in
// degrees; 0 for invalid directions.
func (m *Map) Completeness(ra, dec float64) float64 {
	return m.at(healpix.RADec2PixNest(m.nside, ra, dec))
}

// at returns the completeness of NESTED pixel p (0 for p = -1).
func (m *Map) at(p int64) float64 {
	if p < 0 {
		return 0
	}
	if m.full != nil {
		return float64(m.full[p])
	}
	i, ok := slices.BinarySearch(m.pix, p)
	if !ok {
		return 0
	}
	return float64(m.val[i])
}

// gatherBlock is the number of pixel indices computed before their values
// are loaded: a separate loop of independent loads lets the processor keep
// many cache misses in flight, which matters for maps larger than the cache
// (50 MB at Nside 1024).
const gatherBlock = 512

func (m *Map) completenessRange(dst, ra, dec []float64) {
	var pix [gatherBlock]int64
	for lo := 0; lo < len(dst); lo += gatherBlock {
		n := min(gatherBlock, len(dst)-lo)
		for i := range n {
			pix[i] = healpix.RADec2PixNest(m.nside, ra[lo+i], dec[lo+i])
		}
		if m.full == nil {
			for i := range n {
				dst[lo+i] = m.at(pix[i])
			}
			continue
		}
		full := m.full
		for i, p := range pix[:n] {
			v := float32(0)
			if p >= 0 {
				v = full[p]
			}
			dst[lo+i] = float64(v)
		}
	}
}

// Area returns the number of pixels with completeness above 0 times the
// pixel area, in deg².
func (m *Map) Area() float64 { return m.area }

// EffectiveArea returns the sum of the pixel values times the pixel area,
// in deg².
func (m *Map) EffectiveArea() float64 { return m.eff }

// Resolution returns the square root of the pixel area, in degrees.
func (m *Map) Resolution() float64 { return math.Sqrt(healpix.PixelArea(m.nside) * deg2PerSr) }

// Describe names the map, its Nside and its areas.
func (m *Map) Describe() string {
	kind := "full-sky"
	if m.full == nil {
		kind = fmt.Sprintf("partial, %d pixels", len(m.pix))
	}
	return fmt.Sprintf("HEALPix map %s (Nside %d, %s): area %.4g deg², effective %.4g deg²", m.name, m.nside, kind, m.area, m.eff)
}

// ReadMap reads a HEALPix map of completeness from the first binary table
// of the FITS file at path, following the HEALPix FITS conventions:
// PIXTYPE = 'HEALPIX', ORDERING = 'RING' or 'NESTED', NSIDE a power of two,
// and either INDXSCHM = 'IMPLICIT', the pixels FIRSTPIX…LASTPIX (default
// the whole sphere) stored in order in the first column, which may hold
// vector rows (TFORM1 = '1024E') or scalar rows, or INDXSCHM = 'EXPLICIT',
// a PIXEL column of integers and the values in the next column. Values are
// E, D, B, I, J or K, with TSCALn/TZEROn applied and TNULLn meaning 0; NaN
// and Unseen mean 0 and any other value must lie in [0, 1]. Errors are
// *survey.InputError values naming the file and the keyword, or the row
// and pixel of a bad value.
func ReadMap(path string) (*Map, error) {
	t, err := survey.OpenFITSTable(path)
	if err != nil {
		return nil, err
	}
	defer t.Close()
	return readMap(t)
}

// valueField decodes the elements of one field.
type valueField struct {
	survey.FITSField
	size        int
	scale, zero float64
	hasNull     bool
	null        int64
}

func newValueField(t *survey.FITSTable, f survey.FITSField, what string) (*valueField, error) {
	v := &valueField{FITSField: f, scale: 1}
	switch f.Code {
	case 'B':
		v.size = 1
	case 'I':
		v.size = 2
	case 'J', 'E':
		v.size = 4
	case 'K', 'D':
		v.size = 8
	default:
		return nil, t.KeywordError(fmt.Sprintf("TFORM%d", f.Num),
			fmt.Sprintf("the %s column %q has type %q; expected one of E D B I J K", what, f.Name, f.Code))
	}
	var err error
	if v.scale, err = t.Float(fmt.Sprintf("TSCAL%d", f.Num), 1); err != nil {
		return nil, err
	}
	if v.zero, err = t.Float(fmt.Sprintf("TZERO%d", f.Num), 0); err != nil {
		return nil, err
	}
	if f.Code != 'E' && f.Code != 'D' {
		if _, ok := t.Keyword(fmt.Sprintf("TNULL%d", f.Num)); ok {
			v.hasNull = true
			if v.null, err = t.Int(fmt.Sprintf("TNULL%d", f.Num), true, 0, math.MinInt64, math.MaxInt64); err != nil {
				return nil, err
			}
		}
	}
	return v, nil
}

// get returns element k of the field in row (raw row bytes) and whether it
// is a null integer.
func (v *valueField) get(row []byte, k int) (float64, bool) {
	b := row[int(v.Offset)+k*v.size:]
	var x float64
	switch v.Code {
	case 'E':
		x = float64(math.Float32frombits(binary.BigEndian.Uint32(b)))
	case 'D':
		x = math.Float64frombits(binary.BigEndian.Uint64(b))
	default:
		var i int64
		switch v.Code {
		case 'B':
			i = int64(b[0])
		case 'I':
			i = int64(int16(binary.BigEndian.Uint16(b)))
		case 'J':
			i = int64(int32(binary.BigEndian.Uint32(b)))
		case 'K':
			i = int64(binary.BigEndian.Uint64(b))
		}
		if v.hasNull && i == v.null {
			return 0, true
		}
		x = float64(i)
	}
	return v.zero + v.scale*x, false
}

// integer returns element 0 of an integer field as an int64, with an
// integral TZEROn applied.
func (v *valueField) integer(row []byte) (int64, bool) {
	x, null := v.get(row, 0)
	if null || x != math.Trunc(x) || math.Abs(x) > 1<<62 {
		return 0, false
	}
	return int64(x), true
}

// readBatchBytes is the size of the row batches read from a map.
const readBatchBytes = 1 << 22

func readMap(t *survey.FITSTable) (*Map, error) {
	path := t.Path
	pt, ok := t.Keyword("PIXTYPE")
	if !ok {
		return nil, t.KeywordError("PIXTYPE", "not a HEALPix table: there is no PIXTYPE = 'HEALPIX' keyword")
	}
	if !strings.EqualFold(strings.TrimSpace(pt), "HEALPIX") {
		return nil, t.KeywordError("PIXTYPE", fmt.Sprintf("not a HEALPix table: PIXTYPE = %q, expected 'HEALPIX'", pt))
	}
	ord, ok := t.Keyword("ORDERING")
	if !ok {
		return nil, t.KeywordError("ORDERING", "missing ORDERING keyword: expected 'RING' or 'NESTED'")
	}
	var nested bool
	switch strings.ToUpper(strings.TrimSpace(ord)) {
	case "RING":
	case "NESTED", "NEST":
		nested = true
	case "NUNIQ":
		return nil, t.KeywordError("ORDERING", "ORDERING = 'NUNIQ' is a MOC, not a HEALPix map; read it with ReadMOC")
	default:
		return nil, t.KeywordError("ORDERING", fmt.Sprintf("unknown ORDERING %q: expected 'RING' or 'NESTED'", ord))
	}
	ns, err := t.Int("NSIDE", true, 0, 1, healpix.MaxNside)
	if err != nil {
		return nil, err
	}
	nside := int(ns)
	if healpix.CheckNside(nside) != nil {
		return nil, t.KeywordError("NSIDE", fmt.Sprintf("bad NSIDE %d: expected a power of two from 1 to 2^29", nside))
	}
	npix := healpix.NPix(nside)
	m := &Map{name: path, nside: nside, order: healpix.Order(nside)}
	toNest := func(p int64) int64 {
		if nested {
			return p
		}
		return healpix.Ring2Nest(nside, p)
	}
	scheme, _ := t.Keyword("INDXSCHM")
	scheme = strings.ToUpper(strings.TrimSpace(scheme))
	_, hasPixel := t.Field("PIXEL")
	if scheme == "" && hasPixel && len(t.Fields) >= 2 {
		scheme = "EXPLICIT"
	}
	if len(t.Fields) == 0 {
		return nil, t.KeywordError("TFIELDS", "the HEALPix table has no columns")
	}
	switch scheme {
	case "", "IMPLICIT":
		return m, m.readImplicit(t, npix, toNest)
	case "EXPLICIT":
		return m, m.readExplicit(t, npix, toNest)
	}
	return nil, t.KeywordError("INDXSCHM", fmt.Sprintf("unknown INDXSCHM %q: expected 'IMPLICIT' or 'EXPLICIT'", scheme))
}

// valueErr reports a bad value at a row and pixel.
func valueErr(t *survey.FITSTable, row int64, col string, pix int64, ordering string, v float64) error {
	return &survey.InputError{File: t.Path, Row: row + 1, Column: col, Byte: -1,
		Msg: fmt.Sprintf("completeness %g at pixel %d (%s) is outside [0, 1]", v, pix, ordering)}
}

// orderingName returns the ORDERING value for messages.
func orderingName(t *survey.FITSTable) string {
	s, _ := t.Keyword("ORDERING")
	return strings.TrimSpace(s)
}

func (m *Map) readImplicit(t *survey.FITSTable, npix int64, toNest func(int64) int64) error {
	vf, err := newValueField(t, t.Fields[0], "value")
	if err != nil {
		return err
	}
	first, err := t.Int("FIRSTPIX", false, 0, 0, npix-1)
	if err != nil {
		return err
	}
	last, err := t.Int("LASTPIX", false, npix-1, first, npix-1)
	if err != nil {
		return err
	}
	obj, _ := t.Keyword("OBJECT")
	if strings.EqualFold(strings.TrimSpace(obj), "FULLSKY") && (first != 0 || last != npix-1) {
		return t.KeywordError("LASTPIX", fmt.Sprintf("OBJECT = 'FULLSKY' needs FIRSTPIX = 0 and LASTPIX = %d, found %d and %d", npix-1, first, last))
	}
	want := last - first + 1
	per := vf.Repeat
	if per < 1 || t.Rows > math.MaxInt64/per || t.Rows*per != want {
		return t.KeywordError("NAXIS2", fmt.Sprintf(
			"wrong row count: pixels %d-%d at NSIDE %d need %d values, but the table has %d rows of %d (column %q, TFORM%d)",
			first, last, m.nside, want, t.Rows, per, vf.Name, vf.Num))
	}
	// A cut-sky implicit map (FIRSTPIX..LASTPIX not the whole sphere) is
	// kept as a pixel list, so that its memory follows the data present.
	fullSky := first == 0 && last == npix-1
	var list []entry
	if fullSky {
		m.full = make([]float32, npix)
	}
	batch := max(1, min(t.Rows, readBatchBytes/max(t.RowBytes, 1)))
	buf := make([]byte, batch*t.RowBytes)
	ordName := orderingName(t)
	for r0 := int64(0); r0 < t.Rows; r0 += batch {
		n := min(batch, t.Rows-r0)
		b := buf[:n*t.RowBytes]
		if err := t.ReadRows(b, r0); err != nil {
			return err
		}
		if fullSky {
			// Full-sky maps are large: the elements of the batch are
			// decoded and reordered in parallel. Each writes its own
			// pixel, and the reported bad value is the first in file
			// order whatever the scheduling.
			var mu sync.Mutex
			bad := int64(-1)
			parallel.For(int(n*per), manyChunk, func(lo, hi int) {
				for e := int64(lo); e < int64(hi); e++ {
					r, k := e/per, e%per
					x, _ := vf.get(b[r*t.RowBytes:(r+1)*t.RowBytes], int(k))
					c, ok := cleanValue(x)
					if !ok {
						mu.Lock()
						if bad < 0 || e < bad {
							bad = e
						}
						mu.Unlock()
						return
					}
					m.full[toNest(first+r0*per+e)] = float32(c)
				}
			})
			if bad >= 0 {
				r, k := bad/per, bad%per
				x, _ := vf.get(b[r*t.RowBytes:(r+1)*t.RowBytes], int(k))
				return valueErr(t, r0+r, vf.Name, first+r0*per+bad, ordName, x)
			}
			continue
		}
		for r := range n {
			row := b[r*t.RowBytes : (r+1)*t.RowBytes]
			for k := range per {
				p := first + (r0+r)*per + k
				x, _ := vf.get(row, int(k))
				c, ok := cleanValue(x)
				if !ok {
					return valueErr(t, r0+r, vf.Name, p, ordName, x)
				}
				if c > 0 {
					list = append(list, entry{toNest(p), float32(c)})
				}
			}
		}
	}
	if !fullSky {
		if err := m.setList(t, vf.Name, list); err != nil {
			return err
		}
	}
	m.measure()
	return nil
}

// entry is a NESTED pixel and its value.
type entry struct {
	p int64
	v float32
}

// setList sorts the pixels of a partial map and stores them, rejecting
// pixels listed twice.
func (m *Map) setList(t *survey.FITSTable, col string, list []entry) error {
	sort.Slice(list, func(i, j int) bool { return list[i].p < list[j].p })
	m.pix = make([]int64, len(list))
	m.val = make([]float32, len(list))
	for i, e := range list {
		if i > 0 && e.p == list[i-1].p {
			return &survey.InputError{File: t.Path, Column: col, Byte: -1,
				Msg: fmt.Sprintf("NESTED pixel %d is listed twice", e.p)}
		}
		m.pix[i], m.val[i] = e.p, e.v
	}
	return nil
}

func (m *Map) readExplicit(t *survey.FITSTable, npix int64, toNest func(int64) int64) error {
	pf, ok := t.Field("PIXEL")
	if !ok {
		pf = t.Fields[0]
	}
	if pf.Repeat != 1 || !strings.ContainsRune("BIJK", rune(pf.Code)) {
		return t.KeywordError(fmt.Sprintf("TFORM%d", pf.Num),
			fmt.Sprintf("the pixel column %q of an explicit map must hold one integer (B, I, J or K) per row", pf.Name))
	}
	var vfield survey.FITSField
	found := false
	for _, f := range t.Fields {
		if f.Num != pf.Num {
			vfield, found = f, true
			break
		}
	}
	if !found {
		return t.KeywordError("TFIELDS", "an explicit HEALPix map needs a value column besides PIXEL")
	}
	if vfield.Repeat != 1 {
		return t.KeywordError(fmt.Sprintf("TFORM%d", vfield.Num),
			fmt.Sprintf("the value column %q of an explicit map must hold one value per row", vfield.Name))
	}
	pix, err := newValueField(t, pf, "pixel")
	if err != nil {
		return err
	}
	vf, err := newValueField(t, vfield, "value")
	if err != nil {
		return err
	}
	var list []entry
	batch := max(1, min(t.Rows, readBatchBytes/max(t.RowBytes, 1)))
	buf := make([]byte, batch*t.RowBytes)
	ordName := orderingName(t)
	for r0 := int64(0); r0 < t.Rows; r0 += batch {
		n := min(batch, t.Rows-r0)
		b := buf[:n*t.RowBytes]
		if err := t.ReadRows(b, r0); err != nil {
			return err
		}
		for r := range n {
			row := b[r*t.RowBytes : (r+1)*t.RowBytes]
			p, ok := pix.integer(row)
			if !ok || p < 0 || p >= npix {
				x, _ := pix.get(row, 0)
				return &survey.InputError{File: t.Path, Row: r0 + r + 1, Column: pf.Name, Byte: -1,
					Msg: fmt.Sprintf("pixel %g is not a pixel number from 0 to %d (NSIDE %d)", x, npix-1, m.nside)}
			}
			x, _ := vf.get(row, 0)
			c, ok := cleanValue(x)
			if !ok {
				return valueErr(t, r0+r, vf.Name, p, ordName, x)
			}
			if c > 0 {
				list = append(list, entry{toNest(p), float32(c)})
			}
		}
	}
	if err := m.setList(t, pf.Name, list); err != nil {
		return err
	}
	m.measure()
	return nil
}
