package figures

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/survey"
)

// Inputs are what the figures are drawn from, already loaded. Table is
// required; the others may be nil, and a figure that needs a missing one
// either draws without that layer or says so in its error.
type Inputs struct {
	// Table is the per-galaxy output of filigree run (survey.Read), with the
	// run's provenance in Table.Meta.
	Table *survey.Table
	// Fields is the run's fields cube (survey.ReadCubeFile), or nil.
	Fields *survey.CubeFile
	// Summary is the run's summary (ReadSummary), or nil.
	Summary *Summary
	// Footprint is the survey footprint, or nil.
	Footprint footprint.Footprint
	// Name is a short name of the run for titles (e.g. the output file's
	// base name); "" uses the table name.
	Name string
}

// Summary holds the numbers of the JSON summary that filigree run writes
// with --summary. Absent keys stay zero (NaN for Smooth and Threshold).
type Summary struct {
	Rows            int                `json:"rows"`
	Seconds         float64            `json:"seconds"`
	Smooth          float64            `json:"smooth_mpch"`
	SmoothChoice    string             `json:"smooth_choice"`
	Threshold       float64            `json:"threshold"`
	MeanSeparation  float64            `json:"mean_separation_mpch"`
	GridCells       int                `json:"grid_cells"`
	GridCell        float64            `json:"grid_cell_mpch"`
	FillParticles   int                `json:"fill_particles"`
	VolumeFractions map[string]float64 `json:"volume_fractions"`
	MassFractions   map[string]float64 `json:"mass_fractions"`
	NearEdge        int                `json:"near_edge"`
	NoWeight        int                `json:"no_weight"`
	Duplicates      int                `json:"duplicates"`
	OnHull          int                `json:"on_hull"`
	StepSeconds     map[string]float64 `json:"step_seconds"`
	Caution         string             `json:"caution"`
	Command         string             `json:"command"`
}

// ReadSummary reads the JSON summary of a run. It is an error when the file
// is not JSON or is the summary of another command than run.
func ReadSummary(path string) (*Summary, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	s := &Summary{Smooth: math.NaN(), Threshold: math.NaN()}
	if err := json.Unmarshal(b, s); err != nil {
		return nil, fmt.Errorf("%s: not a filigree summary: %w", path, err)
	}
	if s.Command != "" && s.Command != "run" && s.Command != "demo" {
		return nil, fmt.Errorf("%s: the summary of %q, not of run", path, s.Command)
	}
	return s, nil
}

// runScales returns the run's smoothing radius R (Mpc/h) and threshold
// λ_th: from the summary, else the table's provenance, else the fields
// cube's SMOOTH and THRESH cards; NaN when none records them.
func (in *Inputs) runScales() (r, th float64) {
	r, th = math.NaN(), math.NaN()
	if in.Summary != nil {
		r, th = in.Summary.Smooth, in.Summary.Threshold
	}
	if in.Table != nil {
		if p, ok, err := survey.ProvenanceFromMeta(in.Table.Meta); ok && err == nil {
			for _, kv := range p.Params {
				v, err := strconv.ParseFloat(strings.TrimSpace(kv.Value), 64)
				if err != nil {
					continue
				}
				switch {
				case kv.Key == "smooth_used_mpch" && math.IsNaN(r):
					r = v
				case kv.Key == "threshold_used" && math.IsNaN(th):
					th = v
				}
			}
		}
	}
	if g, err := in.grid(); err == nil && g != nil {
		if math.IsNaN(r) {
			r = g.smooth
		}
		if math.IsNaN(th) {
			th = g.thresh
		}
	}
	return r, th
}

// scaleNote is the line every figure carries: the smoothing scale and
// threshold that the labels depend on.
func (in *Inputs) scaleNote() string {
	r, th := in.runScales()
	rs, ts := "unknown", "unknown"
	if !math.IsNaN(r) {
		rs = fmt.Sprintf("%.3g Mpc/h", r)
	}
	if !math.IsNaN(th) {
		ts = fmt.Sprintf("%g", th)
	}
	return "smoothing R = " + rs + ", threshold λ_th = " + ts
}

// title is the figure title's first part.
func (in *Inputs) title() string {
	if in.Name != "" {
		return in.Name
	}
	if in.Table != nil && in.Table.Name != "" {
		return in.Table.Name
	}
	return "filigree run"
}

// grid is the geometry and the cubes of a fields file.
type grid struct {
	n                 int
	h                 float64    // cell size, Mpc/h
	origin            [3]float64 // corner of cell (0,0,0), Mpc/h
	smooth, thresh    float64
	box               bool // periodic box mode
	delta, web, inSur []float32
}

