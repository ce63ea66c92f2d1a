package selection

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/survey"
)

// NBar is the mean comoving number density of a survey as a function of
// redshift, constant within each redshift bin.
type NBar struct {
	// Edges are the redshift bin edges, increasing.
	Edges []float64
	// DistEdges are the line-of-sight comoving distances of Edges in Mpc/h.
	DistEdges []float64
	// Density is the mean comoving number density in each bin in (h/Mpc)³:
	// Count[i] / Volume[i].
	Density []float64
	// Volume is the comoving volume of each bin's shell over SolidAngle, in
	// (Mpc/h)³, from cosmo.Model.ComovingVolume (exact shell volumes).
	Volume []float64
	// Count is the number of galaxies in each bin (for tables of densities,
	// Density × Volume).
	Count []float64
	// SolidAngle is the effective (completeness-weighted) solid angle of
	// the survey in steradians.
	SolidAngle float64
}

// NewNBar converts the histogram nz into a comoving number density with the
// cosmology m over an effective solid angle of solidAngleSr steradians
// (the completeness-weighted area, e.g. region.EffectiveArea()/SqDegPerSr):
// n̄_i = N_i / V_i with V_i = V_C(z_i, z_{i+1}) · h³ the exact comoving
// volume of the bin's shell (Hogg 1999, eq. 29, through
// cosmo.Model.ComovingVolume), so that Σ n̄_i V_i = Σ N_i exactly. (The
// differential form dN/dz / (dV_C/dz dΩ · Ω), with dV_C/dz dΩ = D_H D_M²/E
// per steradian, Hogg eq. 28, is its limit for narrow bins.) It returns an
// error for a solid angle outside (0, 4π] or redshifts outside cosmo's
// domain.
func NewNBar(nz *NZ, m *cosmo.Model, solidAngleSr float64) (*NBar, error) {
	if nz == nil || len(nz.Edges) < 2 || len(nz.Counts) != len(nz.Edges)-1 {
		return nil, errors.New("selection: NewNBar: malformed NZ")
	}
	return newNBar(nz.Edges, nz.Counts, nil, m, solidAngleSr)
}

// newNBar builds an NBar from counts, or from densities when counts is nil.
func newNBar(edges, counts, density []float64, m *cosmo.Model, sr float64) (*NBar, error) {
	if !(sr > 0 && sr <= 4*math.Pi) {
		return nil, fmt.Errorf("selection: solid angle %v sr, expected (0, 4π]", sr)
	}
	nb := len(edges) - 1
	n := &NBar{Edges: append([]float64(nil), edges...), DistEdges: make([]float64, nb+1),
		Density: make([]float64, nb), Volume: make([]float64, nb), Count: make([]float64, nb), SolidAngle: sr}
	if err := m.ComovingDistancesMpch(n.DistEdges, n.Edges); err != nil {
		return nil, fmt.Errorf("selection: %w", err)
	}
	h3 := math.Pow(m.LittleH(), 3)
	for i := 0; i < nb; i++ {
		v := m.ComovingVolume(edges[i], edges[i+1], sr) * h3
		if !(v > 0) {
			return nil, fmt.Errorf("selection: bin [%v, %v] has comoving volume %v", edges[i], edges[i+1], v)
		}
		n.Volume[i] = v
		if counts != nil {
			n.Count[i] = counts[i]
			n.Density[i] = counts[i] / v
		} else {
			n.Density[i] = density[i]
			n.Count[i] = density[i] * v
		}
	}
	return n, nil
}

// Bin returns the index of the bin holding redshift z, or −1 when z is
// outside [Edges[0], Edges[len−1]] or NaN. Bins are half-open [lo, hi) except
// the last, which is closed.
func (n *NBar) Bin(z float64) int {
	e := n.Edges
	if !(z >= e[0] && z <= e[len(e)-1]) {
		return -1
	}
	i := sort.SearchFloat64s(e, z) // first edge ≥ z
	if i < len(e) && e[i] == z {
		return min(i, len(e)-2)
	}
	return i - 1
}

// At returns the mean density n̄ at redshift z in (h/Mpc)³, 0 outside the
// bins.
func (n *NBar) At(z float64) float64 {
	if i := n.Bin(z); i >= 0 {
		return n.Density[i]
	}
	return 0
}

