package survey

import (
	"encoding/binary"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestOpenFITSTableHealpy opens a map written by healpy 1.16.1 write_map
// (testdata/footprint/make_fixtures.py: Nside 32, RING, float32, stored by
// healpy as 12 rows of TFORM1 = '1024E') and checks the layout and the raw
// rows against the table read by this package's column reader.
func TestOpenFITSTableHealpy(t *testing.T) {
	path := filepath.Join("..", "testdata", "footprint", "map_ring32.fits")
	ft, err := OpenFITSTable(path)
	if err != nil {
		t.Fatal(err)
	}
	defer ft.Close()
	if ft.HDU != 1 || ft.Rows != 12 || ft.RowBytes != 4096 || len(ft.Fields) != 1 {
		t.Fatalf("layout: HDU %d, %d rows of %d bytes, %d fields; healpy wrote HDU 1, 12 rows of 4096, 1 field",
			ft.HDU, ft.Rows, ft.RowBytes, len(ft.Fields))
	}
	f := ft.Fields[0]
	if f.Code != 'E' || f.Repeat != 1024 || f.Offset != 0 || f.Width != 4096 || f.Name != "T" {
		t.Errorf("field %+v; healpy wrote TTYPE1 = 'T', TFORM1 = '1024E'", f)
	}
	if g, ok := ft.Field(" t "); !ok || g != f {
		t.Errorf("Field(\" t \") = %+v, %v", g, ok)
	}
	if v, ok := ft.Keyword("ORDERING"); !ok || v != "RING" {
		t.Errorf("ORDERING = %q, %v; healpy wrote 'RING'", v, ok)
	}
	if n, err := ft.Int("NSIDE", true, 0, 1, 1<<29); err != nil || n != 32 {
		t.Errorf("NSIDE = %d, %v; healpy wrote 32", n, err)
	}
	if x, err := ft.Float("LASTPIX", 0); err != nil || x != 12287 {
		t.Errorf("LASTPIX = %g, %v; healpy wrote 12287", x, err)
	}
	if _, err := ft.Int("NOSUCH", true, 0, 0, 1); err == nil || !strings.Contains(err.Error(), "no NOSUCH keyword") {
		t.Errorf("missing keyword: %v", err)
	}
	if err := ft.KeywordError("NSIDE", "bad"); !strings.Contains(err.Error(), "(NSIDE): bad") {
		t.Errorf("KeywordError: %v", err)
	}
	raw := make([]byte, 2*ft.RowBytes)
	if err := ft.ReadRows(raw, 10); err != nil {
		t.Fatal(err)
	}
	tab, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range []int{0, 5, 777, 1023} {
		col := tab.Col(tabName(k))
		if col == nil {
			t.Fatalf("column %s missing from the expanded table", tabName(k))
		}
		for r := range 2 {
			want := col.F[10+r]
			got := float64(math.Float32frombits(binary.BigEndian.Uint32(raw[int64(r)*ft.RowBytes+int64(4*k):])))
			if got != want && !(math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("row %d element %d: raw %g, column reader %g", 10+r, k, got, want)
			}
		}
	}
}

func tabName(k int) string { return "T_" + strconv.Itoa(k) }

// TestOpenFITSTableErrors checks errors for a file without a binary table
// and for a truncated data unit.
func TestOpenFITSTableErrors(t *testing.T) {
	dir := t.TempDir()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "footprint", "map_ring32.fits"))
	if err != nil {
		t.Fatal(err)
	}
	primary := filepath.Join(dir, "primary.fits")
	if err := os.WriteFile(primary, b[:2880], 0o600); err != nil {
		t.Fatal(err)
	}
	if _, err := OpenFITSTable(primary); err == nil || !strings.Contains(err.Error(), "no binary table extension") {
		t.Errorf("primary only: %v", err)
	}
	short := filepath.Join(dir, "short.fits")
	if err := os.WriteFile(short, b[:len(b)-2880*4], 0o600); err != nil {
		t.Fatal(err)
	}
	_, err = OpenFITSTable(short)
	var ie *InputError
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "truncated") || ie.File != short {
		t.Errorf("truncated: %v", err)
	}
}
