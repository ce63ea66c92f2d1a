package survey

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/astrogo/fitsio"
)

// cubeSample returns two cubes of different shapes with NaN, signed zero,
// the float32 extremes, and cards of every value type.
func cubeSample() ([]Cube, []HeaderCard, Meta) {
	a := Cube{Name: "DENSITY", Shape: [3]int{4, 5, 6}, Unit: "(Mpc/h)^-3", Data: make([]float32, 4*5*6),
		Cards: []HeaderCard{
			{Key: "BOXSIZE", Value: 1000.0, Comment: "box side, Mpc/h"},
			{Key: "ORIGIN1", Value: -500.25},
			{Key: "NGRID", Value: int64(6), Comment: "cells per side"},
			{Key: "SMOOTHED", Value: true},
			{Key: "NOTE", Value: "a string long enough to need CONTINUE cards, because it goes on well past the sixty-eight characters of one card"},
			{Key: "TINY", Value: 1e-300},
			{Key: "WHOLE", Value: 3.0},
			{Key: "COMMENT", Value: "x is slowest, z fastest (FITS NAXIS3 = x)"},
		}}
	for i := range a.Data {
		a.Data[i] = float32(i)*0.5 - 17
	}
	a.Data[3] = float32(math.NaN())
	a.Data[4] = float32(math.Copysign(0, -1))
	a.Data[5] = math.MaxFloat32
	a.Data[6] = math.SmallestNonzeroFloat32
	a.Data[7] = float32(math.Inf(-1))
	b := Cube{Name: "WEB", Shape: [3]int{3, 1, 2}, Data: []float32{0, 1, 2, 3, 2, 1}}
	primary := []HeaderCard{
		{Key: "TELESCOP", Value: "none (mock)"},
		{Key: "SEED", Value: int64(-9007199254740993)},
		{Key: "HISTORY", Value: "made by the cube tests"},
	}
	p := Provenance{Version: "v0.0.0-test", Command: []string{"filigree", "web", "in put.fits"},
		Params:    []KeyValue{{"grid", "6"}},
		Cosmology: []KeyValue{{"Om0", "0.31"}},
		Time:      time.Date(2026, 12, 2, 3, 0, 0, 0, time.UTC)}
	return []Cube{a, b}, primary, p.Meta()
}

func cubeDataEqual(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}

// cubeCompare checks that got equals want, cards compared without their
// comments (comments are not read back) and data bit for bit.
func cubeCompare(t *testing.T, want, got []Cube) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%d cubes, want %d", len(got), len(want))
	}
	for c := range want {
		w, g := want[c], got[c]
		if g.Name != w.Name || g.Shape != w.Shape || g.Unit != w.Unit {
			t.Errorf("cube %d: %q %v %q, want %q %v %q", c, g.Name, g.Shape, g.Unit, w.Name, w.Shape, w.Unit)
		}
		if !cubeDataEqual(g.Data, w.Data) {
			t.Errorf("cube %d: data differ", c)
		}
		cardsCompare(t, w.Cards, g.Cards)
	}
}

func cardsCompare(t *testing.T, want, got []HeaderCard) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("cards %v, want %v", got, want)
	}
	for i := range want {
		if got[i].Key != want[i].Key || !reflect.DeepEqual(got[i].Value, want[i].Value) {
			t.Errorf("card %d: %s = %#v, want %s = %#v", i, got[i].Key, got[i].Value, want[i].Key, want[i].Value)
		}
	}
}

// Write and read back: cubes bit for bit, typed cards, primary keywords
// and the provenance record.
func TestCubeRoundTrip(t *testing.T) {
	cubes, primary, meta := cubeSample()
	path := filepath.Join(t.TempDir(), "fields.fits")
	if err := WriteCubes(path, cubes, primary, meta); err != nil {
		t.Fatal(err)
	}
	cf, err := ReadCubeFile(path)
	if err != nil {
		t.Fatal(err)
	}
	cubeCompare(t, cubes, cf.Cubes)
	cardsCompare(t, primary, cf.Primary)
	p, ok, err := ProvenanceFromMeta(cf.Meta)
	if err != nil || !ok {
		t.Fatalf("provenance: ok %v err %v", ok, err)
	}
	if !reflect.DeepEqual(p.Meta(), meta) {
		t.Errorf("provenance %v, want %v", p.Meta(), meta)
	}
	got, prim, err := ReadCubes(path)
	if err != nil {
		t.Fatal(err)
	}
	cubeCompare(t, cubes, got)
	cardsCompare(t, primary, prim)

	// No cubes: a primary header alone.
	if err := WriteCubes(path, nil, nil, nil); err != nil {
		t.Fatal(err)
	}
	if got, _, err := ReadCubes(path); err != nil || len(got) != 0 {
		t.Fatalf("empty file: %d cubes, %v", len(got), err)
	}
}

