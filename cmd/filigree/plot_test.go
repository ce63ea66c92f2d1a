package main

import (
	"bytes"
	"encoding/base64"
	"encoding/xml"
	"image"
	_ "image/png"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/survey"
)

// TestPlotAndReport makes a small survey run (mock, then run with a
// footprint, fields cube and summary) and checks that every --kind writes
// a PNG that image.Decode reads and an SVG that parses as XML, that the
// report is one well-formed page whose every <img> is an embedded PNG
// (data: URI) and that refers to nothing over the network, and that a box
// run draws its slice but refuses the sky figures cleanly.
func TestPlotAndReport(t *testing.T) {
	dir := t.TempDir()
	reg := filepath.Join(dir, "fp.reg")
	if err := os.WriteFile(reg, []byte("include box ra=150,190 dec=0,25\nexclude cap centre=170,12 radius=2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	mock := filepath.Join(dir, "m.fits")
	if code, _, e := run(t, "mock", "--footprint", reg, "--grid", "48", "--box", "300", "--zmax", "0.07",
		"--nz-cap", "0.004", "--seed", "5", "-o", mock, "--quiet"); code != exitOK {
		t.Fatalf("mock: %s", e)
	}
	out := filepath.Join(dir, "r.fits")
	sum := filepath.Join(dir, "s.json")
	fields := filepath.Join(dir, "f.fits")
	if code, _, e := run(t, "run", mock, "--footprint", reg, "-o", out, "--fields", fields, "--summary", sum,
		"--max-grid", "64", "--quiet"); code != exitOK {
		t.Fatalf("run: %s", e)
	}
	// The default reconstruction is transport: galaxies whose Laguerre
	// cell borders the fill carry flag bit 32; in this small survey about
	// half do (it is a thin slab), but not all.
	if tab, err := survey.Read(out, survey.ReadOptions{}); err != nil {
		t.Fatal(err)
	} else if fl := tab.Col("flags"); fl == nil || tab.Col("web_lagr") == nil {
		t.Fatal("run output lacks flags or web_lagr")
	} else {
		edge := 0
		for _, v := range fl.I {
			if v&32 != 0 {
				edge++
			}
		}
		if edge == 0 || edge > len(fl.I)*9/10 {
			t.Errorf("%d of %d galaxies flagged as bordering the fill, want some but not nearly all", edge, len(fl.I))
		}
	}
	inputs := []string{"--fields", fields, "--footprint", reg, "--run-summary", sum}
	for _, kind := range []string{"wedge", "slice", "sky", "nz", "fractions", "density"} {
		for _, ext := range []string{"png", "svg"} {
			fig := filepath.Join(dir, kind+"."+ext)
			args := append([]string{"plot", out, "--kind", kind, "-o", fig, "--quiet"}, inputs...)
			if kind == "slice" {
				args = append(args, "--axis", "x", "--slab-thickness", "30")
			}
			if code, _, e := run(t, args...); code != exitOK {
				t.Fatalf("plot --kind %s -o %s: exit %d: %s", kind, fig, code, e)
			}
			b, err := os.ReadFile(fig)
			if err != nil {
				t.Fatal(err)
			}
			checkFigure(t, fig, ext, b)
		}
	}
	// Without the optional inputs the figures still draw (galaxies only;
	// fractions recounted from the table).
	for _, kind := range []string{"wedge", "slice", "sky", "fractions"} {
		fig := filepath.Join(dir, "bare-"+kind+".png")
		if code, _, e := run(t, "plot", out, "--kind", kind, "-o", fig, "--quiet"); code != exitOK {
			t.Fatalf("plot --kind %s without inputs: %s", kind, e)
		}
		b, _ := os.ReadFile(fig)
		checkFigure(t, fig, "png", b)
	}
	// PDF on request.
	pdf := filepath.Join(dir, "nz.pdf")
	if code, _, e := run(t, "plot", out, "--kind", "nz", "-o", pdf, "--quiet"); code != exitOK {
		t.Fatalf("plot pdf: %s", e)
	}
	if b, _ := os.ReadFile(pdf); !bytes.HasPrefix(b, []byte("%PDF-")) {
		t.Errorf("%s is not a PDF", pdf)
	}
	// Usage errors.
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"plot", out, "-o", filepath.Join(dir, "x.png")}, "--kind"},
		{[]string{"plot", out, "--kind", "pie", "-o", filepath.Join(dir, "x.png")}, "pie"},
		{[]string{"plot", out, "--kind", "nz", "-o", filepath.Join(dir, "x.gif")}, "gif"},
		{[]string{"plot", out, "--kind", "slice", "--axis", "w", "-o", filepath.Join(dir, "x.png")}, "--axis"},
		{[]string{"report", out, "-o", filepath.Join(dir, "x.txt")}, "HTML"},
	} {
		if code, _, e := run(t, tc.args...); code != exitUsage || !strings.Contains(e, tc.want) {
			t.Errorf("%q: exit %d, stderr %q; want usage error mentioning %q", tc.args, code, e, tc.want)
		}
	}

	// The report.
	html := filepath.Join(dir, "report.html")
	if code, _, e := run(t, append([]string{"report", out, "-o", html, "--quiet"}, inputs...)...); code != exitOK {
		t.Fatalf("report: %s", e)
	}
	b, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	imgs := checkReport(t, b)
	if imgs != 6 {
		t.Errorf("report has %d figures, want 6", imgs)
	}
	for _, want := range []string{"smoothing R", "threshold", "near_edge", "volume fraction", "mass fraction", "Provenance", "tidal field"} {
		if !bytes.Contains(b, []byte(want)) {
			t.Errorf("report lacks %q", want)
		}
	}

	// A periodic box: the slice draws, the sky figures say why not.
	box := filepath.Join(dir, "b.csv")
	if code, _, e := run(t, "mock", "--box-only", "--grid", "32", "--box", "200", "--density", "0.003", "-o", box, "--quiet"); code != exitOK {
		t.Fatalf("mock box: %s", e)
	}
	bout := filepath.Join(dir, "rb.fits")
	bfields := filepath.Join(dir, "bf.fits")
	if code, _, e := run(t, "run", box, "--box", "200", "--xyz-cols", "x,y,z", "-o", bout, "--fields", bfields, "--max-grid", "32", "--quiet"); code != exitOK {
		t.Fatalf("run --box: %s", e)
	}
	fig := filepath.Join(dir, "box-slice.svg")
	if code, _, e := run(t, "plot", bout, "--fields", bfields, "--kind", "slice", "--slab-centre", "100", "-o", fig, "--quiet"); code != exitOK {
		t.Fatalf("box slice: %s", e)
	}
	bs, _ := os.ReadFile(fig)
	checkFigure(t, fig, "svg", bs)
	if code, _, e := run(t, "plot", bout, "--kind", "wedge", "-o", filepath.Join(dir, "bw.png"), "--quiet"); code != exitFail || !strings.Contains(e, "box") {
		t.Errorf("wedge of a box run: exit %d, %q", code, e)
	}
	bhtml := filepath.Join(dir, "box.html")
	if code, _, e := run(t, "report", bout, "--fields", bfields, "-o", bhtml, "--quiet"); code != exitOK {
		t.Fatalf("box report: %s", e)
	}
	bb, _ := os.ReadFile(bhtml)
	if n := checkReport(t, bb); n != 3 { // slice, fractions, density
		t.Errorf("box report has %d figures, want 3", n)
	}
}

