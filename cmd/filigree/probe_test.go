package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/filigree-survey/filigree/survey"
)

// TestProbeAnalyticField is the check that a field of known
// analytic form is probed exactly: a box-mode fields cube holds δ = 0.01x +
// 0.02y − 0.03z and eigenvalues (x/100, 0, −x/100) at the cell centres;
// probing the centres returns them to float32 rounding, and so does probing
// points between centres (trilinear interpolation is exact for linear
// fields), and the web code counts the eigenvalues above the cube's
// threshold.
func TestProbeAnalyticField(t *testing.T) {
	dir := t.TempDir()
	const n, L = 10, 100.0
	h := L / n
	shape := [3]int{n, n, n}
	data := map[string][]float32{}
	for _, k := range []string{"DELTA", "TIDAL_L1", "TIDAL_L2", "TIDAL_L3", "WEB_TIDAL"} {
		data[k] = make([]float32, n*n*n)
	}
	delta := func(x, y, z float64) float64 { return 0.01*x + 0.02*y - 0.03*z }
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k < n; k++ {
				x, y, z := (float64(i)+0.5)*h, (float64(j)+0.5)*h, (float64(k)+0.5)*h
				c := (i*n+j)*n + k
				data["DELTA"][c] = float32(delta(x, y, z))
				data["TIDAL_L1"][c] = float32(x / 100)
				data["TIDAL_L3"][c] = float32(-x / 100)
			}
		}
	}
	cards := []survey.HeaderCard{
		{Key: "GRIDN", Value: int64(n)}, {Key: "BOXSIZE", Value: L}, {Key: "CELLSIZE", Value: h},
		{Key: "ORIGINX", Value: 0.0}, {Key: "ORIGINY", Value: 0.0}, {Key: "ORIGINZ", Value: 0.0},
		{Key: "SMOOTH", Value: 3.0}, {Key: "THRESH", Value: 0.3}, {Key: "MODE", Value: "box"},
	}
	var cubes []survey.Cube
	for _, k := range []string{"DELTA", "TIDAL_L1", "TIDAL_L2", "TIDAL_L3", "WEB_TIDAL"} {
		cubes = append(cubes, survey.Cube{Name: k, Shape: shape, Data: data[k], Cards: cards})
	}
	prov := &survey.Provenance{Version: "test", Command: []string{"filigree", "run"}, Time: time.Unix(0, 0).UTC()}
	fields := filepath.Join(dir, "f.fits")
	if err := survey.WriteCubes(fields, cubes, cards, prov.Meta()); err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	b.WriteString("x,y,z\n")
	var pts [][3]float64
	for _, p := range [][3]float64{{5, 5, 5}, {45, 75, 15}, {95, 35, 65}, {52.5, 37.1, 61.9}, {20.3, 40.7, 80.2}} {
		pts = append(pts, p)
		fmt.Fprintf(&b, "%v,%v,%v\n", p[0], p[1], p[2])
	}
	cat := filepath.Join(dir, "c.csv")
	os.WriteFile(cat, []byte(b.String()), 0o644)
	out := filepath.Join(dir, "o.csv")
	if code, _, e := run(t, "probe", fields, cat, "-o", out, "--quiet"); code != exitOK {
		t.Fatalf("probe: %s", e)
	}
	tab, err := survey.Read(out, survey.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for i, p := range pts {
		want := []float64{delta(p[0], p[1], p[2]), p[0] / 100, 0, -p[0] / 100}
		for k, name := range []string{"delta", "tidal_l1", "tidal_l2", "tidal_l3"} {
			if got := tab.Col(name).F[i]; math.Abs(got-want[k]) > 1e-6 {
				t.Errorf("point %v: %s = %v, want %v", p, name, got, want[k])
			}
		}
		code := int64(0)
		if p[0]/100 > 0.3 {
			code = 1
		}
		if got := tab.Col("web_tidal").I[i]; got != code {
			t.Errorf("point %v: web_tidal %d, want %d", p, got, code)
		}
	}
}
