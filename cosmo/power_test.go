package cosmo

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

func planckPower(t *testing.T, noWiggle bool) (*Model, *LinearPower) {
	t.Helper()
	p, err := Preset("planck2018")
	if err != nil {
		t.Fatal(err)
	}
	m, err := New(p)
	if err != nil {
		t.Fatal(err)
	}
	lp, err := m.LinearPower(PowerOptions{NoWiggle: noWiggle})
	if err != nil {
		t.Fatal(err)
	}
	return m, lp
}

// TestPowerSigma8 recomputes σ8 from P(k) by an independent quadrature
// (gonum's fixed Gauss–Legendre rule in k on log-spaced panels, not the
// package's adaptive rule in ln k) and checks it equals the requested value.
func TestPowerSigma8(t *testing.T) {
	for _, nw := range []bool{false, true} {
		m, lp := planckPower(t, nw)
		var s2 float64
		edges := []float64{}
		for k := 1e-5; k < 200; k *= 1.25 {
			edges = append(edges, k)
		}
		for i := 0; i+1 < len(edges); i++ {
			s2 += quad.Fixed(func(k float64) float64 {
				w := tophatWindow(k * 8)
				return k * k * lp.At(k) * w * w
			}, edges[i], edges[i+1], 20, nil, 0)
		}
		got := math.Sqrt(s2 / (2 * math.Pi * math.Pi))
		if want := m.Params().Sigma8; math.Abs(got/want-1) > 1e-6 {
			t.Errorf("noWiggle=%v: independent σ8 = %.8f, want %.8f", nw, got, want)
		}
	}
}

// TestTophatWindow checks the series branch against the closed form where
// both are accurate, and W(0) = 1.
func TestTophatWindow(t *testing.T) {
	if tophatWindow(0) != 1 {
		t.Error("W(0) != 1")
	}
	x := 0.0099
	exact := 3 * (math.Sin(x) - x*math.Cos(x)) / (x * x * x)
	if math.Abs(tophatWindow(x)-exact) > 1e-9 {
		t.Errorf("W(%v): series %v, closed form %v", x, tophatWindow(x), exact)
	}
}

// TestTransferLimits checks T → 1 on scales far above the horizon at
// equality (EH98 normalisation) and the k^(n_s − 4) ln²k fall-off far below
// it: T(k) k² / ln(k) is nearly constant at k ≫ k_eq (EH98 eq. 19 tends to
// ln(1.8 β q)/(C q²)).
func TestTransferLimits(t *testing.T) {
	for _, nw := range []bool{false, true} {
		_, lp := planckPower(t, nw)
		if d := math.Abs(lp.Transfer(1e-5) - 1); d > 1e-4 {
			t.Errorf("noWiggle=%v: T(1e-5) = %v, want 1", nw, lp.Transfer(1e-5))
		}
		r1 := lp.Transfer(100) * 100 * 100 / math.Log(100)
		r2 := lp.Transfer(200) * 200 * 200 / math.Log(200)
		if math.Abs(r1/r2-1) > 0.1 {
			t.Errorf("noWiggle=%v: T k²/ln k at 100 and 200 h/Mpc: %v, %v", nw, r1, r2)
		}
		if lp.At(0) != 0 || lp.At(-1) != 0 {
			t.Error("P(k ≤ 0) should be 0")
		}
	}
}

// TestSoundHorizon checks EH98's two sound horizons against each other and
// against Planck. EH98 §4.2 (from memory): the fit eq. 26 follows eq. 6 to
// about 2% over the range of usual ωm, ωb. Planck 2018 VI Table 2 (from
// memory): r_drag = 147.09 ± 0.26 Mpc; EH98's eq. 6 is known to run about
// 2–3% above Boltzmann-code values, so 4% is allowed.
func TestSoundHorizon(t *testing.T) {
	_, lp := planckPower(t, false)
	s, zd := lp.SoundHorizon()
	if r := math.Abs(lp.SoundHorizonApprox()/s - 1); r > 0.02 {
		t.Errorf("EH98 eq. 26 sound horizon %.2f Mpc vs eq. 6 %.2f Mpc (%.2g%%)", lp.SoundHorizonApprox(), s, 100*r)
	}
	if r := math.Abs(s/147.09 - 1); r > 0.04 {
		t.Errorf("sound horizon %.2f Mpc, Planck 2018 r_drag 147.09 Mpc (%.2g%%)", s, 100*r)
	}
	if zd < 900 || zd > 1200 {
		t.Errorf("drag redshift %v outside 900–1200", zd)
	}
}