// checkFigure checks a written figure: a PNG that decodes to a picture of
// plausible size, or an SVG that is well-formed XML with an <svg> root and
// no reference to a network resource.
func checkFigure(t *testing.T, path, ext string, b []byte) {
	t.Helper()
	if len(b) == 0 {
		t.Fatalf("%s is empty", path)
	}
	switch ext {
	case "png":
		img, format, err := image.Decode(bytes.NewReader(b))
		if err != nil || format != "png" {
			t.Fatalf("%s: not a PNG: %v", path, err)
		}
		if r := img.Bounds(); r.Dx() < 300 || r.Dy() < 200 {
			t.Errorf("%s: %v pixels", path, r)
		}
	case "svg":
		d := xml.NewDecoder(bytes.NewReader(b))
		root := ""
		for {
			tok, err := d.Token()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("%s: not well-formed XML: %v", path, err)
			}
			if se, ok := tok.(xml.StartElement); ok {
				if root == "" {
					root = se.Name.Local
				}
				for _, a := range se.Attr {
					if a.Name.Local == "href" && !strings.HasPrefix(a.Value, "data:") && !strings.HasPrefix(a.Value, "#") {
						t.Errorf("%s: <%s> refers to %q", path, se.Name.Local, a.Value)
					}
				}
			}
		}
		if root != "svg" {
			t.Errorf("%s: root element %q", path, root)
		}
	}
}

// checkReport parses the report as XML (it is written in XHTML syntax),
// checks that no attribute or text refers to http:// or https:// and that
// every <img> src is a data: URI holding a PNG; it returns the number of
// images.
func checkReport(t *testing.T, b []byte) int {
	t.Helper()
	for _, s := range []string{"http://", "https://"} {
		if bytes.Contains(b, []byte(s)) {
			t.Errorf("report refers to %s", s)
		}
	}
	if bytes.Contains(b, []byte("<script")) {
		t.Error("report has a script")
	}
	d := xml.NewDecoder(bytes.NewReader(b))
	d.Strict = true
	n := 0
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("report does not parse: %v", err)
		}
		se, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		for _, a := range se.Attr {
			if (a.Name.Local == "href" || a.Name.Local == "src") && !strings.HasPrefix(a.Value, "data:") && !strings.HasPrefix(a.Value, "#") {
				t.Errorf("<%s %s=%q> is not embedded", se.Name.Local, a.Name.Local, a.Value)
			}
		}
		if se.Name.Local != "img" {
			continue
		}
		n++
		src := ""
		for _, a := range se.Attr {
			if a.Name.Local == "src" {
				src = a.Value
			}
		}
		const pre = "data:image/png;base64,"
		if !strings.HasPrefix(src, pre) {
			t.Errorf("img %d: src %.40q is not a PNG data: URI", n, src)
			continue
		}
		png, err := base64.StdEncoding.DecodeString(src[len(pre):])
		if err != nil {
			t.Errorf("img %d: %v", n, err)
			continue
		}
		if _, _, err := image.Decode(bytes.NewReader(png)); err != nil {
			t.Errorf("img %d: %v", n, err)
		}
	}
	return n
}
