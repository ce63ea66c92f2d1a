package footprint

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"sync"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/survey"
)

// MaxRasterNside is the largest Nside Rasterize accepts: its full-sky map
// of 12·8192² float32 values takes 3.2 GB.
const MaxRasterNside = 8192

// rasterEvals is the number of footprint evaluations in one parallel chunk
// of Rasterize.
const rasterEvals = 1 << 14

// Rasterize returns the full-sky HEALPix map at nside (NESTED) of any
// footprint f: the completeness of pixel p is the mean of f's completeness
// at the centres of the 4^sub sub-pixels of p at Nside nside·2^sub, all of
// equal area (Górski et al. 2005), so the mean estimates the pixel's mean
// completeness; sub = 0 takes the value at the pixel centre only. name is
// used by Describe.
//
// The pixels are computed in parallel with internal/parallel.For, each on
// its own, so the map does not depend on the number of goroutines. It
// returns an error if nside is not a power of two from 1 to MaxRasterNside,
// if sub < 0 or the sub-pixel order exceeds healpix.MaxOrder, or if f
// returns a completeness outside [0, 1] (the lowest such sub-pixel is
// named).
func Rasterize(f Footprint, nside, sub int, name string) (*Map, error) {
	if f == nil {
		return nil, errors.New("footprint: Rasterize: nil footprint")
	}
	if err := healpix.CheckNside(nside); err != nil {
		return nil, fmt.Errorf("footprint: Rasterize: %w", err)
	}
	if nside > MaxRasterNside {
		return nil, fmt.Errorf("footprint: Rasterize: Nside %d above %d: the full-sky map would hold %d pixels", nside, MaxRasterNside, healpix.NPix(nside))
	}
	order := healpix.Order(nside)
	if sub < 0 || order+sub > healpix.MaxOrder {
		return nil, fmt.Errorf("footprint: Rasterize: sub %d: expected 0 to %d at Nside %d (sub-pixel order at most %d)", sub, healpix.MaxOrder-order, nside, healpix.MaxOrder)
	}
	npix := healpix.NPix(nside)
	fine := nside << sub
	shift := uint(2 * sub)
	k := int64(1) << shift
	inv := 1 / float64(k)
	vals := make([]float32, npix)
	var mu sync.Mutex
	bad, badVal := int64(-1), 0.0
	// Chunks of about rasterEvals evaluations; the size depends on sub
	// only, never on the number of goroutines.
	chunk := max(1, rasterEvals>>shift)
	parallel.For(int(npix), chunk, func(lo, hi int) {
		for p := int64(lo); p < int64(hi); p++ {
			var s float64
			for q := p << shift; q < (p+1)<<shift; q++ {
				ra, dec := healpix.Ang2RADec(healpix.Pix2AngNest(fine, q))
				c := f.Completeness(ra, dec)
				if !(c >= 0 && c <= 1) {
					mu.Lock()
					if bad < 0 || q < bad {
						bad, badVal = q, c
					}
					mu.Unlock()
					return
				}
				s += c
			}
			// Each partial sum of values ≤ 1 stays ≤ its count after
			// rounding, so the mean is ≤ 1; min guards the float32 cast.
			vals[p] = float32(min(s*inv, 1))
		}
	})
	if bad >= 0 {
		th, ph := healpix.Pix2AngNest(fine, bad)
		ra, dec := healpix.Ang2RADec(th, ph)
		return nil, fmt.Errorf("footprint: Rasterize: %s gives completeness %g, outside [0, 1], at RA %.6f, Dec %.6f (NESTED pixel %d at Nside %d)",
			f.Describe(), badVal, ra, dec, bad, fine)
	}
	m := &Map{name: name, nside: nside, order: order, full: vals}
	m.measure()
	return m, nil
}

// withFormatKeys returns the writer's format keywords followed by the
// caller's metadata, refusing caller keys that would change the format.
func withFormatKeys(fn string, keys []survey.KeyValue, meta survey.Meta) (survey.Meta, error) {
	out := make(survey.Meta, 0, len(keys)+len(meta))
	out = append(out, keys...)
	for _, kv := range meta {
		for _, f := range keys {
			if kv.Key == f.Key {
				return nil, fmt.Errorf("footprint: %s: metadata key %q is a format keyword the writer sets itself (%s = %s)", fn, kv.Key, f.Key, f.Value)
			}
		}
		out = append(out, kv)
	}
	return out, nil
}

