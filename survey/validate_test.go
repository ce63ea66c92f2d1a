package survey

import (
	"errors"
	"math"
	"os"
	"strings"
	"testing"
)

func floatCol(name string, v ...float64) *Column {
	c := NewColumn(name, Float64, len(v))
	c.F = append(c.F, v...)
	return c
}

func intCol(name string, v ...int64) *Column {
	c := NewColumn(name, Int64, len(v))
	c.I = append(c.I, v...)
	return c
}

func TestGuessCommonNames(t *testing.T) {
	tab := &Table{}
	for _, c := range []*Column{floatCol("RAJ2000", 1), floatCol("DEJ2000", 2), floatCol("Z_SPEC", 0.1), intCol("OBJID", 7)} {
		if err := tab.Add(c); err != nil {
			t.Fatal(err)
		}
	}
	m, notes, err := Guess(tab, Mapping{})
	if err != nil {
		t.Fatal(err)
	}
	want := Mapping{RA: "RAJ2000", Dec: "DEJ2000", Z: "Z_SPEC", ID: "OBJID"}
	if m != want {
		t.Errorf("Guess = %+v, want %+v", m, want)
	}
	if len(notes) != 4 || !strings.Contains(notes[0], "RAJ2000") {
		t.Errorf("notes = %q", notes)
	}
	// An explicit name is matched case-insensitively and is not reported as a guess.
	m, notes, err = Guess(tab, Mapping{Z: "z_spec"})
	if err != nil || m.Z != "Z_SPEC" || len(notes) != 3 {
		t.Errorf("explicit z: %+v %q %v", m, notes, err)
	}
	if _, _, err := Guess(tab, Mapping{Z: "zphot"}); err == nil || !strings.Contains(err.Error(), "zphot") {
		t.Errorf("unknown explicit column: err = %v", err)
	}
	noZ := &Table{Cols: []*Column{floatCol("ra", 1), floatCol("dec", 1)}}
	if _, _, err := Guess(noZ, Mapping{}); err == nil || !strings.Contains(err.Error(), "--z-col") {
		t.Errorf("missing z: err = %v", err)
	}
}

func testTable(t *testing.T) *Table {
	t.Helper()
	tab := &Table{}
	for _, c := range []*Column{
		floatCol("ra", 10, 370, -5, 20, 30, 40, 50),
		floatCol("dec", 0, 10, 20, 95, -90, 45, 45),
		floatCol("z", 0.1, 0.2, 0.3, 0.4, 0, math.NaN(), 0.5),
		intCol("id", 1, 2, 3, 4, 5, 6, 2),
	} {
		if err := tab.Add(c); err != nil {
			t.Fatal(err)
		}
	}
	return tab
}

func TestValidateDefaultStops(t *testing.T) {
	tab := testTable(t)
	_, rep, err := Validate(tab, Mapping{RA: "ra", Dec: "dec", Z: "z", ID: "id"}, ValidateOptions{File: "cat.csv"})
	var ve *ValidationError
	if !errors.As(err, &ve) {
		t.Fatalf("err = %v, want ValidationError", err)
	}
	// Rows 4 (Dec 95), 5 (z 0), 6 (z NaN), 7 (duplicate of row 2) are bad;
	// rows 2 and 3 have RA wrapped.
	if rep.Bad != 4 || rep.Wrapped != 2 {
		t.Errorf("bad %d wrapped %d, want 4 and 2", rep.Bad, rep.Wrapped)
	}
	msg := err.Error()
	for _, want := range []string{"cat.csv: row 4: column \"dec\": value 95", "row 7: column \"id\": value 2: duplicate ID (first at row 2)", "--drop-bad"} {
		if !strings.Contains(msg, want) {
			t.Errorf("error lacks %q:\n%s", want, msg)
		}
	}
}

func TestValidateDropAndWrap(t *testing.T) {
	tab := testTable(t)
	pos, rep, err := Validate(tab, Mapping{RA: "ra", Dec: "dec", Z: "z", ID: "id"}, ValidateOptions{File: "cat.csv", DropBad: true})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Dropped != 4 || pos.Len() != 3 {
		t.Fatalf("dropped %d kept %d, want 4 and 3", rep.Dropped, pos.Len())
	}
	wantRA := []float64{10, 10, 355}
	for i, r := range []int{0, 1, 2} {
		if pos.Row[i] != r || pos.RA[i] != wantRA[i] {
			t.Errorf("kept %d: row %d RA %v, want row %d RA %v", i, pos.Row[i], pos.RA[i], r, wantRA[i])
		}
	}
}

