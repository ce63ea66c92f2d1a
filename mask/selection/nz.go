package selection

import (
	"errors"
	"fmt"
	"math"
	"strconv"
)

// NZ is a binned redshift distribution: the number of galaxies in each
// redshift bin.
type NZ struct {
	// Edges are the bin edges in redshift, increasing; bin i is
	// [Edges[i], Edges[i+1]), the last bin closed.
	Edges []float64
	// Counts is the number of galaxies in each bin, after smoothing when
	// Binning.Smooth > 0; Σ Counts equals Binning.N (smoothing conserves it).
	Counts []float64
	// Raw is the histogram before smoothing.
	Raw []float64
	// Binning records how the histogram was made.
	Binning Binning
}

// Binning records the choices behind an NZ, for provenance.
type Binning struct {
	// ZMin and ZMax are the redshift range histogrammed.
	ZMin, ZMax float64
	// Width is the bin width in redshift (all bins are equal).
	Width float64
	// WidthRule says how Width was chosen: "given" or the rule with its
	// inputs.
	WidthRule string
	// Smooth is the standard deviation in redshift of the Gaussian kernel
	// applied to the histogram; 0 for none.
	Smooth float64
	// N is the number of redshifts counted; Outside the number ignored for
	// lying outside [ZMin, ZMax].
	N, Outside int
}

// KeyValues returns the binning as key–value pairs (keys "nz.zmin",
// "nz.zmax", "nz.bin_width", "nz.bin_rule", "nz.smooth_sigma", "nz.n",
// "nz.outside") for a provenance record.
func (b Binning) KeyValues() [][2]string {
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	return [][2]string{
		{"nz.zmin", g(b.ZMin)}, {"nz.zmax", g(b.ZMax)}, {"nz.bin_width", g(b.Width)},
		{"nz.bin_rule", b.WidthRule}, {"nz.smooth_sigma", g(b.Smooth)},
		{"nz.n", strconv.Itoa(b.N)}, {"nz.outside", strconv.Itoa(b.Outside)},
	}
}

// EstimateOptions are the choices of EstimateNZ. The zero value asks for
// the defaults.
type EstimateOptions struct {
	// ZMin and ZMax bound the histogram; when both are 0 the data's
	// smallest and largest redshifts are used.
	ZMin, ZMax float64
	// Width is the bin width in redshift; 0 selects MinBinWidth ∨ the Rice
	// rule (see EstimateNZ).
	Width float64
	// Smooth is the Gaussian kernel's standard deviation in redshift; 0
	// selects one bin width, and a negative value switches smoothing off.
	Smooth float64
}

// MinBinWidth is the smallest bin width the default rule chooses: 0.005 in
// redshift, about 15 Mpc/h at low z.
const MinBinWidth = 0.005

