package transport

import (
	"math"
	"math/rand/v2"
)

// lattice returns the ng³ cell-centred lattice sites of the box [0, L)³
// (x slowest).
func lattice(ng int, L float64) []float64 {
	h := L / float64(ng)
	q := make([]float64, 0, 3*ng*ng*ng)
	for i := 0; i < ng; i++ {
		for j := 0; j < ng; j++ {
			for k := 0; k < ng; k++ {
				q = append(q, (float64(i)+0.5)*h, (float64(j)+0.5)*h, (float64(k)+0.5)*h)
			}
		}
	}
	return q
}

// randomModes is a smooth periodic displacement field, the gradient of
// Φ(q) = Σ_m a_m cos(k_m·q + φ_m) with a few random wave vectors, scaled so
// that Σ_m a_m |k_m|² = f. With f < 1 the map q ↦ q − ∇Φ(q) is the gradient
// of the convex function |q|²/2 − Φ(q) (no shell crossing), a Zel'dovich
// displacement of a smooth field (Zel'dovich 1970).
type randomModes struct {
	k   [][3]float64
	a   []float64
	phi []float64
}

func newRandomModes(nm, kmax int, L, f float64, seed uint64) *randomModes {
	rng := rand.New(rand.NewPCG(seed, 77))
	rm := &randomModes{}
	sum := 0.0
	for len(rm.k) < nm {
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
		amp := 1 / k2 // red spectrum
		rm.k = append(rm.k, kv)
		rm.a = append(rm.a, amp)
		rm.phi = append(rm.phi, 2*math.Pi*rng.Float64())
		sum += amp * k2 * (2 * math.Pi / L) * (2 * math.Pi / L)
	}
	for m := range rm.a {
		rm.a[m] *= f / sum
	}
	return rm
}

// displace returns x = q − ∇Φ(q) for the flat positions q.
func (rm *randomModes) displace(q []float64) []float64 {
	x := append([]float64(nil), q...)
	for i := 0; i < len(q); i += 3 {
		for m, kv := range rm.k {
			s := rm.a[m] * math.Sin(kv[0]*q[i]+kv[1]*q[i+1]+kv[2]*q[i+2]+rm.phi[m])
			for a := 0; a < 3; a++ {
				x[i+a] += s * kv[a]
			}
		}
	}
	return x
}

// wrapAll wraps flat positions into [0, L)³.
func wrapAll(x []float64, L float64) {
	for i := range x {
		x[i] = wrap(x[i], 0, L)
	}
}
