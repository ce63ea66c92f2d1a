package survey

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/apache/arrow/go/v15/arrow/memory"
)

// pqFuzzSeedTable is a small table of every kind with nulls and metadata.
func pqFuzzSeedTable() *Table {
	t := &Table{Meta: Meta{{"k", "v"}, {"ü", "✓"}}}
	ra := &Column{Name: "ra", Kind: Float64, Unit: "deg", F: []float64{1, 2.5, -3, 400, 0}}
	id := &Column{Name: "id", Kind: Int64, I: []int64{1, 0, -7, 1 << 40, 5}, Null: []bool{false, true, false, false, false}}
	ok := &Column{Name: "ok", Kind: Bool, B: []bool{true, false, true, true, false}}
	s := &Column{Name: "s", Kind: String, Desc: "name", S: []string{"a", "b", "a", "", "ccc"}, Null: []bool{false, false, false, true, false}}
	t.Cols = []*Column{ra, id, ok, s}
	return t
}

// pqFuzzRead writes data to path and reads it back whole, failing unless the
// result is a consistent table or an *InputError naming the file.
func pqFuzzRead(t *testing.T, path string, data []byte) {
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := Read(path, ReadOptions{})
	if err != nil {
		var ie *InputError
		if !errors.As(err, &ie) || ie.File != path {
			t.Fatalf("error is not an InputError naming the file: %v (%T)", err, err)
		}
		return
	}
	if err := got.Check(); err != nil {
		t.Fatalf("read an inconsistent table: %v", err)
	}
}

// FuzzReadParquet feeds mutated Parquet files to the reader, which must
// return a table or an InputError and never panic. Run it with
//
//	go test ./survey/ -run '^$' -fuzz FuzzReadParquet -fuzztime 30s -fuzzminimizetime 3s
//
// (the default minimisation time of 60 s per new input would use up a short run).
func FuzzReadParquet(f *testing.F) {
	var buf bytes.Buffer
	if err := writeParquet(&buf, pqFuzzSeedTable()); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes())
	f.Add(buf.Bytes()[:buf.Len()-9])
	// A file from pqarrow with dictionary strings, narrow and unsigned
	// integers and two row groups.
	mem := memory.NewGoAllocator()
	r1, _ := pqTestForeignRecord(f, mem, 0, 6)
	r2, _ := pqTestForeignRecord(f, mem, 6, 3)
	dir := f.TempDir()
	foreign := filepath.Join(dir, "foreign.parquet")
	pqTestFixture(f, foreign, r1, r2)
	r1.Release()
	r2.Release()
	if data, err := os.ReadFile(foreign); err == nil {
		f.Add(data)
	}
	path := filepath.Join(dir, "in.parquet")
	f.Fuzz(func(t *testing.T, data []byte) {
		pqFuzzRead(t, path, data)
	})
}

// FuzzReadArrow does the same for Arrow IPC files.
func FuzzReadArrow(f *testing.F) {
	var buf bytes.Buffer
	if err := writeArrow(&buf, pqFuzzSeedTable()); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes())
	dir := f.TempDir()
	path := filepath.Join(dir, "in.arrow")
	f.Fuzz(func(t *testing.T, data []byte) {
		pqFuzzRead(t, path, data)
	})
}

// TestReadMutatedFiles is a deterministic stand-in for the fuzzers that runs
// with every `go test`: 3000 copies of small valid Parquet and Arrow files
// with a few bytes or 32-bit words overwritten (lengths and offsets are the
// fields most likely to make a decoder misbehave) must each read as a table
// or fail with an InputError.
func TestReadMutatedFiles(t *testing.T) {
	if testing.Short() {
		t.Skip("mutation test skipped in -short mode")
	}
	var pq, ar bytes.Buffer
	if err := writeParquet(&pq, pqFuzzSeedTable()); err != nil {
		t.Fatal(err)
	}
	if err := writeArrow(&ar, pqFuzzSeedTable()); err != nil {
		t.Fatal(err)
	}
	seeds := [][]byte{pq.Bytes(), ar.Bytes()}
	dir := t.TempDir()
	paths := []string{filepath.Join(dir, "m.parquet"), filepath.Join(dir, "m.arrow")}
	rng := rand.New(rand.NewPCG(11, 12))
	for range 3000 {
		k := rng.IntN(2)
		d := append([]byte{}, seeds[k]...)
		for range 1 + rng.IntN(4) {
			p := rng.IntN(len(d) - 4)
			switch rng.IntN(4) {
			case 0:
				d[p] = byte(rng.Uint32())
			case 1:
				d[p] ^= 1 << rng.IntN(8)
			case 2:
				binary.LittleEndian.PutUint32(d[p:], rng.Uint32())
			case 3:
				binary.LittleEndian.PutUint32(d[p:], uint32(rng.IntN(1<<(1+rng.IntN(31)))))
			}
		}
		pqFuzzRead(t, paths[k], d)
	}
}
