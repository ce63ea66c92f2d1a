package laguerre

import (
	"math"
	"math/rand/v2"
	"testing"
)

// flowWeights returns the sites and weights of a displaced lattice: ng³
// lattice points q in the periodic box [0, L)³ moved to y = q + ∇Φ(q) and
// weighted ψ = |∇Φ(q)|² + 2Φ(q), where Φ is a sum of nm random Fourier
// modes up to kmax fundamentals with a red spectrum, scaled so that the rms
// displacement is disp (box units). For a convex |q|²/2 + Φ (no shell
// crossing) these are the exact optimal-transport weights of the map q ↦ y:
// the Laguerre cell of y is the lattice cell of q (Brenier 1991; the
// weight is |y|² − 2φ*(y) with φ* the Legendre transform of |q|²/2 + Φ).
// With a larger disp the map crosses shells, and the weights spread by
// about 2·disp·L across the box, as in a transport solve of a clustered
// survey. The points are returned wrapped into the box.
func flowWeights(ng int, L float64, nm, kmax int, disp float64, seed uint64) (xyz, psi []float64) {
	rng := rand.New(rand.NewPCG(seed, 5))
	type mode struct {
		k        [3]float64
		amp, phi float64
	}
	var ms []mode
	for len(ms) < nm {
		var kv [3]float64
		k2 := 0.0
		for a := 0; a < 3; a++ {
			kv[a] = float64(rng.IntN(2*kmax+1) - kmax)
			k2 += kv[a] * kv[a]
		}
		if k2 == 0 || k2 > float64(kmax*kmax) {
			continue
		}
		for a := 0; a < 3; a++ {
			kv[a] *= 2 * math.Pi / L
		}
		// displacement power ∝ k^-3 per mode count ~ k²: amplitude of Φ ∝ k^-2.5
		kk := math.Sqrt(k2) * 2 * math.Pi / L
		ms = append(ms, mode{kv, math.Pow(kk, -2.5), 2 * math.Pi * rng.Float64()})
	}
	n := ng * ng * ng
	q := make([]float64, 3*n)
	h := L / float64(ng)
	for i := 0; i < n; i++ {
		q[3*i] = (float64(i%ng) + 0.5) * h
		q[3*i+1] = (float64(i/ng%ng) + 0.5) * h
		q[3*i+2] = (float64(i/(ng*ng)) + 0.5) * h
	}
	phi := make([]float64, n)
	grad := make([]float64, 3*n)
	for i := 0; i < n; i++ {
		for _, m := range ms {
			arg := m.k[0]*q[3*i] + m.k[1]*q[3*i+1] + m.k[2]*q[3*i+2] + m.phi
			s, c := math.Sincos(arg)
			phi[i] += m.amp * c
			for a := 0; a < 3; a++ {
				grad[3*i+a] -= m.amp * s * m.k[a]
			}
		}
	}
	ss := 0.0
	for _, g := range grad {
		ss += g * g
	}
	f := disp / math.Sqrt(ss/float64(n))
	xyz = make([]float64, 3*n)
	psi = make([]float64, n)
	for i := 0; i < n; i++ {
		d2 := 0.0
		for a := 0; a < 3; a++ {
			g := f * grad[3*i+a]
			d2 += g * g
			x := math.Mod(q[3*i+a]+g, L)
			if x < 0 {
				x += L
			}
			if x >= L {
				x = 0
			}
			xyz[3*i+a] = x
		}
		psi[i] = d2 + 2*f*phi[i]
	}
	return xyz, psi
}

// benchFlow times Index.Compute on a shell-crossed displaced lattice
// (flowWeights): 46³ points in a periodic box of side 100 with an rms
// displacement of 2.4 lattice spacings, the regime of a 2LPT mock at z = 0
// (9.3 Mpc/h against a spacing of 3.9 Mpc/h).
func BenchmarkLaguerreFlow100k(b *testing.B) { benchFlow(b, false) }

// BenchmarkLaguerreFlowWarm100k is BenchmarkLaguerreFlow100k with
// Options.WarmStart, timing the repeated calls after a first (untimed)
// one, with the weights changed by up to 0.1 s² (s the lattice spacing)
// between calls, as in the last steps of a Newton solve.
func BenchmarkLaguerreFlowWarm100k(b *testing.B) { benchFlow(b, true) }

