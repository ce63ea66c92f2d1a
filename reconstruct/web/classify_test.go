package web

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// linearFields returns Fields whose values at cell centres are linear in
// the position: Delta = 1 + 0.25x − 0.5y + 0.125z and L_i = Delta + c_i,
// with small dyadic coefficients so every stored float32 is exact.
func linearFields(g grid.Geometry) (*Fields, func(x, y, z float64) float64) {
	lin := func(x, y, z float64) float64 { return 1 + 0.25*x - 0.5*y + 0.125*z }
	n := g.N
	h := g.H()
	f := &Fields{G: g, Delta: make([]float32, g.Len()), L1: make([]float32, g.Len()), L2: make([]float32, g.Len()), L3: make([]float32, g.Len())}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k < n; k++ {
				v := lin(g.Origin[0]+(float64(i)+0.5)*h, g.Origin[1]+(float64(j)+0.5)*h, g.Origin[2]+(float64(k)+0.5)*h)
				c := g.Index(i, j, k)
				f.Delta[c], f.L1[c], f.L2[c], f.L3[c] = float32(v), float32(v+2), float32(v), float32(v-3)
			}
		}
	}
	return f, lin
}

// TestSampleLinear: trilinear interpolation reproduces a field linear in
// x, y, z exactly between the outermost cell centres (the defining
// property of the cloud-in-cell interpolation kernel, Hockney & Eastwood
// 1981), and the code counts the interpolated eigenvalues above threshold.
func TestSampleLinear(t *testing.T) {
	g := grid.Geometry{N: 16, L: 32, Origin: [3]float64{-7, 3, 100}}
	f, lin := linearFields(g)
	rng := rand.New(rand.NewPCG(9, 9))
	np := 5000
	pos := make([]float64, 3*np)
	for p := 0; p < np; p++ {
		for a := 0; a < 3; a++ {
			// between the first and last cell centres, where no wrap occurs
			pos[3*p+a] = g.Origin[a] + g.H()*(0.5+float64(g.N-1)*rng.Float64())
		}
	}
	const th = 0.7
	d, l1, l2, l3, codes := f.Sample(pos, th)
	for p := 0; p < np; p++ {
		want := lin(pos[3*p], pos[3*p+1], pos[3*p+2])
		for name, pair := range map[string][2]float64{"delta": {d[p], want}, "l1": {l1[p], want + 2}, "l2": {l2[p], want}, "l3": {l3[p], want - 3}} {
			if math.Abs(pair[0]-pair[1]) > 1e-12 {
				t.Fatalf("position %v: %s = %.15g, linear field %.15g", pos[3*p:3*p+3], name, pair[0], pair[1])
			}
		}
		if c := code(want+2, want, want-3, th); c != codes[p] {
			t.Fatalf("position %v: code %d, want %d", pos[3*p:3*p+3], codes[p], c)
		}
	}
}

// TestSampleCentres: sampled at cell centres (and at their periodic images
// one box away) the fields and codes are those of the cells, as
// Classify gives them.
func TestSampleCentres(t *testing.T) {
	g := grid.Geometry{N: 32, L: 64, Origin: [3]float64{-32, 0, 8}}
	delta := gaussianField(t, g, -2, 1, 21)
	f, err := Tidal(delta, g, 2)
	if err != nil {
		t.Fatal(err)
	}
	// threshold 0 and a typical one
	for _, th := range []float64{0, DefaultThreshold} {
		want := f.Classify(th)
		for _, shift := range []float64{0, g.L, -2 * g.L} {
			pos := make([]float64, 3*g.Len())
			for i := 0; i < g.N; i++ {
				for j := 0; j < g.N; j++ {
					for k := 0; k < g.N; k++ {
						c := g.Index(i, j, k)
						pos[3*c] = g.Origin[0] + (float64(i)+0.5)*g.H() + shift
						pos[3*c+1] = g.Origin[1] + (float64(j)+0.5)*g.H() - shift
						pos[3*c+2] = g.Origin[2] + (float64(k)+0.5)*g.H() + shift
					}
				}
			}
			d, l1, _, _, codes := f.Sample(pos, th)
			if !slices.Equal(codes, want) {
				t.Errorf("threshold %g shift %g: Sample codes at cell centres differ from Classify", th, shift)
			}
			for c := range d {
				if d[c] != float64(f.Delta[c]) || l1[c] != float64(f.L1[c]) {
					t.Fatalf("threshold %g shift %g cell %d: sampled %v %v, cell %v %v", th, shift, c, d[c], l1[c], f.Delta[c], f.L1[c])
				}
			}
		}
	}
}