// WriteMap writes m to path as a HEALPix FITS binary table in explicit
// (partial-sky) form, following the HEALPix FITS conventions as healpy
// reads them (healpy.read_map(path, nest=True, partial=True)) and as
// ReadMap reads them: the header has PIXTYPE = 'HEALPIX', ORDERING =
// 'NESTED', NSIDE, INDXSCHM = 'EXPLICIT', OBJECT = 'PARTIAL' and COORDSYS
// = 'C' (equatorial), then meta (provenance; see survey.Provenance.Meta)
// encoded as survey's FITS writer does. The table, EXTNAME 'FOOTPRINT',
// has a column PIXEL (64-bit integers, ascending NESTED pixel numbers) and
// a column COMPLETENESS (64-bit floats, the map's float32 values exactly),
// one row for every pixel with completeness above 0; an empty map gives a
// table without rows.
//
// The file is always FITS, whatever the extension of path, and appears
// only when complete (survey.Write writes a temporary file beside it and
// renames it). It returns an error if m is nil, if meta sets one of the
// keywords above, or if writing fails.
func WriteMap(path string, m *Map, meta survey.Meta) error {
	if m == nil {
		return errors.New("footprint: WriteMap: nil map")
	}
	full, err := withFormatKeys("WriteMap", []survey.KeyValue{
		{Key: "PIXTYPE", Value: "HEALPIX"},
		{Key: "ORDERING", Value: "NESTED"},
		{Key: "NSIDE", Value: strconv.Itoa(m.nside)},
		{Key: "INDXSCHM", Value: "EXPLICIT"},
		{Key: "OBJECT", Value: "PARTIAL"},
		{Key: "COORDSYS", Value: "C"},
	}, meta)
	if err != nil {
		return err
	}
	var n int
	for r := range m.runs() {
		n += int(r.hi - r.lo)
	}
	pix := survey.NewColumn("PIXEL", survey.Int64, n)
	pix.Desc = "NESTED pixel number"
	val := survey.NewColumn("COMPLETENESS", survey.Float64, n)
	val.Desc = "survey completeness, 0 to 1"
	for r := range m.runs() {
		for p := r.lo; p < r.hi; p++ {
			pix.I = append(pix.I, p)
			val.F = append(val.F, r.c)
		}
	}
	t := &survey.Table{Name: "FOOTPRINT", Cols: []*survey.Column{pix, val}, Meta: full}
	if err := survey.Write(path, t, survey.WriteOptions{Format: survey.FormatFITS}); err != nil {
		return fmt.Errorf("footprint: WriteMap: %w", err)
	}
	return nil
}

// MOCFromMap returns the MOC at the map's order (Nside 2^order) of the
// pixels of m whose completeness is above 0, or, when minCompleteness is
// above 0, at least minCompleteness. It is named after m. It returns an
// error if m is nil or minCompleteness is NaN or above 1.
func MOCFromMap(m *Map, minCompleteness float64) (*MOC, error) {
	if m == nil {
		return nil, errors.New("footprint: MOCFromMap: nil map")
	}
	if math.IsNaN(minCompleteness) || minCompleteness > 1 {
		return nil, fmt.Errorf("footprint: MOCFromMap: minimum completeness %g: expected at most 1", minCompleteness)
	}
	keep := func(v float32) bool { return v > 0 }
	if minCompleteness > 0 {
		keep = func(v float32) bool { return float64(v) >= minCompleteness }
	}
	var rs []healpix.Range
	add := func(p int64) {
		if n := len(rs); n > 0 && rs[n-1].End == p {
			rs[n-1].End++
			return
		}
		rs = append(rs, healpix.Range{Start: p, End: p + 1})
	}
	if m.full != nil {
		for p, v := range m.full {
			if keep(v) {
				add(int64(p))
			}
		}
	} else {
		for i, p := range m.pix {
			if keep(m.val[i]) {
				add(p)
			}
		}
	}
	return NewMOC(m.name, m.order, rs)
}

// mocUniq returns the NUNIQ numbers of the fewest HEALPix cells that tile
// the sorted, disjoint, non-touching NESTED ranges rs at order, in
// ascending order.
//
// A cell of order o' and NESTED number ipix covers the 4^d pixels
// [ipix·4^d, (ipix+1)·4^d) at order = o' + d, and its NUNIQ number is
// 4·4^o' + ipix (IVOA MOC 2.0, §4.3.1). Each range is split greedily from
// its start into the largest aligned block that fits: the block of 4^d
// pixels at s with s divisible by 4^d, s + 4^d ≤ end and d ≤ order (a base
// pixel is the largest cell). The cells so found are the maximal cells
// inside the range, which no representation can merge further, so the
// count is the least possible. Because the ranges are sorted, the cells of
// each order come out in increasing ipix; NUNIQ numbers of order o' lie in
// [4·4^o', 16·4^o'), below those of order o'+1, so concatenating the
// orders from 0 up gives the whole list in ascending NUNIQ without a sort.
func mocUniq(order int, rs []healpix.Range) []int64 {
	byOrder := make([][]int64, order+1)
	for _, r := range rs {
		for s := r.Start; s < r.End; {
			d := 0
			for d < order {
				b := int64(1) << (2 * (d + 1))
				if s&(b-1) != 0 || s+b > r.End {
					break
				}
				d++
			}
			o := order - d
			byOrder[o] = append(byOrder[o], (int64(4)<<(2*o))+(s>>(2*d)))
			s += int64(1) << (2 * d)
		}
	}
	var n int
	for _, u := range byOrder {
		n += len(u)
	}
	out := make([]int64, 0, n)
	for _, u := range byOrder {
		out = append(out, u...)
	}
	return out
}

