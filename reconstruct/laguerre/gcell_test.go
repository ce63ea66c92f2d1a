package laguerre

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestGcellClip cuts a box by random planes with both clippers, gcell (the
// vertex-edge graph) and poly (face lists, checked by TestBruteForce against
// the definition), and compares volume (also from gcell.measure), centroid, face count and the largest
// vertex distance after every cut.
func TestGcellClip(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 1))
	cuts := 0
	for trial := 0; trial < 200; trial++ {
		var g gcell
		var p, q poly
		lo, hi := [3]float64{-0.6, -0.5, -0.7}, [3]float64{0.5, 0.8, 0.4}
		g.reset(lo, hi, [6]int32{-1, -1, -1, -1, -1, -1})
		p.reset(lo, hi)
		for c := 0; c < 40; c++ {
			// plane at distance t from the origin with a random normal
			nx, ny, nz := rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
			d := math.Sqrt(nx*nx + ny*ny + nz*nz)
			tt := 0.05 + 0.5*rng.Float64()
			off := tt * d
			rg := g.clip(nx, ny, nz, off, 1e-13*d, int32(c))
			rp := p.clip(nx, ny, nz, off, 1e-13*d, int32(c))
			if rg != rp {
				t.Fatalf("trial %d cut %d: gcell %d, poly %d", trial, c, rg, rp)
			}
			if rg == clipEmpty {
				break
			}
			if rg == clipCut {
				cuts++
			}
			g.toPoly(&q)
			vg, cg := q.measure()
			if vm, cm := g.measure(); math.Abs(vm-vg) > 1e-15 || cm != cg || len(g.farea) != len(q.farea) {
				t.Fatalf("trial %d cut %d: gcell.measure %.17g %v %d faces, via poly %.17g %v %d faces", trial, c, vm, cm, len(g.farea), vg, cg, len(q.farea))
			}
			vp, cp := p.measure()
			if math.Abs(vg-vp) > 1e-14 || len(q.fs) != len(p.fs) || math.Abs(g.rmax2-p.rmax2) > 1e-14 {
				t.Fatalf("trial %d cut %d: gcell volume %.17g, %d faces, rmax² %g; poly %.17g, %d faces, %g", trial, c, vg, len(q.fs), g.rmax2, vp, len(p.fs), p.rmax2)
			}
			for k := 0; k < 3; k++ {
				if math.Abs(cg[k]-cp[k]) > 1e-13 {
					t.Fatalf("trial %d cut %d: centroid %v, poly %v", trial, c, cg, cp)
				}
			}
		}
	}
	if cuts < 2000 {
		t.Errorf("only %d cuts in 200 trials", cuts)
	}
	t.Logf("%d cuts compared", cuts)
}

// TestGcellReset checks the starting box of gcell: six faces of four
// vertices, each carrying the tag of the wall it lies on (all its vertices
// at lo or hi of one axis), counter-clockwise seen from outside.
func TestGcellReset(t *testing.T) {
	var g gcell
	var p poly
	lo, hi := [3]float64{-1, -2, -3}, [3]float64{4, 5, 6}
	g.reset(lo, hi, [6]int32{10, 11, 12, 13, 14, 15})
	g.toPoly(&p)
	if len(p.fs) != 6 {
		t.Fatalf("%d faces, want 6", len(p.fs))
	}
	for f := range p.fs {
		vs := p.fv[p.fs[f] : p.fs[f]+p.fl[f]]
		if len(vs) != 4 {
			t.Fatalf("face %d: %d vertices", f, len(vs))
		}
		tag := p.ftag[f]
		ax, side := int(tag-10)/2, int(tag-10)%2
		want := lo[ax]
		if side == 1 {
			want = hi[ax]
		}
		// area vector from the cycle; it must point outward along axis ax
		var a [3]float64
		for k := range vs {
			x, y := p.v[3*vs[k]:3*vs[k]+3], p.v[3*vs[(k+1)%4]:3*vs[(k+1)%4]+3]
			a[0] += x[1]*y[2] - x[2]*y[1]
			a[1] += x[2]*y[0] - x[0]*y[2]
			a[2] += x[0]*y[1] - x[1]*y[0]
			if x[ax] != want {
				t.Errorf("face %d tag %d: vertex %v not on the wall", f, tag, x)
			}
		}
		if (a[ax] > 0) != (side == 1) {
			t.Errorf("face %d tag %d: area vector %v points inward", f, tag, a)
		}
	}
	if v, _ := p.measure(); math.Abs(v-5*7*9) > 1e-12 {
		t.Errorf("volume %g, want %d", v, 5*7*9)
	}
}

// TestGcellDegenerate: the plane x + y + z = 1 through the corners
// (1, 1, −1), (1, −1, 1), (−1, 1, 1) of the cube [−1, 1]³ cuts off the corner
// (1, 1, 1) with a triangle whose vertices are old vertices, which gcell
// cannot represent with three edges per vertex; worker.clip must hand the
// cell to poly and get the cut-off tetrahedron right: volume 8 − 8/6.
func TestGcellDegenerate(t *testing.T) {
	var g gcell
	lo, hi := [3]float64{-1, -1, -1}, [3]float64{1, 1, 1}
	g.reset(lo, hi, [6]int32{-1, -1, -1, -1, -1, -1})
	if r := g.clip(1, 1, 1, 1, 1e-12, 0); r != clipDegenerate {
		t.Fatalf("gcell.clip: %d, want clipDegenerate", r)
	}
	var wk worker
	wk.g.reset(lo, hi, [6]int32{-1, -1, -1, -1, -1, -1})
	if r := wk.clip(1, 1, 1, 1, 1e-12, 0); r != clipCut || !wk.slow || wk.degen != 1 {
		t.Fatalf("worker.clip: %d, slow %v, %d handovers; want a cut by poly", r, wk.slow, wk.degen)
	}
	if v, _ := wk.p.measure(); math.Abs(v-(8-8.0/6)) > 1e-14 {
		t.Errorf("volume %.16g, want %.16g", v, 8-8.0/6)
	}
	if len(wk.p.fs) != 7 {
		t.Errorf("%d faces, want 7", len(wk.p.fs))
	}
}