// EstimateNZ histograms the redshifts z. Redshifts outside [ZMin, ZMax] are
// ignored (and counted in Binning.Outside).
//
// Bin width: the given Width, or by default max(MinBinWidth, (zmax − zmin) /
// (2 N^{1/3})), the Rice rule's 2 N^{1/3} bins (from memory: Terrell & Scott
// 1985, J. Am. Stat. Assoc. 80, 209, for the N^{1/3} scaling) with a floor;
// the number of bins is then ⌈(zmax − zmin)/width⌉ and the width shrunk to
// tile the range exactly.
//
// Smoothing (unless switched off): each bin's count is spread over the bins
// by a Gaussian of standard deviation Smooth centred on the bin's centre,
// the fraction reaching bin j being the Gaussian's integral over bin j,
// renormalised over the bins in range, so that the total count is kept
// exactly (no galaxies leak past ZMin or ZMax).
//
// It returns an error for an empty input, a NaN or negative redshift
// (naming its index), a range with ZMin ≥ ZMax, or a bad width or
// smoothing.
func EstimateNZ(z []float64, opt EstimateOptions) (*NZ, error) {
	if len(z) == 0 {
		return nil, errors.New("selection: EstimateNZ: no redshifts")
	}
	lo, hi := opt.ZMin, opt.ZMax
	auto := lo == 0 && hi == 0
	if auto {
		lo, hi = math.Inf(1), math.Inf(-1)
	}
	for i, v := range z {
		if !(v >= 0) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("selection: EstimateNZ: redshift %d is %v, expected a finite z ≥ 0", i, v)
		}
		if auto {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	if !(lo >= 0 && hi > lo) || math.IsInf(hi, 0) {
		return nil, fmt.Errorf("selection: EstimateNZ: empty redshift range [%v, %v]", lo, hi)
	}
	b := Binning{ZMin: lo, ZMax: hi}
	if auto {
		// Count first: the rule needs N.
		b.N = len(z)
	} else {
		for _, v := range z {
			if v >= lo && v <= hi {
				b.N++
			}
		}
	}
	b.Outside = len(z) - b.N
	width := opt.Width
	switch {
	case width == 0:
		width = math.Max(MinBinWidth, (hi-lo)/(2*math.Cbrt(float64(max(b.N, 1)))))
		b.WidthRule = fmt.Sprintf("max(%g, (zmax-zmin)/(2 N^(1/3))) with N = %d, tiled", MinBinWidth, b.N)
	case width > 0 && !math.IsInf(width, 0):
		b.WidthRule = "given, tiled"
	default:
		return nil, fmt.Errorf("selection: EstimateNZ: bin width %v, expected > 0", width)
	}
	nb := int(math.Ceil((hi - lo) / width * (1 - 1e-12)))
	if nb < 1 {
		nb = 1
	}
	if nb > 1<<20 {
		return nil, fmt.Errorf("selection: EstimateNZ: %d bins is too many (width %v)", nb, width)
	}
	b.Width = (hi - lo) / float64(nb)
	nz := &NZ{Edges: make([]float64, nb+1), Raw: make([]float64, nb)}
	for i := range nz.Edges {
		nz.Edges[i] = lo + (hi-lo)*float64(i)/float64(nb)
	}
	nz.Edges[nb] = hi
	for _, v := range z {
		if v < lo || v > hi {
			continue
		}
		k := min(int((v-lo)/b.Width), nb-1)
		// Rounding of (v − lo)/width can put v one bin off its edges.
		if v < nz.Edges[k] {
			k--
		} else if k+1 < nb && v >= nz.Edges[k+1] {
			k++
		}
		nz.Raw[k]++
	}
	sigma := opt.Smooth
	switch {
	case sigma == 0:
		sigma = b.Width
	case sigma < 0:
		sigma = 0
	case math.IsNaN(sigma) || math.IsInf(sigma, 0):
		return nil, fmt.Errorf("selection: EstimateNZ: smoothing %v, expected a finite number", sigma)
	}
	b.Smooth = sigma
	nz.Binning = b
	nz.Counts = smooth(nz.Edges, nz.Raw, sigma)
	return nz, nil
}

// smooth spreads counts over the bins with a Gaussian of standard
// deviation sigma, conserving the total (see EstimateNZ). Contributions
// beyond 8σ are dropped (they are below 1e-15).
func smooth(edges, counts []float64, sigma float64) []float64 {
	out := make([]float64, len(counts))
	if sigma == 0 {
		copy(out, counts)
		return out
	}
	phi := func(x float64) float64 { return 0.5 * math.Erfc(-x/math.Sqrt2) }
	w := make([]float64, len(counts))
	for i, c := range counts {
		if c == 0 {
			continue
		}
		ctr := (edges[i] + edges[i+1]) / 2
		jlo, jhi := i, i
		for jlo > 0 && ctr-edges[jlo] < 8*sigma {
			jlo--
		}
		for jhi < len(counts)-1 && edges[jhi+1]-ctr < 8*sigma {
			jhi++
		}
		sum := 0.0
		for j := jlo; j <= jhi; j++ {
			w[j] = phi((edges[j+1]-ctr)/sigma) - phi((edges[j]-ctr)/sigma)
			sum += w[j]
		}
		for j := jlo; j <= jhi; j++ {
			out[j] += c * w[j] / sum
		}
	}
	return out
}