// The byte layout follows FITS 4.0 §3.3.2 and §5.3: NAXIS1 is the fastest
// axis, so NAXIS1 = z, NAXIS3 = x, and element (i, j, k) is big-endian
// IEEE float number (i·N2+j)·N3+k of the data unit, which starts at a
// 2880-byte block boundary.
func TestCubeLayout(t *testing.T) {
	cubes, _, _ := cubeSample()
	path := filepath.Join(t.TempDir(), "layout.fits")
	if err := WriteCubes(path, cubes[:1], nil, nil); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(raw)%fitsBlock != 0 {
		t.Fatalf("file size %d is not a whole number of blocks", len(raw))
	}
	h0, err := fitsReadHeader(bytes.NewReader(raw), path, 0, int64(len(raw)), 0)
	if err != nil {
		t.Fatal(err)
	}
	h, err := fitsReadHeader(bytes.NewReader(raw), path, h0.dataOff, int64(len(raw)), 1)
	if err != nil {
		t.Fatal(err)
	}
	c := cubes[0]
	for n, want := range map[string]string{"XTENSION": "IMAGE", "BITPIX": "-32", "NAXIS": "3",
		"NAXIS1": strconv.Itoa(c.Shape[2]), "NAXIS2": strconv.Itoa(c.Shape[1]), "NAXIS3": strconv.Itoa(c.Shape[0])} {
		if got := h.str(n); got != want {
			t.Errorf("%s = %q, want %q", n, got, want)
		}
	}
	if h.dataOff%fitsBlock != 0 {
		t.Fatalf("data at byte %d", h.dataOff)
	}
	i, j, k := 2, 3, 4
	idx := (i*c.Shape[1]+j)*c.Shape[2] + k
	off := h.dataOff + int64(4*idx)
	if got := math.Float32frombits(binary.BigEndian.Uint32(raw[off:])); got != c.Data[idx] {
		t.Errorf("element (2,3,4) = %v, want %v", got, c.Data[idx])
	}
}

// The independent reader github.com/astrogo/fitsio v0.3.0 sees the same
// images: names, axes (NAXIS1 first) and values.
func TestCubeReadByFitsio(t *testing.T) {
	cubes, primary, meta := cubeSample()
	path := filepath.Join(t.TempDir(), "f.fits")
	if err := WriteCubes(path, cubes, primary, meta); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	ff, err := fitsio.Open(f)
	if err != nil {
		t.Fatal(err)
	}
	defer ff.Close()
	if len(ff.HDUs()) != 1+len(cubes) {
		t.Fatalf("fitsio sees %d HDUs", len(ff.HDUs()))
	}
	for c, want := range cubes {
		img, ok := ff.HDU(c + 1).(fitsio.Image)
		if !ok {
			t.Fatalf("HDU %d is %T", c+1, ff.HDU(c+1))
		}
		if img.Name() != want.Name {
			t.Errorf("HDU %d name %q, want %q", c+1, img.Name(), want.Name)
		}
		axes := img.Header().Axes()
		if !reflect.DeepEqual(axes, []int{want.Shape[2], want.Shape[1], want.Shape[0]}) {
			t.Errorf("HDU %d axes %v for shape %v", c+1, axes, want.Shape)
		}
		// fitsio v0.3.0 fills a slice of the right length.
		data := make([]float32, len(want.Data))
		if err := img.Read(&data); err != nil {
			t.Fatal(err)
		}
		if !cubeDataEqual(data, want.Data) {
			t.Errorf("HDU %d: fitsio reads other values", c+1)
		}
	}
}