// AtDistance returns the mean density n̄ in (h/Mpc)³ at line-of-sight
// comoving distance r in Mpc/h, 0 outside [DistEdges[0],
// DistEdges[len−1]] or for NaN; bins are half-open as in Bin.
func (n *NBar) AtDistance(r float64) float64 {
	e := n.DistEdges
	if !(r >= e[0] && r <= e[len(e)-1]) {
		return 0
	}
	i := sort.SearchFloat64s(e, r)
	if i < len(e) && e[i] == r {
		return n.Density[min(i, len(e)-2)]
	}
	return n.Density[i-1]
}

// TotalVolume returns Σ Volume, the comoving volume of the survey over the
// effective solid angle between the first and last edge, in (Mpc/h)³.
func (n *NBar) TotalVolume() float64 {
	s := 0.0
	for _, v := range n.Volume {
		s += v
	}
	return s
}

// TableKind says what the second column of an n(z) table holds.
type TableKind uint8

// The kinds of n(z) table.
const (
	// CountsPerBin: the number of galaxies in the bin centred at z.
	CountsPerBin TableKind = iota + 1
	// DensityMpch3: the comoving number density in (h/Mpc)³.
	DensityMpch3
)

// NBarFromTable reads an n(z) table: column zCol holds bin centres in
// redshift (strictly increasing, at least two rows) and column nCol either
// galaxy counts per bin or comoving densities in (h/Mpc)³, as kind says.
// Bin edges lie halfway between consecutive centres; the outer edges are
// half the neighbouring spacing beyond the first and last centres, the
// first clamped at z = 0. Counts are converted as NewNBar does, over
// solidAngleSr steradians; densities are taken as they are (and
// solidAngleSr only sets Volume and Count). file names the table in errors,
// which are *survey.InputError values giving the row and column of the
// first bad value.
func NBarFromTable(file string, t *survey.Table, zCol, nCol string, kind TableKind, m *cosmo.Model, solidAngleSr float64) (*NBar, error) {
	bad := func(row int, col, msg string) error {
		return &survey.InputError{File: file, Row: int64(row), Column: col, Byte: -1, Msg: msg}
	}
	if kind != CountsPerBin && kind != DensityMpch3 {
		return nil, fmt.Errorf("selection: NBarFromTable: unknown table kind %d", kind)
	}
	zc, nc := t.Col(zCol), t.Col(nCol)
	switch {
	case zc == nil:
		return nil, bad(0, zCol, "no such column")
	case nc == nil:
		return nil, bad(0, nCol, "no such column")
	case t.Len() < 2:
		return nil, bad(0, "", fmt.Sprintf("n(z) table needs at least 2 rows, has %d", t.Len()))
	}
	rows := t.Len()
	z, v := make([]float64, rows), make([]float64, rows)
	for i := 0; i < rows; i++ {
		var ok bool
		if z[i], ok = zc.Float(i); !ok || !(z[i] >= 0 && z[i] <= cosmo.MaxRedshift) {
			return nil, bad(i+1, zCol, fmt.Sprintf("expected a redshift in [0, %g]", float64(cosmo.MaxRedshift)))
		}
		if i > 0 && !(z[i] > z[i-1]) {
			return nil, bad(i+1, zCol, fmt.Sprintf("redshifts must increase strictly (previous %v, here %v)", z[i-1], z[i]))
		}
		if v[i], ok = nc.Float(i); !ok || !(v[i] >= 0) || math.IsInf(v[i], 0) {
			return nil, bad(i+1, nCol, "expected a finite value ≥ 0")
		}
	}
	edges := make([]float64, rows+1)
	for i := 1; i < rows; i++ {
		edges[i] = (z[i-1] + z[i]) / 2
	}
	edges[0] = math.Max(0, z[0]-(z[1]-z[0])/2)
	edges[rows] = math.Min(cosmo.MaxRedshift, z[rows-1]+(z[rows-1]-z[rows-2])/2)
	if !(edges[1] > edges[0]) {
		return nil, bad(1, zCol, "first bin is empty (centre at z = 0)")
	}
	var nb *NBar
	var err error
	if kind == CountsPerBin {
		nb, err = newNBar(edges, v, nil, m, solidAngleSr)
	} else {
		nb, err = newNBar(edges, nil, v, m, solidAngleSr)
	}
	if err != nil {
		return nil, &survey.InputError{File: file, Byte: -1, Msg: "converting n(z)", Err: err}
	}
	return nb, nil
}