func TestValidateStrictAndRadians(t *testing.T) {
	tab := &Table{Cols: []*Column{floatCol("ra", math.Pi, 7), floatCol("dec", -math.Pi/2, 0), floatCol("z", 1, 1)}}
	_, rep, err := Validate(tab, Mapping{RA: "ra", Dec: "dec", Z: "z", Radians: true}, ValidateOptions{Strict: true})
	if err == nil || rep.Bad != 1 || rep.First[0].Row != 2 {
		t.Fatalf("strict radians: err %v rep %+v", err, rep)
	}
	pos, _, err := Validate(tab, Mapping{RA: "ra", Dec: "dec", Z: "z", Radians: true}, ValidateOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// 7 rad = 401.07° → 41.07°
	if math.Abs(pos.RA[0]-180) > 1e-12 || math.Abs(pos.Dec[0]+90) > 1e-12 || math.Abs(pos.RA[1]-(7*180/math.Pi-360)) > 1e-12 {
		t.Errorf("radians: RA %v Dec %v", pos.RA, pos.Dec)
	}
}

func TestValidateNullsAndWeights(t *testing.T) {
	ra := floatCol("ra", 1, 2, 3)
	ra.SetNull(1)
	tab := &Table{Cols: []*Column{ra, floatCol("dec", 0, 0, 0), floatCol("z", 1, 1, 1), floatCol("w", 1, 2, -1)}}
	pos, rep, err := Validate(tab, Mapping{RA: "ra", Dec: "dec", Z: "z", Weight: "w"}, ValidateOptions{DropBad: true})
	if err != nil {
		t.Fatal(err)
	}
	if pos.Len() != 1 || pos.Weight[0] != 1 || rep.Bad != 2 {
		t.Errorf("kept %d weight %v bad %d", pos.Len(), pos.Weight, rep.Bad)
	}
	if rep.Counts[0].Msg != msgNull || rep.Counts[1].Msg != msgWeight {
		t.Errorf("counts %+v", rep.Counts)
	}
}

func TestProvenanceRoundTrip(t *testing.T) {
	p := &Provenance{
		Version:   "1.2.3",
		Command:   []string{"filigree", "run", "my cat.fits", "--smooth", "4", "it's"},
		Params:    []KeyValue{{"smooth", "4"}, {"threshold", "0.2"}},
		Cosmology: []KeyValue{{"H0", "67.66"}},
		Inputs:    []InputFile{{Path: "a.fits", SHA256: "ab", Rows: 10}, {Path: "b.csv", SHA256: "cd", Rows: 3}},
	}
	q, ok, err := ProvenanceFromMeta(p.Meta())
	if err != nil || !ok {
		t.Fatal(ok, err)
	}
	if strings.Join(q.Command, "|") != strings.Join(p.Command, "|") || len(q.Params) != 2 || q.Cosmology[0] != p.Cosmology[0] || len(q.Inputs) != 2 || q.Inputs[1] != p.Inputs[1] {
		t.Errorf("round trip: %+v", q)
	}
	if got, want := ShellQuote(p.Command), `filigree run 'my cat.fits' --smooth 4 'it'\''s'`; got != want {
		t.Errorf("ShellQuote = %s, want %s", got, want)
	}
}

func TestTableSelectAppend(t *testing.T) {
	a := floatCol("x", 1, 2, 3)
	a.SetNull(2)
	tab := &Table{Cols: []*Column{a, intCol("n", 4, 5, 6)}}
	s := tab.Select([]int{2, 0})
	if s.Len() != 2 || !s.Cols[0].IsNull(0) || s.Cols[0].IsNull(1) || s.Cols[1].I[0] != 6 {
		t.Errorf("Select: %+v %+v", s.Cols[0], s.Cols[1])
	}
	u := &Table{Cols: []*Column{floatCol("x", 9), intCol("n", 9)}}
	if err := tab.Append(u); err != nil {
		t.Fatal(err)
	}
	if tab.Len() != 4 || len(tab.Cols[0].Null) != 4 || tab.Cols[0].IsNull(3) {
		t.Errorf("Append: %+v", tab.Cols[0])
	}
	if err := tab.Add(intCol("n", 1, 2, 3, 4)); err == nil {
		t.Error("duplicate name accepted")
	}
	if err := tab.Add(intCol("m", 1)); err == nil {
		t.Error("short column accepted")
	}
}

func TestGuessAndReadXYZ(t *testing.T) {
	dir := t.TempDir()
	path := dir + "/pts.csv"
	if err := os.WriteFile(path, []byte("id,CART_X,cart_y,cart_z\n1,1,2,3\n2,4,5,6\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	have := []string{"id", "CART_X", "cart_y", "cart_z"}
	cols, note, err := GuessXYZ(path, have, "")
	if err != nil || cols != [3]string{"CART_X", "cart_y", "cart_z"} || !strings.Contains(note, "guessed") {
		t.Fatalf("guess: %v %q %v", cols, note, err)
	}
	if _, _, err := GuessXYZ(path, have, "a,b"); err == nil {
		t.Error("two names accepted")
	}
	if _, _, err := GuessXYZ(path, []string{"ra", "dec"}, ""); err == nil || !strings.Contains(err.Error(), "--xyz-cols") {
		t.Errorf("no guess: err = %v", err)
	}
	xyz, err := ReadXYZ(path, ReadOptions{}, cols)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{1, 2, 3, 4, 5, 6}
	for i := range want {
		if xyz[i] != want[i] {
			t.Fatalf("xyz = %v, want %v", xyz, want)
		}
	}
	if err := os.WriteFile(path, []byte("x,y,z\n1,2,3\n4,,6\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = ReadXYZ(path, ReadOptions{}, [3]string{"x", "y", "z"})
	var ie *InputError
	if !errors.As(err, &ie) || ie.Row != 2 || ie.Column != "y" {
		t.Errorf("missing value: err = %v", err)
	}
}
