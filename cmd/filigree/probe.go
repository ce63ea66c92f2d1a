package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/survey"
)

// Bits of the probe_flags column.
const (
	probeOutside  = 1 // outside the gridded volume or the surveyed volume: no values
	probeNearEdge = 2 // within 2R of the surveyed volume's boundary
)

func init() {
	var (
		cf      cosmoFlags
		cols    columnFlags
		out     string
		xyzCols string
		prefix  string
		force   bool
	)
	register(&command{
		name:    "probe",
		summary: "sample a run's gridded fields at another catalogue's positions",
		usage:   "FIELDS CATALOGUE -o OUT",
		example: `  # Environment of an X-ray cluster list from the fields of a survey run:
  filigree run galaxies.fits --footprint fp.fits -o web.fits --fields fields.fits
  filigree probe fields.fits clusters.csv -o clusters-env.csv

  # A box run's fields at halo positions:
  filigree probe box-fields.fits halos.parquet --xyz-cols px,py,pz -o halos-env.parquet`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVarP(&out, "output", "o", "", "output table: the catalogue's columns plus the sampled fields")
			fs.StringVar(&xyzCols, "xyz-cols", "", "box fields: the x,y,z columns of the catalogue (guessed when absent)")
			fs.StringVar(&prefix, "prefix", "", "prefix for the added field columns (e.g. env_), when the catalogue already has delta, tidal_l*, web_tidal")
			fs.BoolVar(&force, "force", false, "use the given --cosmology even if it differs from the one the fields were made with")
			cols.register(fs)
			cf.register(fs)
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 2 {
				return usagef("probe takes a fields file and a catalogue")
			}
			if out == "" {
				return usagef("probe needs -o OUT")
			}
			return runProbe(a, fs, &cf, &cols, args[0], args[1], out, xyzCols, prefix, force)
		},
	})
}

// probeFields is a fields file as written by run --fields.
type probeFields struct {
	g                 grid.Geometry
	r, threshold      float64
	box               bool
	delta, l1, l2, l3 []float64
	edgeDist          []float64 // survey mode: distance to outside cells
	model             *cosmo.Model
	cosmoKV           [][2]string
	// Lagrangian fields (when the run reconstructed): displacement and
	// deformation eigenvalues on the same grid, functions of q.
	psi        [3][]float64
	deform     [3][]float64
	rL, lThres float64
}

