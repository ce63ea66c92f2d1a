// Package footprint describes the sky coverage of a survey: the
// completeness, between 0 and 1, of the survey at each direction. A
// footprint is read from a HEALPix map in FITS, from an IVOA MOC in FITS or
// from a plain-text region file (package mask/region), and footprints
// combine by intersection, union and subtraction.
//
// Directions are right ascension and declination in degrees; areas are in
// square degrees.
//
// # Formats
//
//   - HEALPix maps (Map, ReadMap): a FITS binary table with PIXTYPE =
//     'HEALPIX', ORDERING = 'RING' or 'NESTED', NSIDE, and implicit
//     (full-sky or FIRSTPIX…LASTPIX, scalar or vector rows) or explicit
//     (PIXEL column) indexing; the values are completeness, with NaN and
//     Unseen meaning 0. Full-sky maps are held as one float32 per pixel.
//   - MOCs (MOC, ReadMOC): the IVOA MOC 2.0 FITS serialisation, a UNIQ
//     column with ORDERING = 'NUNIQ'; completeness 1 inside.
//   - Regions (FromRegion): the text format of package mask/region.
//
// Open picks the format from the file's content.
//
// # Combinations
//
// Intersect multiplies completeness (independent selections), Union takes
// the larger and Subtract keeps the first footprint where the second is
// zero. Areas of combinations of maps and MOCs are exact; with a region
// they are sums over a HEALPix grid finer than the finest input (see
// Combined.Area for the error bound).
package footprint

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/mask/region"
	"github.com/filigree-survey/filigree/survey"
)

// Footprint is the completeness of a survey over the sky.
type Footprint interface {
	// Completeness returns the completeness in [0, 1] at right ascension
	// ra and declination dec in degrees; 0 outside the footprint and for
	// directions that are not valid (dec outside [-90, 90], NaN).
	Completeness(ra, dec float64) float64
	// Area returns the area in deg² where the completeness is above 0.
	Area() float64
	// EffectiveArea returns the completeness-weighted area in deg².
	EffectiveArea() float64
	// Resolution returns the characteristic pixel size in degrees (the
	// square root of the pixel area), 0 for footprints defined by exact
	// shapes.
	Resolution() float64
	// Describe returns a one-line description for logs and provenance.
	Describe() string
}

// manyChunk is the number of directions handled by one goroutine at a time.
const manyChunk = 1 << 14

// CompletenessMany stores in dst[i] the completeness of f at (ra[i],
// dec[i]) in degrees, spreading the work over runtime.GOMAXPROCS(0)
// goroutines. Each element is computed on its own, so the result does not
// depend on the number of goroutines. It panics if the slices differ in
// length.
func CompletenessMany(f Footprint, dst, ra, dec []float64) {
	if len(ra) != len(dst) || len(dec) != len(dst) {
		panic("footprint: CompletenessMany slice lengths differ")
	}
	fill := func(lo, hi int) {
		for i := lo; i < hi; i++ {
			dst[i] = f.Completeness(ra[i], dec[i])
		}
	}
	if m, ok := f.(*Map); ok {
		fill = func(lo, hi int) { m.completenessRange(dst[lo:hi], ra[lo:hi], dec[lo:hi]) }
	}
	parallel.For(len(dst), manyChunk, fill)
}

// Open reads the footprint in the file at path, choosing the reader by
// content: a FITS file whose binary table has ORDERING = 'NUNIQ' (or a
// MOCORDER keyword) is a MOC (ReadMOC), one with PIXTYPE = 'HEALPIX' a
// HEALPix map (ReadMap); any other FITS file is an error; a file that is
// not FITS is read as a region file (region.ReadFile).
func Open(path string) (Footprint, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	head := make([]byte, 80)
	n, err := io.ReadFull(f, head)
	f.Close()
	if err != nil && err != io.ErrUnexpectedEOF && err != io.EOF {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	head = head[:n]
	if !isFITS(head) {
		if bytes.IndexByte(head, 0) >= 0 {
			return nil, &survey.InputError{File: path, Byte: -1,
				Msg: "neither a FITS file (it does not start with SIMPLE  =) nor a text region file (it holds NUL bytes)"}
		}
		r, err := region.ReadFile(path)
		if err != nil {
			return nil, err
		}
		return FromRegion(r), nil
	}
	t, err := survey.OpenFITSTable(path)
	if err != nil {
		return nil, err
	}
	defer t.Close()
	ordering, _ := t.Keyword("ORDERING")
	_, hasMOCOrder := mocOrderKeyword(t)
	if strings.EqualFold(strings.TrimSpace(ordering), "NUNIQ") || hasMOCOrder != "" {
		return readMOC(t)
	}
	if pt, ok := t.Keyword("PIXTYPE"); ok && strings.EqualFold(strings.TrimSpace(pt), "HEALPIX") {
		return readMap(t)
	}
	return nil, t.KeywordError("PIXTYPE",
		"not a HEALPix map or MOC: the binary table has neither PIXTYPE = 'HEALPIX' nor ORDERING = 'NUNIQ'")
}

// isFITS reports whether the first bytes of a file are a FITS primary
// header's SIMPLE card.
func isFITS(head []byte) bool {
	return len(head) >= 10 && string(head[:10]) == "SIMPLE  = "
}

// regionFootprint adapts a *region.Region.
type regionFootprint struct{ r *region.Region }

// FromRegion returns the footprint of a region: its completeness, exact
// area and effective area, and Resolution 0.
func FromRegion(r *region.Region) Footprint { return regionFootprint{r} }

func (f regionFootprint) Completeness(ra, dec float64) float64 {
	if !(dec >= -90 && dec <= 90) || math.IsNaN(ra) || math.IsInf(ra, 0) {
		return 0
	}
	return f.r.Completeness(ra, dec)
}
func (f regionFootprint) Area() float64          { return f.r.Area() }
func (f regionFootprint) EffectiveArea() float64 { return f.r.EffectiveArea() }
func (f regionFootprint) Resolution() float64    { return 0 }
func (f regionFootprint) Describe() string {
	return fmt.Sprintf("region %s (%d shapes)", f.r.Name, len(f.r.Shapes()))
}