// TestFractions checks volume and mass fractions on a hand-built example
// (expected values counted by hand from the definitions in the doc
// comment), with a mask, clamping of 1+δ < 0 and an out-of-range code.
func TestFractions(t *testing.T) {
	codes := []uint8{0, 1, 1, 2, 3, 3, 3, 7}
	weight := []float32{-0.5, 0, 1, 3, -2, 0, 1, 0} // masses 0.5 1 2 4 0 1 2 1
	vol, mass := Fractions(codes, weight, nil)
	wantVol := [4]float64{1.0 / 8, 2.0 / 8, 1.0 / 8, 3.0 / 8}
	wantMass := [4]float64{0.5 / 11.5, 3 / 11.5, 4 / 11.5, 3 / 11.5}
	for k := range 4 {
		if math.Abs(vol[k]-wantVol[k]) > 1e-15 || math.Abs(mass[k]-wantMass[k]) > 1e-15 {
			t.Errorf("code %d: volume %g mass %g, want %g %g", k, vol[k], mass[k], wantVol[k], wantMass[k])
		}
	}
	mask := []bool{true, false, true, true, false, false, true, false} // codes 0 1 2 3, masses 0.5 2 4 2
	vol, mass = Fractions(codes, weight, mask)
	wantVol = [4]float64{0.25, 0.25, 0.25, 0.25}
	wantMass = [4]float64{0.5 / 8.5, 2 / 8.5, 4 / 8.5, 2 / 8.5}
	for k := range 4 {
		if math.Abs(vol[k]-wantVol[k]) > 1e-15 || math.Abs(mass[k]-wantMass[k]) > 1e-15 {
			t.Errorf("masked, code %d: volume %g mass %g, want %g %g", k, vol[k], mass[k], wantVol[k], wantMass[k])
		}
	}
	if v, m := Fractions(codes, nil, nil); v != wantVolUnweighted(codes) || m != v {
		t.Errorf("nil weight: volume %v mass %v", v, m)
	}
	if v, m := Fractions(codes, nil, make([]bool, len(codes))); !math.IsNaN(v[0]) || !math.IsNaN(m[0]) {
		t.Errorf("empty mask: %v %v, want NaN", v, m)
	}
}

func wantVolUnweighted(codes []uint8) (v [4]float64) {
	for _, c := range codes {
		if c < 4 {
			v[c] += 1 / float64(len(codes))
		}
	}
	return v
}

// TestTidalErrors checks the documented error cases and the smoothing
// default.
func TestTidalErrors(t *testing.T) {
	g := grid.Geometry{N: 8, L: 16}
	good := make([]float64, g.Len())
	nan := slices.Clone(good)
	nan[100] = math.NaN()
	for name, tc := range map[string]struct {
		d []float64
		g grid.Geometry
		R float64
	}{
		"odd N":      {good, grid.Geometry{N: 7, L: 16}, 1},
		"short":      {good[:10], g, 1},
		"negative R": {good, g, -1},
		"infinite R": {good, g, math.Inf(1)},
		"NaN delta":  {nan, g, 1},
	} {
		if _, err := Tidal(tc.d, tc.g, tc.R); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	if f, err := Tidal(good, g, 0); err != nil || f.Classify(0)[0] != Void {
		t.Errorf("zero field: %v", err)
	}
	if r := DefaultSmoothing(5); r != 5 {
		t.Errorf("DefaultSmoothing(5) = %g", r)
	}
	for _, bad := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if r := DefaultSmoothing(bad); !math.IsNaN(r) {
			t.Errorf("DefaultSmoothing(%g) = %g, want NaN", bad, r)
		}
	}
}