func readProbeFields(path string) (*probeFields, error) {
	cf, err := survey.ReadCubeFile(path)
	if err != nil {
		return nil, err
	}
	pf := &probeFields{}
	byName := map[string]*survey.Cube{}
	for i := range cf.Cubes {
		byName[cf.Cubes[i].Name] = &cf.Cubes[i]
	}
	need := func(name string) (*survey.Cube, error) {
		c, ok := byName[name]
		if !ok {
			return nil, &survey.InputError{File: path, Byte: -1, Column: name, Msg: "expected an image extension " + name + " (a fields file written by filigree run --fields)"}
		}
		return c, nil
	}
	d, err := need("DELTA")
	if err != nil {
		return nil, err
	}
	card := func(key string) (any, error) {
		for _, c := range d.Cards {
			if c.Key == key {
				return c.Value, nil
			}
		}
		return nil, &survey.InputError{File: path, Byte: -1, Column: key, Msg: "the DELTA extension has no " + key + " keyword"}
	}
	numCard := func(key string) (float64, error) {
		v, err := card(key)
		if err != nil {
			return 0, err
		}
		switch x := v.(type) {
		case float64:
			return x, nil
		case int64:
			return float64(x), nil
		}
		return 0, &survey.InputError{File: path, Byte: -1, Column: key, Msg: fmt.Sprintf("expected a number, found %v", v)}
	}
	var n float64
	vals := []*float64{&n, &pf.g.L, &pf.g.Origin[0], &pf.g.Origin[1], &pf.g.Origin[2], &pf.r, &pf.threshold}
	for i, key := range []string{"GRIDN", "BOXSIZE", "ORIGINX", "ORIGINY", "ORIGINZ", "SMOOTH", "THRESH"} {
		if *vals[i], err = numCard(key); err != nil {
			return nil, err
		}
	}
	pf.g.N = int(n)
	if err := pf.g.Validate(); err != nil || d.Shape != [3]int{pf.g.N, pf.g.N, pf.g.N} {
		return nil, &survey.InputError{File: path, Byte: -1, Column: "GRIDN", Msg: fmt.Sprintf("grid of %v cells does not match the cube's shape %v", n, d.Shape)}
	}
	mode, err := card("MODE")
	if err != nil {
		return nil, err
	}
	pf.box = mode == "box"
	f64 := func(c *survey.Cube) []float64 {
		x := make([]float64, len(c.Data))
		for i, v := range c.Data {
			x[i] = float64(v)
		}
		return x
	}
	pf.delta = f64(d)
	for i, dst := range []*[]float64{&pf.l1, &pf.l2, &pf.l3} {
		c, err := need(fmt.Sprintf("TIDAL_L%d", i+1))
		if err != nil {
			return nil, err
		}
		if c.Shape != d.Shape {
			return nil, &survey.InputError{File: path, Byte: -1, Column: c.Name, Msg: "shape differs from DELTA's"}
		}
		*dst = f64(c)
	}
	if _, ok := byName["PSI_X"]; ok {
		for a, name := range []string{"PSI_X", "PSI_Y", "PSI_Z"} {
			c, err := need(name)
			if err != nil {
				return nil, err
			}
			pf.psi[a] = f64(c)
		}
		for a, name := range []string{"DEFORM_L1", "DEFORM_L2", "DEFORM_L3"} {
			c, err := need(name)
			if err != nil {
				return nil, err
			}
			pf.deform[a] = f64(c)
		}
		c := byName["PSI_X"]
		for _, hc := range c.Cards {
			switch hc.Key {
			case "RSMOOTHL":
				pf.rL, _ = hc.Value.(float64)
			case "LTHRESH":
				pf.lThres, _ = hc.Value.(float64)
			}
		}
	}
	if !pf.box {
		c, err := need("IN_SURVEY")
		if err != nil {
			return nil, err
		}
		in := make([]bool, len(c.Data))
		for i, v := range c.Data {
			in[i] = v > 0.5
		}
		pf.edgeDist = grid.DistanceToOutside(in, pf.g)
	}
	prov, ok, err := survey.ProvenanceFromMeta(cf.Meta)
	if err != nil || !ok {
		return nil, &survey.InputError{File: path, Byte: -1, Msg: "no filigree provenance in the primary header: cannot tell the cosmology the fields were made with"}
	}
	for _, kv := range prov.Cosmology {
		pf.cosmoKV = append(pf.cosmoKV, [2]string{kv.Key, kv.Value})
	}
	if !pf.box {
		p, err := cosmo.ParamsFromKeyValues(pf.cosmoKV)
		if err != nil {
			return nil, &survey.InputError{File: path, Byte: -1, Msg: err.Error()}
		}
		if pf.model, err = cosmo.New(p); err != nil {
			return nil, &survey.InputError{File: path, Byte: -1, Msg: err.Error()}
		}
	}
	return pf, nil
}