// TestFITSCubeInterop writes the sample cubes and their expected content
// for testdata/grid/cube_interop.sh (fitsverify and astropy). Without
// FILIGREE_CUBE_INTEROP_DIR it still writes and re-reads the file.
func TestFITSCubeInterop(t *testing.T) {
	dir := os.Getenv("FILIGREE_CUBE_INTEROP_DIR")
	if dir == "" {
		dir = t.TempDir()
	}
	cubes, primary, meta := cubeSample()
	path := filepath.Join(dir, "cubes.fits")
	if err := WriteCubes(path, cubes, primary, meta); err != nil {
		t.Fatal(err)
	}
	got, _, err := ReadCubes(path)
	if err != nil {
		t.Fatal(err)
	}
	cubeCompare(t, cubes, got)

	// Values as strings (shortest float32 text, NaN, Inf, -0) so that
	// JSON carries them exactly; cards as [key, type, value].
	type jcube struct {
		Name  string      `json:"name"`
		Unit  string      `json:"unit"`
		Shape [3]int      `json:"shape"`
		Data  []string    `json:"data"`
		Cards [][3]string `json:"cards"`
	}
	jcards := func(cards []HeaderCard) [][3]string {
		var out [][3]string
		for _, c := range cards {
			switch v := c.Value.(type) {
			case float64:
				out = append(out, [3]string{c.Key, "float", strconv.FormatFloat(v, 'g', -1, 64)})
			case int64:
				out = append(out, [3]string{c.Key, "int", strconv.FormatInt(v, 10)})
			case bool:
				out = append(out, [3]string{c.Key, "bool", strconv.FormatBool(v)})
			case string:
				out = append(out, [3]string{c.Key, "str", v})
			}
		}
		return out
	}
	var out struct {
		Cubes   []jcube     `json:"cubes"`
		Primary [][3]string `json:"primary"`
		Meta    [][2]string `json:"meta"`
	}
	for _, c := range cubes {
		jc := jcube{Name: c.Name, Unit: c.Unit, Shape: c.Shape, Cards: jcards(c.Cards)}
		for _, v := range c.Data {
			jc.Data = append(jc.Data, strconv.FormatFloat(float64(v), 'g', -1, 32))
		}
		out.Cubes = append(out.Cubes, jc)
	}
	out.Primary = jcards(primary)
	for _, kv := range meta {
		out.Meta = append(out.Meta, [2]string{kv.Key, kv.Value})
	}
	b, err := json.Marshal(out)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "cubes_expected.json"), b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// WriteCubes refuses what it cannot write and leaves no file behind.
func TestWriteCubesRejects(t *testing.T) {
	good := Cube{Name: "A", Shape: [3]int{1, 1, 2}, Data: []float32{1, 2}}
	cases := map[string]struct {
		c    Cube
		prim []HeaderCard
	}{
		"shape":        {c: Cube{Shape: [3]int{2, 2, 2}, Data: make([]float32, 7)}},
		"zero axis":    {c: Cube{Shape: [3]int{0, 2, 2}}},
		"name":         {c: Cube{Name: "dens\u00e9", Shape: good.Shape, Data: good.Data}},
		"reserved":     {c: Cube{Shape: good.Shape, Data: good.Data, Cards: []HeaderCard{{Key: "NAXIS1", Value: int64(3)}}}},
		"bunit card":   {c: Cube{Shape: good.Shape, Data: good.Data, Cards: []HeaderCard{{Key: "BUNIT", Value: "m"}}}},
		"nan card":     {c: Cube{Shape: good.Shape, Data: good.Data, Cards: []HeaderCard{{Key: "X", Value: math.NaN()}}}},
		"bad key":      {c: good, prim: []HeaderCard{{Key: "lower", Value: 1.0}}},
		"long key":     {c: good, prim: []HeaderCard{{Key: "NINECHARS", Value: 1.0}}},
		"type":         {c: good, prim: []HeaderCard{{Key: "X", Value: []int{1}}}},
		"duplicate":    {c: good, prim: []HeaderCard{{Key: "X", Value: 1.0}, {Key: "X", Value: 2.0}}},
		"meta key":     {c: good, prim: []HeaderCard{{Key: "MKEY1", Value: "a"}}},
		"long comment": {c: good, prim: []HeaderCard{{Key: "COMMENT", Value: strings.Repeat("x", 73)}}},
		"trailing":     {c: good, prim: []HeaderCard{{Key: "S", Value: "a "}}},
	}
	for name, tc := range cases {
		path := filepath.Join(t.TempDir(), "bad.fits")
		if err := WriteCubes(path, []Cube{tc.c}, tc.prim, nil); err == nil {
			t.Errorf("%s: accepted", name)
		}
		if _, err := os.Stat(path); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s: file left behind (%v)", name, err)
		}
	}
}