// grid decodes the fields cube's header cards and finds its cubes; it
// returns nil, nil without a fields file.
func (in *Inputs) grid() (*grid, error) {
	cf := in.Fields
	if cf == nil {
		return nil, nil
	}
	g := &grid{smooth: math.NaN(), thresh: math.NaN()}
	num := func(cards []survey.HeaderCard, key string) (float64, bool) {
		for _, c := range cards {
			if c.Key != key {
				continue
			}
			switch v := c.Value.(type) {
			case float64:
				return v, true
			case int64:
				return float64(v), true
			}
		}
		return 0, false
	}
	var cards []survey.HeaderCard
	cards = append(cards, cf.Primary...)
	for _, c := range cf.Cubes {
		switch strings.ToUpper(c.Name) {
		case "DELTA":
			g.delta = c.Data
			g.n = c.Shape[0]
			cards = append(cards, c.Cards...)
			if c.Shape[1] != g.n || c.Shape[2] != g.n {
				return nil, fmt.Errorf("fields cube DELTA: shape %v is not a cube", c.Shape)
			}
		case "WEB_TIDAL":
			g.web = c.Data
		case "IN_SURVEY":
			g.inSur = c.Data
		}
	}
	if g.delta == nil {
		return nil, fmt.Errorf("fields cube: no DELTA extension")
	}
	var ok [4]bool
	g.h, ok[0] = num(cards, "CELLSIZE")
	g.origin[0], ok[1] = num(cards, "ORIGINX")
	g.origin[1], ok[2] = num(cards, "ORIGINY")
	g.origin[2], ok[3] = num(cards, "ORIGINZ")
	if !(ok[0] && ok[1] && ok[2] && ok[3]) || !(g.h > 0) {
		return nil, fmt.Errorf("fields cube: missing or bad CELLSIZE/ORIGINX/Y/Z cards")
	}
	if v, ok := num(cards, "SMOOTH"); ok {
		g.smooth = v
	}
	if v, ok := num(cards, "THRESH"); ok {
		g.thresh = v
	}
	for _, c := range cards {
		if c.Key == "MODE" {
			if s, ok := c.Value.(string); ok && strings.TrimSpace(s) == "box" {
				g.box = true
			}
		}
	}
	n3 := g.n * g.n * g.n
	if (g.web != nil && len(g.web) != n3) || (g.inSur != nil && len(g.inSur) != n3) {
		return nil, fmt.Errorf("fields cube: extensions of different sizes")
	}
	return g, nil
}

// cell returns the cell index holding point p and the fractional offsets
// from the centre of cell (i,j,k) toward (i+1,j+1,k+1) for trilinear
// interpolation (values sit at cell centres). ok is false outside the grid
// (in box mode, coordinates are wrapped periodically instead).
func (g *grid) locate(p [3]float64) (i [3]int, f [3]float64, ok bool) {
	for a := 0; a < 3; a++ {
		u := (p[a]-g.origin[a])/g.h - 0.5
		if g.box {
			u = math.Mod(u, float64(g.n))
			if u < 0 {
				u += float64(g.n)
			}
		} else if !(u >= 0 && u <= float64(g.n-1)) {
			return i, f, false
		}
		fl := math.Floor(u)
		i[a] = int(fl)
		f[a] = u - fl
		if !g.box && i[a] == g.n-1 {
			i[a], f[a] = g.n-2, 1
		}
	}
	return i, f, true
}

// sample interpolates the cube data trilinearly at p; NaN outside the grid.
func (g *grid) sample(data []float32, p [3]float64) float64 {
	if data == nil {
		return math.NaN()
	}
	i, f, ok := g.locate(p)
	if !ok {
		return math.NaN()
	}
	n := g.n
	var s float64
	for c := 0; c < 8; c++ {
		w := 1.0
		var idx [3]int
		for a := 0; a < 3; a++ {
			if c>>a&1 == 1 {
				w *= f[a]
				idx[a] = (i[a] + 1) % n
			} else {
				w *= 1 - f[a]
				idx[a] = i[a]
			}
		}
		if w == 0 {
			continue
		}
		s += w * float64(data[(idx[0]*n+idx[1])*n+idx[2]])
	}
	return s
}

// floatCol returns the named float column's values (ints converted, nulls
// as NaN), or nil when the table has no such column.
func floatCol(t *survey.Table, name string) []float64 {
	c := t.ColFold(name)
	if c == nil {
		return nil
	}
	if c.Kind == survey.Float64 && c.Null == nil {
		return c.F
	}
	v := make([]float64, c.Len())
	for i := range v {
		x, ok := c.Float(i)
		if !ok {
			x = math.NaN()
		}
		v[i] = x
	}
	return v
}

// classes returns the web code of every row, −1 for a null label or a
// table without web_tidal.
func classes(t *survey.Table) []int8 {
	out := make([]int8, t.Len())
	c := t.ColFold("web_tidal")
	for i := range out {
		out[i] = -1
		if c == nil {
			continue
		}
		if v, ok := c.Float(i); ok && v >= 0 && v <= 3 {
			out[i] = int8(v)
		}
	}
	return out
}

// positions returns the Cartesian positions (Mpc/h) of the rows: cart_x/y/z
// of a survey-mode output, else the table's x,y,z-like columns (box mode).
func positions(t *survey.Table) (x, y, z []float64, err error) {
	if x, y, z = floatCol(t, "cart_x"), floatCol(t, "cart_y"), floatCol(t, "cart_z"); x != nil && y != nil && z != nil {
		return x, y, z, nil
	}
	names := make([]string, len(t.Cols))
	for i, c := range t.Cols {
		names[i] = c.Name
	}
	cols, _, err := survey.GuessXYZ("output table", names, "")
	if err != nil {
		return nil, nil, nil, err
	}
	return floatCol(t, cols[0]), floatCol(t, cols[1]), floatCol(t, cols[2]), nil
}