func runProbe(a *app, fs *pflag.FlagSet, cf *cosmoFlags, cols *columnFlags, fieldsPath, catPath, out, xyzCols, prefix string, force bool) error {
	pf, err := readProbeFields(fieldsPath)
	if err != nil {
		return err
	}
	prov := a.newProvenance(fs)
	if err := prov.AddInput(fieldsPath, -1); err != nil {
		return err
	}
	t, err := survey.Read(catPath, survey.ReadOptions{HDU: cols.hdu})
	if err != nil {
		return err
	}
	var xyz []float64
	if pf.box {
		var have []string
		for _, c := range t.Cols {
			have = append(have, c.Name)
		}
		xc, note, err := survey.GuessXYZ(catPath, have, xyzCols)
		if err != nil {
			return err
		}
		if note != "" {
			a.note("%s", note)
		}
		if xyz, err = survey.ReadXYZ(catPath, survey.ReadOptions{HDU: cols.hdu}, xc); err != nil {
			return err
		}
		if err := prov.AddInput(catPath, int64(t.Len())); err != nil {
			return err
		}
	} else {
		model := pf.model
		if cosmoFlagsGiven(fs) {
			m, err := cf.model()
			if err != nil {
				return err
			}
			if !sameCosmology(m.KeyValues(), pf.cosmoKV) {
				if !force {
					return usagef("the fields were made with the cosmology %s; the flags ask for %s: drop the flags, or add --force", kvText(pf.cosmoKV), kvText(m.KeyValues()))
				}
				a.note("caution: --force: positions use %s, the fields were made with %s", kvText(m.KeyValues()), kvText(pf.cosmoKV))
			}
			model = m
		}
		addCosmology(prov, model)
		mp, notes, err := survey.Guess(t, cols.mapping())
		if err != nil {
			return fmt.Errorf("%s: %w", catPath, err)
		}
		for _, n := range notes {
			a.note("%s", n)
		}
		mp.ID, mp.Weight = "", ""
		pos, rep, err := survey.Validate(t, mp, cols.validateOptions(catPath))
		if err != nil {
			return err
		}
		if rep.Dropped > 0 {
			a.note("dropped %d bad rows", rep.Dropped)
			t = t.Select(pos.Row)
		}
		if err := prov.AddInput(catPath, int64(rep.Rows)); err != nil {
			return err
		}
		dist := make([]float64, pos.Len())
		if err := model.ComovingDistancesMpch(dist, pos.Z); err != nil {
			return err
		}
		xyz = make([]float64, 3*pos.Len())
		for i := range dist {
			u := edge.UnitVector(pos.RA[i], pos.Dec[i])
			for ax := 0; ax < 3; ax++ {
				xyz[3*i+ax] = dist[i] * u[ax]
			}
		}
	}
	n := len(xyz) / 3
	res := probeSample(pf, xyz)
	outside, near := 0, 0
	for _, f := range res.flags {
		if f&probeOutside != 0 {
			outside++
		}
		if f&probeNearEdge != 0 {
			near++
		}
	}
	var newCols []*survey.Column
	add := func(name, desc string, v []float64) { newCols = append(newCols, floatColumn(prefix+name, "", desc, v)) }
	add("delta", fmt.Sprintf("density contrast smoothed at R = %g Mpc/h, trilinear interpolation of the fields cube", pf.r), res.delta)
	add("tidal_l1", "tidal eigenvalue 1 (descending), trilinear interpolation", res.l[0])
	add("tidal_l2", "tidal eigenvalue 2, trilinear interpolation", res.l[1])
	add("tidal_l3", "tidal eigenvalue 3, trilinear interpolation", res.l[2])
	wc := survey.NewColumn(prefix+"web_tidal", survey.Int64, 0)
	wc.Desc = fmt.Sprintf("web code recomputed from the interpolated eigenvalues at λ_th = %g: 0 void, 1 sheet, 2 filament, 3 knot", pf.threshold)
	wc.I = res.code
	for i := range res.code {
		if res.flags[i]&probeOutside != 0 {
			wc.SetNull(i)
		}
	}
	newCols = append(newCols, wc)
	if res.lagr != nil {
		for ax, name := range []string{"x", "y", "z"} {
			add("lagr_"+name, "Lagrangian position q solving q = x − Ψ(q) on the run's displacement grid (Mpc/h)", strided(res.lagr, ax))
		}
		for k := range res.dl {
			add(fmt.Sprintf("deform_l%d", k+1), "deformation-tensor eigenvalue at q (trilinear interpolation)", res.dl[k])
		}
		lc := survey.NewColumn(prefix+"web_lagr", survey.Int64, 0)
		lc.Desc = fmt.Sprintf("Lagrangian web code recomputed from the interpolated deformation eigenvalues at λ_L = %g", pf.lThres)
		lc.I = res.lcode
		for i := range res.lcode {
			if res.flags[i]&probeOutside != 0 {
				lc.SetNull(i)
			}
		}
		newCols = append(newCols, lc)
	}
	fc := survey.NewColumn("probe_flags", survey.Int64, 0)
	fc.Desc = "bits: 1 outside the reconstructed volume (no values), 2 within 2R of its boundary"
	fc.I = res.flags
	newCols = append(newCols, fc)
	if err := addColumns(t, newCols, "use --prefix"); err != nil {
		return fmt.Errorf("%s: %w", catPath, err)
	}
	t.Meta = mergeMeta(t.Meta, prov.Meta())
	t.Meta.Set("filigree.caution", fmt.Sprintf("web labels depend on the smoothing R = %g Mpc/h and the threshold λ_th = %g of the run that made %s, and on its tracer density", pf.r, pf.threshold, fieldsPath))
	if err := survey.Write(out, t, survey.WriteOptions{}); err != nil {
		return err
	}
	a.note("sampled %d positions (trilinear interpolation; the web code is recomputed from the interpolated eigenvalues): %d outside the reconstructed volume (null), %d within 2R = %g Mpc/h of its edge (probe_flags 2); wrote %s",
		n, outside, near, 2*pf.r, out)
	a.summary.SetProvenance(prov)
	a.summary.Set("rows", n)
	a.summary.Set("outside", outside)
	a.summary.Set("near_edge", near)
	return nil
}

type probeResult struct {
	delta []float64
	l     [3][]float64
	code  []int64
	flags []int64
	// Lagrangian fields, when the fields file has them.
	lagr  []float64
	dl    [3][]float64
	lcode []int64
}