func benchFlow(b *testing.B, warm bool) {
	const ng, L = 46, 100.0
	xyz, psi := flowWeights(ng, L, 300, 3, 2.4*L/ng, 3)
	opt := Options{Hi: [3]float64{L, L, L}, Periodic: true, WarmStart: warm}
	ix, err := NewIndex(xyz, opt)
	if err != nil {
		b.Fatal(err)
	}
	var out Cells
	psi2 := append([]float64(nil), psi...)
	if warm {
		if err := ix.Compute(psi, &out); err != nil {
			b.Fatal(err)
		}
		pert := randomWeights(len(psi), 4, 0.1*(L/ng)*(L/ng))
		for i := range psi2 {
			psi2[i] += pert[i]
		}
		for _, w := range out.workers {
			w.nExtra, w.nBlocks, w.nShells = 0, 0, 0
			w.again, w.redo, w.nCells, w.nPts, w.p.calls, w.p.cuts = 0, 0, 0, 0, 0, 0
		}
	}
	b.ResetTimer()
	for b.Loop() {
		if err := ix.Compute(psi2, &out); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	sum := 0.0
	for _, v := range out.Volume {
		sum += v
	}
	again, redo, cells, pts, calls, cuts := 0, 0, 0, 0, 0, 0
	for _, w := range out.workers {
		again += w.again
		redo += w.redo
		cells += w.nCells
		pts += w.nPts
		calls += w.p.calls
		cuts += w.p.cuts
	}
	nn := float64(b.N * len(psi))
	b.ReportMetric(float64(cells)/nn, "gcells/cell")
	b.ReportMetric(float64(pts)/nn, "pts/cell")
	b.ReportMetric(float64(calls)/nn, "planes/cell")
	b.ReportMetric(float64(cuts)/nn, "cuts/cell")
	b.ReportMetric(float64(again), "again")
	ne, nb, ns := 0, 0, 0
	for _, w := range out.workers {
		ne += w.nExtra
		nb += w.nBlocks
		ns += w.nShells
	}
	b.ReportMetric(float64(ne)/float64(nb), "extra/block")
	b.ReportMetric(float64(ns)/float64(nb), "shells/block")
	b.ReportMetric(float64(redo), "redo")
	b.ReportMetric(float64(out.Empty), "empty")
	b.ReportMetric(sum/(L*L*L)-1, "volerr")
	_ = psi
}

// TestFlowWeightsNoCrossing checks the helper itself: below shell crossing
// the Laguerre cells of the displaced lattice are the lattice cells, so
// every volume is h³ (Brenier 1991, see flowWeights).
func TestFlowWeightsNoCrossing(t *testing.T) {
	const ng, L = 12, 10.0
	xyz, psi := flowWeights(ng, L, 20, 2, 0.05*L/ng, 9)
	out := compute(t, xyz, psi, Options{Hi: [3]float64{L, L, L}, Periodic: true})
	h3 := math.Pow(L/ng, 3)
	worst := 0.0
	for _, v := range out.Volume {
		worst = math.Max(worst, math.Abs(v/h3-1))
	}
	t.Logf("largest relative volume deviation %.3g", worst)
	if worst > 0.02 {
		t.Errorf("largest relative volume deviation %.3g, want a lattice cell (< 0.02)", worst)
	}
}

// TestFlowBruteForce compares Compute on shell-crossed transport weights
// (flowWeights, rms displacement 1.6 spacings, weights spread over about
// 2·disp·L) with clipping by every point: the block frames and the far
// test must not lose a cut. Source: the definition of the power cell
// (Aurenhammer 1987), evaluated without pruning (bruteCell). Cold and warm
// calls, periodic and clipped, and the volume sum (a partition of the box).
func TestFlowBruteForce(t *testing.T) {
	const ng, L = 12, 30.0
	xyz, psi := flowWeights(ng, L, 60, 1, 1.6*L/ng, 8)
	for _, periodic := range []bool{true, false} {
		opt := Options{Hi: [3]float64{L, L, L}, Periodic: periodic, WarmStart: true}
		ix, err := NewIndex(xyz, opt)
		if err != nil {
			t.Fatal(err)
		}
		var out Cells
		for call := 0; call < 2; call++ {
			w := psi
			if call == 1 {
				// a warm call with changed weights
				w = append([]float64(nil), psi...)
				pert := randomWeights(len(w), 12, 0.3*(L/ng)*(L/ng))
				for i := range w {
					w[i] += pert[i]
				}
			}
			if err := ix.Compute(w, &out); err != nil {
				t.Fatal(err)
			}
			sum := 0.0
			for _, v := range out.Volume {
				sum += v
			}
			if !relClose(sum, L*L*L, 1e-9) {
				t.Errorf("periodic=%v call %d: volume sum %.12g, want %g", periodic, call, sum, L*L*L)
			}
			bad := 0
			for i := 0; i < len(w); i += 5 {
				want := bruteCell(xyz, w, opt, i, 1)
				if math.Abs(out.Volume[i]-want) > 1e-9*L*L*L/float64(len(w)) {
					if bad < 5 {
						t.Errorf("periodic=%v call %d cell %d: volume %.12g, brute force %.12g", periodic, call, i, out.Volume[i], want)
					}
					bad++
				}
			}
			t.Logf("periodic=%v call %d: %d empty cells, %d of %d sampled cells differ", periodic, call, out.Empty, bad, (len(w)+4)/5)
		}
	}
}