// cubeWriteSample writes the sample to a temporary file and returns its bytes.
func cubeWriteSample(t testing.TB) []byte {
	cubes, primary, meta := cubeSample()
	path := filepath.Join(t.TempDir(), "s.fits")
	if err := WriteCubes(path, cubes, primary, meta); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// Damaged files give an *InputError naming the file, and the HDU or
// keyword at fault.
func TestReadCubesErrors(t *testing.T) {
	good := cubeWriteSample(t)
	setCard := func(b []byte, hdu int, key, line string) []byte {
		b = bytes.Clone(b)
		n := 0
		for off := 0; off+fitsCardLen <= len(b); off += fitsCardLen {
			card := string(b[off : off+8])
			if strings.HasPrefix(card, "XTENSION") {
				n++
			}
			if n == hdu && strings.TrimRight(card, " ") == key {
				copy(b[off:off+fitsCardLen], []byte(line+strings.Repeat(" ", fitsCardLen-len(line))))
				return b
			}
		}
		t.Fatalf("no %s in HDU %d", key, hdu)
		return nil
	}
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"truncated data", good[:len(good)-fitsBlock], "HDU 2"},
		{"truncated header", good[:fitsBlock+1000], "HDU 1 header is truncated"},
		{"not FITS", []byte(fmt.Sprintf("%-80s%-2800s", "HELLO   = 1", "END")), "not a FITS file"},
		{"no END", []byte(strings.Repeat("hello ", 1000)), "no END card"},
		{"BITPIX 16", setCard(good, 1, "BITPIX", "BITPIX  =                   16"), "BITPIX"},
		{"BITPIX 7", setCard(good, 2, "BITPIX", "BITPIX  =                    7"), "BITPIX"},
		{"no NAXIS3", setCard(good, 2, "NAXIS3", "NAXISX  =                    1"), "NAXIS3"},
		{"NAXIS 2", setCard(good, 2, "NAXIS", "NAXIS   =                    2"), "expected a 3-dimensional image"},
		{"GCOUNT 2", setCard(good, 1, "GCOUNT", "GCOUNT  =                    2"), "GCOUNT"},
		{"BSCALE", setCard(good, 1, "COMMENT", "BSCALE  = 'two'"), "BSCALE"},
		{"empty", nil, "HDU 0"},
	}
	for _, tc := range cases {
		path := filepath.Join(t.TempDir(), "bad.fits")
		if err := os.WriteFile(path, tc.data, 0o644); err != nil {
			t.Fatal(err)
		}
		_, _, err := ReadCubes(path)
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("%s: error %v (%T) is not an *InputError", tc.name, err, err)
			continue
		}
		t.Logf("%s: %v", tc.name, err)
		if ie.File != path || !strings.Contains(err.Error(), tc.want) || strings.Contains(ie.Msg, "internal error") {
			t.Errorf("%s: %v, want it to mention %q", tc.name, err, tc.want)
		}
	}
}

// FuzzReadFITSCube feeds arbitrary bytes to ReadCubes, seeded with a
// written file and pieces of it. It must never panic (a panic would be
// caught and reported as an internal error, which fails the test), and
// every error must be an *InputError naming the file.
func FuzzReadFITSCube(f *testing.F) {
	good := cubeWriteSample(f)
	f.Add(good)
	f.Add(good[:2*fitsBlock])
	f.Add(good[:len(good)-100])
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(t.TempDir(), "f.fits")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		cubes, _, err := ReadCubes(path)
		if err != nil {
			var ie *InputError
			if !errors.As(err, &ie) {
				t.Fatalf("error %v (%T) is not an *InputError", err, err)
			}
			if ie.File != path || strings.Contains(ie.Msg, "internal error") {
				t.Fatalf("bad error: %v", err)
			}
			return
		}
		for _, c := range cubes {
			if c.Shape[0]*c.Shape[1]*c.Shape[2] != len(c.Data) {
				t.Fatalf("cube %q shape %v with %d values", c.Name, c.Shape, len(c.Data))
			}
		}
	})
}