// probeSample interpolates the fields at the positions. In survey mode a
// position is outside when it is off the grid or its nearest cell is
// outside the surveyed volume, and near the edge when the distance from
// the nearest cell centre to the outside is below 2R.
func probeSample(pf *probeFields, xyz []float64) probeResult {
	n := len(xyz) / 3
	g := pf.g
	res := probeResult{delta: make([]float64, n), code: make([]int64, n), flags: make([]int64, n)}
	for k := range res.l {
		res.l[k] = make([]float64, n)
	}
	grid.InterpolateTrilinear(res.delta, pf.delta, g, xyz)
	for k, f := range [][]float64{pf.l1, pf.l2, pf.l3} {
		grid.InterpolateTrilinear(res.l[k], f, g, xyz)
	}
	h := g.H()
	for i := 0; i < n; i++ {
		if !pf.box {
			var idx [3]int
			off := false
			for ax := 0; ax < 3; ax++ {
				u := (xyz[3*i+ax] - g.Origin[ax]) / h
				if !(u >= 0 && u < float64(g.N)) {
					off = true
					break
				}
				idx[ax] = int(u)
			}
			if off || pf.edgeDist[g.Index(idx[0], idx[1], idx[2])] == 0 {
				res.flags[i] = probeOutside
				res.delta[i], res.l[0][i], res.l[1][i], res.l[2][i] = math.NaN(), math.NaN(), math.NaN(), math.NaN()
				continue
			}
			if pf.edgeDist[g.Index(idx[0], idx[1], idx[2])] < 2*pf.r {
				res.flags[i] = probeNearEdge
			}
		}
		c := int64(0)
		for k := range res.l {
			if res.l[k][i] > pf.threshold {
				c++
			}
		}
		res.code[i] = c
	}
	if pf.psi[0] != nil {
		probeLagrangian(pf, xyz, &res)
	}
	return res
}

// probeLagrangian finds each position's Lagrangian position by the fixed
// point q = x − Ψ(q) on the displacement grid (eight iterations from q = x;
// it converges where the map is not folded, as for linear displacements)
// and samples the deformation eigenvalues there.
func probeLagrangian(pf *probeFields, xyz []float64, res *probeResult) {
	n := len(xyz) / 3
	g := pf.g
	q := append([]float64(nil), xyz...)
	comp := make([]float64, n)
	for it := 0; it < 8; it++ {
		next := append([]float64(nil), xyz...)
		for a := 0; a < 3; a++ {
			grid.InterpolateTrilinear(comp, pf.psi[a], g, q)
			for i := 0; i < n; i++ {
				next[3*i+a] -= comp[i]
			}
		}
		q = next
	}
	res.lagr = q
	for k := 0; k < 3; k++ {
		res.dl[k] = make([]float64, n)
		grid.InterpolateTrilinear(res.dl[k], pf.deform[k], g, q)
	}
	res.lcode = make([]int64, n)
	for i := 0; i < n; i++ {
		if res.flags[i]&probeOutside != 0 {
			for a := 0; a < 3; a++ {
				res.lagr[3*i+a] = math.NaN()
				res.dl[a][i] = math.NaN()
			}
			continue
		}
		for k := 0; k < 3; k++ {
			if res.dl[k][i] > pf.lThres {
				res.lcode[i]++
			}
		}
	}
}

// cosmoFlagsGiven reports whether any cosmology flag was set.
func cosmoFlagsGiven(fs *pflag.FlagSet) bool {
	for _, n := range []string{"cosmology", "h0", "omega-m", "omega-k", "omega-l", "w0", "wa", "tcmb", "neff"} {
		if fs.Changed(n) {
			return true
		}
	}
	return false
}

// sameCosmology compares the background parameters of two records
// (names aside) to 1e-12 relative.
func sameCosmology(a, b [][2]string) bool {
	mb := map[string]string{}
	for _, kv := range b {
		mb[kv[0]] = kv[1]
	}
	for _, kv := range a {
		switch kv[0] {
		case "name", "input", "Omega_b", "n_s", "sigma8":
			continue
		}
		x, err1 := strconv.ParseFloat(kv[1], 64)
		y, err2 := strconv.ParseFloat(mb[kv[0]], 64)
		if err1 != nil || err2 != nil || math.Abs(x-y) > 1e-12*math.Max(1, math.Abs(x)) {
			return false
		}
	}
	return true
}

func kvText(kv [][2]string) string {
	var s []string
	for _, p := range kv {
		switch p[0] {
		case "name", "H0", "Omega_m", "Omega_k", "w0", "wa":
			s = append(s, p[0]+"="+p[1])
		}
	}
	return strings.Join(s, " ")
}
