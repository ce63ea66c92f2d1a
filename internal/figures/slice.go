package figures

import (
	"fmt"
	"image"
	"math"

	"gonum.org/v1/plot/vg"
)

var axisNames = [3]string{"x", "y", "z"}

// Slice draws a Cartesian slab through the fields cube: the smoothed
// log10(1+δ) averaged over the grid planes whose cell centres lie within
// the slab (at least the one nearest its centre), as an image in Mpc/h with
// cells outside the survey grey and the survey's edges outlined, and the
// galaxies whose position along the axis lies in the slab, coloured by web
// class. The view is the part of the plane that holds the survey, with a
// margin. Positions are cart_x/y/z (survey mode) or the table's x,y,z-like
// columns (box mode). Without a fields cube only the galaxies are drawn.
func Slice(in Inputs, opt Options) (*Figure, error) {
	t := in.Table
	px, py, pz, err := positions(t)
	if err != nil {
		return nil, fmt.Errorf("slice: %w", err)
	}
	pos := [3][]float64{px, py, pz}
	g, err := in.grid()
	if err != nil {
		return nil, err
	}
	ax, err := ParseAxis(opt.Axis)
	if err != nil {
		return nil, fmt.Errorf("slice: %w", err)
	}
	u, v := (ax+1)%3, (ax+2)%3
	if u > v {
		u, v = v, u
	}
	c := opt.SlabCentre
	if !opt.HasCentre || math.IsNaN(c) {
		c = median(pos[ax])
	}
	th := opt.SlabThickness
	if !opt.HasThickness || !(th > 0) {
		r, _ := in.runScales()
		switch {
		case r > 0:
			th = 2 * r
		default:
			th = 10
		}
		if g != nil {
			th = math.Max(th, 2*g.h)
		}
	}
	var sel []int
	for i := range pos[ax] {
		if math.Abs(pos[ax][i]-c) <= th/2 && !math.IsNaN(pos[u][i]) && !math.IsNaN(pos[v][i]) {
			sel = append(sel, i)
		}
	}
	f := &Figure{Width: 8.5 * vg.Inch, Height: 7 * vg.Inch}
	p := newPlot(fmt.Sprintf("%s: slice %s = %.1f ± %.1f Mpc/h (%d galaxies)\n%s", in.title(), axisNames[ax], c, th/2, len(sel), in.scaleNote()),
		axisNames[u]+" (Mpc/h)", axisNames[v]+" (Mpc/h)")
	var x0, x1, y0, y1 float64
	if g != nil {
		n := g.n
		// The planes of cells whose centres are in the slab.
		k0 := int(math.Ceil((c-th/2-g.origin[ax])/g.h - 0.5))
		k1 := int(math.Floor((c+th/2-g.origin[ax])/g.h - 0.5))
		if k1 < k0 {
			k0 = int(math.Floor((c - g.origin[ax]) / g.h))
			k1 = k0
		}
		k0, k1 = max(k0, 0), min(k1, n-1)
		if k0 > k1 {
			return nil, fmt.Errorf("slice: %s = %g Mpc/h lies outside the fields grid (%g to %g Mpc/h)",
				axisNames[ax], c, g.origin[ax], g.origin[ax]+float64(n)*g.h)
		}
		idx := func(a, b, k int) int {
			var ijk [3]int
			ijk[u], ijk[v], ijk[ax] = a, b, k
			return (ijk[0]*n+ijk[1])*n + ijk[2]
		}
		// Slab averages of δ and of the survey mask on the n × n plane.
		avg := make([]float64, n*n)
		in := make([]bool, n*n)
		a0, a1, b0, b1 := n, -1, n, -1
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				var sd, si float64
				for k := k0; k <= k1; k++ {
					sd += float64(g.delta[idx(a, b, k)])
					if g.inSur != nil {
						si += float64(g.inSur[idx(a, b, k)])
					} else {
						si++
					}
				}
				m := float64(k1 - k0 + 1)
				avg[a*n+b] = sd / m
				if si/m >= 0.5 && !math.IsNaN(sd) {
					in[a*n+b] = true
					a0, a1, b0, b1 = min(a0, a), max(a1, a), min(b0, b), max(b1, b)
				}
			}
		}
		// Show the part of the plane that holds the survey, with a margin
		// of a tenth of its size (the whole plane when none of it does).
		if a1 < 0 {
			a0, a1, b0, b1 = 0, n-1, 0, n-1
		} else {
			m := max(2, max(a1-a0, b1-b0)/10)
			a0, a1, b0, b1 = max(0, a0-m), min(n-1, a1+m), max(0, b0-m), min(n-1, b1+m)
		}
		na, nb := a1-a0+1, b1-b0+1
		img := image.NewNRGBA(image.Rect(0, 0, na, nb))
		inside := make([]int8, na*nb)
		for a := a0; a <= a1; a++ {
			for b := b0; b <= b1; b++ {
				// Image row 0 is the top: v increases upward.
				row, col := b1-b, a-a0
				if in[a*n+b] {
					inside[row*na+col] = 1
					img.SetNRGBA(col, row, DensityColor(densityScale(avg[a*n+b])))
				} else {
					img.SetNRGBA(col, row, OutsideColor)
				}
			}
		}
		if g.inSur != nil {
			outline(img, inside, na, nb)
		}
		x0, y0 = g.origin[u]+float64(a0)*g.h, g.origin[v]+float64(b0)*g.h
		x1, y1 = g.origin[u]+float64(a1+1)*g.h, g.origin[v]+float64(b1+1)*g.h
		p.Add(rasterImage(img, x0, y0, x1, y1))
		f.bar = colourBar(densLo, densHi, "log10(1 + δ), smoothed")
	} else {
		x0, x1, y0, y1 = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
		for _, i := range sel {
			x0, x1 = math.Min(x0, pos[u][i]), math.Max(x1, pos[u][i])
			y0, y1 = math.Min(y0, pos[v][i]), math.Max(y1, pos[v][i])
		}
		if len(sel) == 0 {
			return nil, fmt.Errorf("slice: no galaxies with %s within %g Mpc/h of %g and no fields cube", axisNames[ax], th/2, c)
		}
	}
	sel, k := thin(sel, opt.maxPoints())
	codes := classes(t)
	gx := &galaxies{radius: markerRadius(len(sel), 2)}
	hasNull := false
	for _, i := range sel {
		gx.x, gx.y, gx.code = append(gx.x, pos[u][i]), append(gx.y, pos[v][i]), append(gx.code, codes[i])
		hasNull = hasNull || codes[i] < 0
	}
	p.Add(gx)
	f.main = p
	f.legend = classLegend(hasNull)
	f.equal = &[4]float64{x0, x1, y0, y1}
	if k > 1 {
		f.note = fmt.Sprintf("1 in %d galaxies drawn", k)
	}
	if g == nil {
		f.note += "\nno fields cube: galaxies only"
	}
	return f, nil
}