// Seeded random damage to a written file (bytes overwritten with digits,
// blanks, quotes or random values, or the file cut short), many times:
// ReadCubes must return cubes consistent with their shapes or an
// *InputError, never panic. This complements FuzzReadFITSCube with a fixed
// set of inputs that every `go test` run covers.
func TestReadCubesDamaged(t *testing.T) {
	good := cubeWriteSample(t)
	r := rand.New(rand.NewPCG(17, 4))
	path := filepath.Join(t.TempDir(), "d.fits")
	alphabet := []byte("0123456789 -+.'=/ETFXNA\x00\xff")
	for trial := 0; trial < 3000; trial++ {
		b := bytes.Clone(good)
		for m := 1 + r.IntN(4); m > 0; m-- {
			// Mostly in the headers, where the parsing is.
			var p int
			switch r.IntN(3) {
			case 0:
				p = r.IntN(fitsBlock)
			case 1:
				p = 2*fitsBlock + r.IntN(fitsBlock)
			default:
				p = r.IntN(len(b))
			}
			if r.IntN(2) == 0 {
				b[p] = alphabet[r.IntN(len(alphabet))]
			} else {
				b[p] = byte(r.IntN(256))
			}
		}
		if r.IntN(5) == 0 {
			b = b[:r.IntN(len(b))]
		}
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
		cubes, _, err := ReadCubes(path)
		if err != nil {
			var ie *InputError
			if !errors.As(err, &ie) || ie.File != path || strings.Contains(ie.Msg, "internal error") {
				t.Fatalf("trial %d: bad error %v (%T)", trial, err, err)
			}
			continue
		}
		for _, c := range cubes {
			if c.Shape[0]*c.Shape[1]*c.Shape[2] != len(c.Data) {
				t.Fatalf("trial %d: shape %v with %d values", trial, c.Shape, len(c.Data))
			}
		}
	}
}

// Cubes written by the independent writer github.com/astrogo/fitsio v0.3.0
// are read: a BITPIX −64 cube in the primary HDU and a BITPIX −32 cube in
// an IMAGE extension, with axes reversed into our (x, y, z) order.
func TestReadCubesFromFitsio(t *testing.T) {
	path := filepath.Join(t.TempDir(), "fitsio.fits")
	w, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	ff, err := fitsio.Create(w)
	if err != nil {
		t.Fatal(err)
	}
	d64 := make([]float64, 4*3*2)
	for i := range d64 {
		d64[i] = 0.25*float64(i) - 1
	}
	img := fitsio.NewImage(-64, []int{4, 3, 2}) // NAXIS1 = 4 (z), NAXIS3 = 2 (x)
	if err := img.Write(&d64); err != nil {
		t.Fatal(err)
	}
	if err := ff.Write(img); err != nil {
		t.Fatal(err)
	}
	d32 := []float32{1, 2, 3, 4, 5, 6, 7, 8}
	img2 := fitsio.NewImage(-32, []int{2, 2, 2})
	if err := img2.Write(&d32); err != nil {
		t.Fatal(err)
	}
	if err := ff.Write(img2); err != nil {
		t.Fatal(err)
	}
	if err := ff.Close(); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	cubes, _, err := ReadCubes(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(cubes) != 2 || cubes[0].Shape != [3]int{2, 3, 4} || cubes[1].Shape != [3]int{2, 2, 2} {
		t.Fatalf("read %d cubes: %+v", len(cubes), cubes)
	}
	for i, v := range d64 {
		if cubes[0].Data[i] != float32(v) {
			t.Fatalf("primary cube [%d] = %v, want %v", i, cubes[0].Data[i], v)
		}
	}
	if !cubeDataEqual(cubes[1].Data, d32) {
		t.Errorf("extension cube %v, want %v", cubes[1].Data, d32)
	}
}
