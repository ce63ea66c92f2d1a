package cosmo

import (
	"container/heap"
	"math"
)

// glRule is an n-point Gauss–Legendre rule on [-1, 1].
type glRule struct {
	x, w []float64
}

// newGLRule returns the n-point Gauss–Legendre rule, its nodes found by
// Newton's method on the Legendre polynomial P_n evaluated with the
// three-term recurrence (Abramowitz & Stegun 1964, 25.4.29 and 22.7.10).
func newGLRule(n int) glRule {
	r := glRule{x: make([]float64, n), w: make([]float64, n)}
	for i := 0; i < (n+1)/2; i++ {
		// Tricomi's initial guess for the i-th largest root.
		x := math.Cos(math.Pi * (float64(i) + 0.75) / (float64(n) + 0.5))
		var dp float64
		for iter := 0; iter < 100; iter++ {
			p0, p1 := 1.0, x
			for k := 2; k <= n; k++ {
				p0, p1 = p1, ((2*float64(k)-1)*x*p1-(float64(k)-1)*p0)/float64(k)
			}
			dp = float64(n) * (x*p1 - p0) / (x*x - 1)
			dx := p1 / dp
			x -= dx
			if math.Abs(dx) < 1e-17 {
				break
			}
		}
		// Final derivative at the converged root.
		p0, p1 := 1.0, x
		for k := 2; k <= n; k++ {
			p0, p1 = p1, ((2*float64(k)-1)*x*p1-(float64(k)-1)*p0)/float64(k)
		}
		dp = float64(n) * (x*p1 - p0) / (x*x - 1)
		w := 2 / ((1 - x*x) * dp * dp)
		r.x[i], r.w[i] = x, w
		r.x[n-1-i], r.w[n-1-i] = -x, w
	}
	if n%2 == 1 {
		r.x[n/2] = 0
	}
	return r
}

var (
	gl5  = newGLRule(5)
	gl10 = newGLRule(10)
)

// apply returns the rule's approximation to the integral of f over [a, b].
func (r *glRule) apply(f func(float64) float64, a, b float64) float64 {
	c, h := 0.5*(a+b), 0.5*(b-a)
	var s float64
	for i, x := range r.x {
		s += r.w[i] * f(c+h*x)
	}
	return s * h
}

// quadRelTol is the relative tolerance of integrate. The value returned
// for each panel is the sum of 10-point Gauss–Legendre values over its two
// halves, far more accurate than the whole-versus-halves difference used as
// its error estimate (the error of a 10-point rule falls by about 2^20 on
// halving), so results are typically good to a few units of the last place.
const quadRelTol = 1e-13

// maxQuadSplits bounds the number of panel bisections of one integrate call.
const maxQuadSplits = 4000

// epsilon is the float64 machine epsilon, 2^-52.
const epsilon = 0x1p-52

// quadPanel is one panel of integrate: its ends, its halves' values and the
// error estimate |left + right − whole|.
type quadPanel struct {
	a, b, left, right, err float64
}

// newQuadPanel evaluates a panel whose whole-panel value is whole.
func newQuadPanel(f func(float64) float64, a, b, whole float64) quadPanel {
	m := 0.5 * (a + b)
	p := quadPanel{a: a, b: b, left: gl10.apply(f, a, m), right: gl10.apply(f, m, b)}
	p.err = math.Abs(p.left + p.right - whole)
	if p.err <= 64*epsilon*(math.Abs(p.left)+math.Abs(p.right)) || !(m > a && m < b) {
		p.err = 0 // at rounding level: splitting cannot improve it
	}
	return p
}

// integrate returns the integral of f over [a, b] (a ≤ b) by globally
// adaptive 10-point Gauss–Legendre quadrature (in the manner of QUADPACK's
// QAG, Piessens et al. 1983): start from panels no wider than maxPanel, then
// repeatedly bisect the panel with the largest error estimate until the
// estimates sum to at most quadRelTol × ∫|f| or maxQuadSplits bisections
// are spent. Refining by largest error keeps the work small for integrands
// with a narrow spike, such as (1+z)/E near a loitering epoch.
func integrate(f func(float64) float64, a, b, maxPanel float64) float64 {
	if !(b > a) {
		return 0
	}
	n := int(math.Ceil((b - a) / maxPanel))
	if n < 1 {
		n = 1
	}
	w := (b - a) / float64(n)
	h := make(panelHeap, 0, n+8)
	var scale, errSum float64
	for i := 0; i < n; i++ {
		lo, hi := a+float64(i)*w, a+float64(i+1)*w
		if i == n-1 {
			hi = b
		}
		p := newQuadPanel(f, lo, hi, gl10.apply(f, lo, hi))
		scale += math.Abs(p.left) + math.Abs(p.right)
		errSum += p.err
		h = append(h, p)
	}
	tol := quadRelTol * scale
	if errSum > tol {
		heap.Init(&h)
		for split := 0; split < maxQuadSplits && errSum > tol && h[0].err > 0; split++ {
			p := h[0]
			m := 0.5 * (p.a + p.b)
			l := newQuadPanel(f, p.a, m, p.left)
			r := newQuadPanel(f, m, p.b, p.right)
			errSum += l.err + r.err - p.err
			h[0] = l
			heap.Fix(&h, 0)
			heap.Push(&h, r)
		}
	}
	var sum, comp float64 // Neumaier-compensated sum over panels
	for _, p := range h {
		for _, v := range [2]float64{p.left, p.right} {
			t := sum + v
			if math.Abs(sum) >= math.Abs(v) {
				comp += (sum - t) + v
			} else {
				comp += (v - t) + sum
			}
			sum = t
		}
	}
	return sum + comp
}

// panelHeap is a max-heap of panels by error estimate.
type panelHeap []quadPanel

func (h panelHeap) Len() int           { return len(h) }
func (h panelHeap) Less(i, j int) bool { return h[i].err > h[j].err }
func (h panelHeap) Swap(i, j int)      { h[i], h[j] = h[j], h[i] }
func (h *panelHeap) Push(x any)        { *h = append(*h, x.(quadPanel)) }
func (h *panelHeap) Pop() any {
	old := *h
	p := old[len(old)-1]
	*h = old[:len(old)-1]
	return p
}