// TestWiggles checks the acoustic oscillations: the ratio of the full to the
// no-wiggle spectrum oscillates about 1 with peaks spaced by 2π/s (EH98
// eq. 22: the baryon term goes as j0(k s̃) with s̃ → s at k ≫ β_node/s), and
// on large scales, where no oscillation has started, the two agree to 1%.
func TestWiggles(t *testing.T) {
	_, lp := planckPower(t, false)
	_, nw := planckPower(t, true)
	ratio := func(k float64) float64 { return lp.At(k) / nw.At(k) }
	if r := ratio(1e-3); math.Abs(r-1) > 0.01 {
		t.Errorf("P/P_nowiggle at k = 1e-3: %v", r)
	}
	var peaks []float64
	const dk = 1e-4
	for k := 0.04; k < 0.4; k += dk {
		if ratio(k) > ratio(k-dk) && ratio(k) > ratio(k+dk) && ratio(k) > 1 {
			peaks = append(peaks, k)
		}
	}
	if len(peaks) < 4 {
		t.Fatalf("found %d acoustic peaks in 0.04–0.4 h/Mpc, want ≥ 4: %v", len(peaks), peaks)
	}
	s, _ := lp.SoundHorizon()
	want := 2 * math.Pi / (s * lp.h) // h/Mpc
	got := (peaks[len(peaks)-1] - peaks[0]) / float64(len(peaks)-1)
	if math.Abs(got/want-1) > 0.05 {
		t.Errorf("mean peak spacing %.4f h/Mpc, 2π/s = %.4f h/Mpc (peaks %v)", got, want, peaks)
	}
	for k := 0.02; k < 0.5; k += 0.001 {
		if r := ratio(k); r < 0.85 || r > 1.15 {
			t.Errorf("P/P_nowiggle at k = %.3f is %.3f: wiggles larger than 15%%", k, r)
			break
		}
	}
}

// TestNoBaryonLimit checks that with vanishing baryons the full EH98
// transfer function (eqs. 17–20 with fb → 0) and the no-wiggle fit
// (eqs. 28–29) agree: both then describe pure CDM, and EH98 present eq. 29
// as a fit to it (from memory: to within a few percent; 2% is required).
func TestNoBaryonLimit(t *testing.T) {
	p, _ := Preset("planck2018")
	p.OmegaB = 1e-7
	m, err := New(p)
	if err != nil {
		t.Fatal(err)
	}
	lp, err := m.LinearPower(PowerOptions{})
	if err != nil {
		t.Fatal(err)
	}
	nw, _ := m.LinearPower(PowerOptions{NoWiggle: true})
	for k := 1e-4; k < 20; k *= 1.05 {
		if r := math.Abs(lp.Transfer(k)/nw.Transfer(k) - 1); r > 0.02 {
			t.Errorf("k = %.4g: CDM-only T %v vs no-wiggle %v", k, lp.Transfer(k), nw.Transfer(k))
		}
	}
}

// TestPowerNeedsParameters checks the errors for models without Ωb, n_s or σ8.
func TestPowerNeedsParameters(t *testing.T) {
	m, err := New(LambdaCDM(70, 0.3, 0))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := m.LinearPower(PowerOptions{}); err == nil {
		t.Error("no error for a model without Ωb, n_s, σ8")
	}
	p := LambdaCDM(70, 0.3, 0)
	p.OmegaB, p.Ns, p.Sigma8 = 0.4, 0.96, 0.8
	// New itself may refuse Ωb > Ωm; if it does not, LinearPower must.
	if m, err := New(p); err == nil {
		if _, err := m.LinearPower(PowerOptions{}); err == nil {
			t.Error("no error for Ωb > Ωm")
		}
	}
}