// WriteMOC writes m to path as an IVOA MOC 2.0 spatial MOC in FITS (MOC
// Recommendation 2.0, 2022, §4.3): a binary table, EXTNAME 'MOC', with one
// column UNIQ of 64-bit integers (TFORM 1K) holding the NUNIQ numbers
// 4·4^order + ipix of the fewest cells that cover m (see mocUniq), in
// ascending order. The header has PIXTYPE = 'HEALPIX', ORDERING = 'NUNIQ',
// COORDSYS = 'C', MOCDIM = 'SPACE', MOCVERS = '2.0' (a string), MOCORD_S and
// MOCORDER (the MOC 2.0 and 1.x names of the order), MOCTOOL = 'filigree',
// then meta (provenance) encoded as survey's FITS writer does. ReadMOC,
// pymoc and astropy read it. An empty MOC gives a table without rows.
//
// The file is always FITS, whatever the extension of path, and appears
// only when complete (survey.WriteAtomic). It returns an error if m is
// nil, if meta sets one of the keywords above, or if writing fails.
func WriteMOC(path string, m *MOC, meta survey.Meta) error {
	if m == nil {
		return errors.New("footprint: WriteMOC: nil MOC")
	}
	ord := strconv.Itoa(m.order)
	full, err := withFormatKeys("WriteMOC", []survey.KeyValue{
		{Key: "PIXTYPE", Value: "HEALPIX"},
		{Key: "ORDERING", Value: "NUNIQ"},
		{Key: "COORDSYS", Value: "C"},
		{Key: "MOCDIM", Value: "SPACE"},
		{Key: mocVersKey, Value: mocVersValue},
		{Key: "MOCORD_S", Value: ord},
		{Key: "MOCORDER", Value: ord},
		{Key: "MOCTOOL", Value: "filigree"},
	}, meta)
	if err != nil {
		return err
	}
	u := survey.NewColumn("UNIQ", survey.Int64, 0)
	u.I = mocUniq(m.order, m.ranges)
	u.Desc = "NUNIQ cell number, 4*4^order + ipix (NESTED)"
	t := &survey.Table{Name: "MOC", Cols: []*survey.Column{u}, Meta: full}
	var buf bytes.Buffer
	if err := survey.Encode(&buf, t, survey.FormatFITS); err != nil {
		return fmt.Errorf("footprint: WriteMOC: %w", err)
	}
	b := buf.Bytes()
	if err := quoteMOCVers(b); err != nil {
		return err
	}
	if err := survey.WriteAtomic(path, func(w io.Writer) error {
		_, err := w.Write(b)
		return err
	}); err != nil {
		return fmt.Errorf("footprint: WriteMOC: %w", err)
	}
	return nil
}

// The MOC version keyword and value. MOC 2.0 gives MOCVERS as the string
// '2.0'; survey's FITS writer writes a numeric-looking metadata value as a
// number, so quoteMOCVers turns the card into a string card afterwards.
const (
	mocVersKey   = "MOCVERS"
	mocVersValue = "2.0"
)

// quoteMOCVers rewrites, in place, the card "MOCVERS = 2.0" in the
// extension header of the FITS file in b as the string card "MOCVERS =
// '2.0'". Header cards are 80 bytes each, so the rest of the file is
// unchanged.
func quoteMOCVers(b []byte) error {
	const card, block = 80, 2880
	want := fmt.Sprintf("%-8s= %20s", mocVersKey, mocVersValue)
	ends := 0
	for i := 0; i+card <= len(b) && ends < 2; i += card {
		c := b[i : i+card]
		if string(c[:8]) == "END     " {
			// The next header starts at the next block.
			ends++
			i = (i/block+1)*block - card
			continue
		}
		if ends == 1 && string(c[:len(want)]) == want && len(bytes.TrimRight(c[len(want):], " ")) == 0 {
			s := fmt.Sprintf("%-8s= '%s' / MOC standard version", mocVersKey, mocVersValue)
			copy(c, s)
			for j := len(s); j < card; j++ {
				c[j] = ' '
			}
			return nil
		}
	}
	return fmt.Errorf("footprint: WriteMOC: internal error: no %s card to quote in the encoded header", mocVersKey)
}
