package survey

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"runtime/metrics"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/file"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
	pqgo "github.com/parquet-go/parquet-go"
)

// pqTestTable returns a table exercising every kind, nulls, special values,
// unicode and long texts, units, descriptions and ordered metadata. With
// n > arrowChunkRows it spans several Parquet row groups / Arrow batches.
func pqTestTable(n int) *Table {
	rng := rand.New(rand.NewPCG(1, 2))
	long := strings.Repeat("long metadata value ✓ ", 10000) // 230 kB
	t := &Table{Meta: Meta{
		{"zeta", "first key, not sorted"},
		{"alpha", "second"},
		{"résumé ✓ 星系", "unicode key and value: Ω≈ç√ 🌌"},
		{"empty", ""},
		{"long", long},
		{"filigree.command", `filigree run "cat.fits" -o out.parquet --smooth 2.5`},
	}}
	ra := &Column{Name: "ra", Kind: Float64, Unit: "deg", Desc: "right ascension (ICRS)"}
	z := &Column{Name: "z.spec", Kind: Float64, Desc: "spectroscopic redshift; null where not measured"}
	id := &Column{Name: "Obj ID", Kind: Int64, Unit: "", Desc: "survey identifier"}
	code := &Column{Name: "web_code", Kind: Int64, Unit: "code"}
	flag := &Column{Name: "good", Kind: Bool}
	name := &Column{Name: "name.v1", Kind: String, Unit: "", Desc: "object name (UTF-8) — ünïcödé"}
	phi := &Column{Name: "φ_unit", Kind: Float64, Unit: "km s⁻¹ (Mpc/h)⁻¹"}
	specials := []float64{0, math.Copysign(0, -1), math.Inf(1), math.Inf(-1), math.NaN(),
		math.MaxFloat64, math.SmallestNonzeroFloat64, -math.MaxFloat64, 1e-310}
	ints := []int64{0, -1, 1, math.MaxInt64, math.MinInt64}
	texts := []string{"", "NGC 4472", "Ω≈ç√ 星系 🌌", "with\x00nul", strings.Repeat("x", 10000), "tab\tand\nnewline"}
	for i := range n {
		v := rng.Float64() * 360
		if i < len(specials) {
			v = specials[i]
		}
		ra.F = append(ra.F, v)
		z.F = append(z.F, rng.Float64()*0.3)
		id.I = append(id.I, int64(rng.Uint64()))
		if i < len(ints) {
			id.I[i] = ints[i]
		}
		code.I = append(code.I, int64(rng.IntN(4)))
		flag.B = append(flag.B, rng.IntN(2) == 1)
		s := fmt.Sprintf("G%07d", i)
		if i < len(texts) {
			s = texts[i]
		}
		name.S = append(name.S, s)
		phi.F = append(phi.F, rng.NormFloat64())
	}
	// Nulls: z every 7th row, id every 11th, flag every 5th, name every
	// 13th; code and phi have none (nil mask); ra has a mask with no nulls.
	ra.Null = make([]bool, n)
	for i := range n {
		if i%7 == 3 {
			z.SetNull(i)
			z.F[i] = math.NaN()
		}
		if i%11 == 4 {
			id.SetNull(i)
			id.I[i] = 0
		}
		if i%5 == 2 {
			flag.SetNull(i)
			flag.B[i] = false
		}
		if i%13 == 0 && i > len(texts) {
			name.SetNull(i)
			name.S[i] = ""
		}
	}
	for _, c := range []*Column{ra, z, id, code, flag, name, phi} {
		if err := t.Add(c); err != nil {
			panic(err)
		}
	}
	return t
}

// pqTestEqual fails unless got holds exactly want's columns, values, nulls,
// units, descriptions and metadata. Float values compare bit for bit (NaN
// payloads excepted); a nil null mask equals an all-false one.
func pqTestEqual(t *testing.T, want, got *Table) {
	t.Helper()
	if len(got.Cols) != len(want.Cols) {
		t.Fatalf("got %d columns, want %d", len(got.Cols), len(want.Cols))
	}
	if got.Len() != want.Len() {
		t.Fatalf("got %d rows, want %d", got.Len(), want.Len())
	}
	if len(got.Meta) != len(want.Meta) {
		t.Errorf("got %d metadata entries, want %d: %q", len(got.Meta), len(want.Meta), got.Meta)
	}
	for i := range min(len(got.Meta), len(want.Meta)) {
		if got.Meta[i] != want.Meta[i] {
			t.Errorf("metadata %d: got %.60q, want %.60q", i, got.Meta[i], want.Meta[i])
		}
	}
	for j, w := range want.Cols {
		g := got.Cols[j]
		if g.Name != w.Name || g.Kind != w.Kind || g.Unit != w.Unit || g.Desc != w.Desc {
			t.Errorf("column %d: got %q %s unit %q desc %q, want %q %s unit %q desc %q",
				j, g.Name, g.Kind, g.Unit, g.Desc, w.Name, w.Kind, w.Unit, w.Desc)
			continue
		}
		bad := 0
		for i := range w.Len() {
			if g.IsNull(i) != w.IsNull(i) {
				t.Errorf("column %q row %d: null %v, want %v", w.Name, i, g.IsNull(i), w.IsNull(i))
				bad++
			} else if w.IsNull(i) {
				if w.Kind == Float64 && !math.IsNaN(g.F[i]) {
					t.Errorf("column %q row %d: null slot holds %v, want NaN", w.Name, i, g.F[i])
					bad++
				}
			} else if !pqTestSame(w, g, i) {
				t.Errorf("column %q row %d: got %.40q, want %.40q", w.Name, i, g.Format(i), w.Format(i))
				bad++
			}
			if bad > 10 {
				t.Fatalf("column %q: too many differences", w.Name)
			}
		}
	}
}

func pqTestSame(w, g *Column, i int) bool {
	switch w.Kind {
	case Float64:
		if math.IsNaN(w.F[i]) {
			return math.IsNaN(g.F[i])
		}
		return math.Float64bits(w.F[i]) == math.Float64bits(g.F[i])
	case Int64:
		return w.I[i] == g.I[i]
	case Bool:
		return w.B[i] == g.B[i]
	case String:
		return w.S[i] == g.S[i]
	}
	return false
}

// pqTestInputError fails unless err is an *InputError naming file (and
// column, when not ""), and returns it.
func pqTestInputError(t *testing.T, err error, file, column string) *InputError {
	t.Helper()
	var ie *InputError
	if !errors.As(err, &ie) {
		t.Fatalf("got error %v (%T), want *InputError", err, err)
	}
	if ie.File != file {
		t.Errorf("InputError names file %q, want %q", ie.File, file)
	}
	if column != "" && ie.Column != column {
		t.Errorf("InputError names column %q, want %q (%v)", ie.Column, column, ie)
	}
	return ie
}

func TestParquetRoundTrip(t *testing.T) {
	for _, n := range []int{0, 1, 1000, 2*arrowChunkRows + 17} {
		t.Run(fmt.Sprint(n), func(t *testing.T) {
			want := pqTestTable(n)
			path := filepath.Join(t.TempDir(), "cat.parquet")
			if err := Write(path, want, WriteOptions{}); err != nil {
				t.Fatal(err)
			}
			r, err := Open(path, ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if r.NumRows() != int64(n) {
				t.Errorf("NumRows = %d, want %d", r.NumRows(), n)
			}
			got, err := ReadAll(r)
			r.Close()
			if err != nil {
				t.Fatal(err)
			}
			pqTestEqual(t, want, got)
		})
	}
}

// TestParquetSecondReader reads our Parquet output with an independent
// implementation, github.com/parquet-go/parquet-go v0.32.0, and compares
// every value and null, the row count and the key-value metadata order.
func TestParquetSecondReader(t *testing.T) {
	want := pqTestTable(arrowChunkRows + 500)
	path := filepath.Join(t.TempDir(), "cat.parquet")
	if err := Write(path, want, WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	st, _ := f.Stat()
	pf, err := pqgo.OpenFile(f, st.Size())
	if err != nil {
		t.Fatal(err)
	}
	if pf.NumRows() != int64(want.Len()) {
		t.Fatalf("parquet-go: %d rows, want %d", pf.NumRows(), want.Len())
	}
	// parquet-go sorts the key-value list by key when it opens a file, so
	// only the entries are compared here; TestParquetRoundTrip checks the
	// order, which the file keeps (key_value_metadata is a Thrift list).
	kv := pf.Metadata().KeyValueMetadata
	if len(kv) != len(want.Meta)+1 {
		t.Errorf("parquet-go: %d key-value entries, want Meta's %d and %s", len(kv), len(want.Meta), arrowReservedKey)
	}
	for _, e := range want.Meta {
		if v, ok := pf.Lookup(e.Key); !ok || v != e.Value {
			t.Errorf("parquet-go: key %q has %.40q (present %v), want %.40q", e.Key, v, ok, e.Value)
		}
	}
	fields := pf.Schema().Fields()
	if len(fields) != len(want.Cols) {
		t.Fatalf("parquet-go: %d fields, want %d", len(fields), len(want.Cols))
	}
	for j, fld := range fields {
		if fld.Name() != want.Cols[j].Name || !fld.Optional() {
			t.Errorf("parquet-go: field %d is %q optional=%v, want %q optional", j, fld.Name(), fld.Optional(), want.Cols[j].Name)
		}
	}
	row := 0
	buf := make([]pqgo.Row, 1000)
	for _, rg := range pf.RowGroups() {
		rows := rg.Rows()
		for {
			n, err := rows.ReadRows(buf)
			for _, r := range buf[:n] {
				if len(r) != len(want.Cols) {
					t.Fatalf("parquet-go row %d has %d values", row, len(r))
				}
				for _, v := range r {
					c := want.Cols[v.Column()]
					if v.IsNull() != c.IsNull(row) {
						t.Fatalf("parquet-go: column %q row %d null=%v, want %v", c.Name, row, v.IsNull(), c.IsNull(row))
					}
					if v.IsNull() {
						continue
					}
					ok := false
					switch c.Kind {
					case Float64:
						ok = v.Kind() == pqgo.Double && (math.Float64bits(v.Double()) == math.Float64bits(c.F[row]) ||
							math.IsNaN(c.F[row]) && math.IsNaN(v.Double()))
					case Int64:
						ok = v.Kind() == pqgo.Int64 && v.Int64() == c.I[row]
					case Bool:
						ok = v.Kind() == pqgo.Boolean && v.Boolean() == c.B[row]
					case String:
						ok = v.Kind() == pqgo.ByteArray && string(v.ByteArray()) == c.S[row]
					}
					if !ok {
						t.Fatalf("parquet-go: column %q row %d is %v (%v), want %q", c.Name, row, v, v.Kind(), c.Format(row))
					}
				}
				row++
			}
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
		}
		rows.Close()
	}
	if row != want.Len() {
		t.Errorf("parquet-go read %d rows, want %d", row, want.Len())
	}
}

func TestParquetBatches(t *testing.T) {
	want := pqTestTable(arrowChunkRows + 999)
	path := filepath.Join(t.TempDir(), "cat.parquet")
	if err := Write(path, want, WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	for _, max := range []int{1, 777, 100000} {
		r, err := Open(path, ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		got := &Table{Meta: r.Schema().Meta}
		for _, c := range r.Schema().Cols {
			got.Cols = append(got.Cols, c.cloneEmpty(0))
		}
		batches := 0
		for {
			b, err := r.Next(max)
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
			if b.Len() < 1 || b.Len() > max {
				t.Fatalf("Next(%d) returned %d rows", max, b.Len())
			}
			if err := got.Append(b); err != nil {
				t.Fatal(err)
			}
			batches++
			if max == 1 && batches == 3000 {
				break // enough single-row batches, across no boundary but cheap
			}
		}
		r.Close()
		if max == 1 {
			if got.Len() != 3000 {
				t.Fatalf("Next(1) x 3000 gave %d rows", got.Len())
			}
			pqTestEqual(t, want.Select(pqTestRange(3000)), got)
			continue
		}
		pqTestEqual(t, want, got)
	}
}

func pqTestRange(n int) []int {
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	return idx
}

func TestParquetColumnSelection(t *testing.T) {
	want := pqTestTable(5000)
	path := filepath.Join(t.TempDir(), "cat.parquet")
	if err := Write(path, want, WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	got, err := Read(path, ReadOptions{Columns: []string{"NAME.V1", "ra", "Good"}})
	if err != nil {
		t.Fatal(err)
	}
	sel := &Table{Meta: want.Meta, Cols: []*Column{want.Col("name.v1"), want.Col("ra"), want.Col("good")}}
	pqTestEqual(t, sel, got)

	_, err = Read(path, ReadOptions{Columns: []string{"ra", "nosuch"}})
	pqTestInputError(t, err, path, "nosuch")
}

// TestParquetOnlySelectedColumnsRead overwrites one column's chunks with
// garbage: reading the other columns must still succeed (so that column's
// pages are never decoded), and reading it must fail naming it.
func TestParquetOnlySelectedColumnsRead(t *testing.T) {
	want := pqTestTable(3000)
	path := filepath.Join(t.TempDir(), "cat.parquet")
	if err := Write(path, want, WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	pf, err := file.NewParquetReader(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	const victim = 3 // web_code
	for g := range pf.NumRowGroups() {
		cc, err := pf.MetaData().RowGroup(g).ColumnChunk(victim)
		if err != nil {
			t.Fatal(err)
		}
		start := cc.DataPageOffset()
		if cc.HasDictionaryPage() {
			start = min(start, cc.DictionaryPageOffset())
		}
		for i := start; i < start+cc.TotalCompressedSize(); i++ {
			data[i] = 0xA5
		}
	}
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := Read(path, ReadOptions{Columns: []string{"ra", "z.spec", "name.v1", "good"}})
	if err != nil {
		t.Fatalf("reading the intact columns: %v", err)
	}
	pqTestEqual(t, &Table{Meta: want.Meta, Cols: []*Column{want.Cols[0], want.Cols[1], want.Cols[5], want.Cols[4]}}, got)
	_, err = Read(path, ReadOptions{})
	pqTestInputError(t, err, path, "web_code")
	t.Logf("error for the damaged column: %v", err)
}

// pqTestFixture writes records through pqarrow directly (each record one row
// group), standing in for files from other writers: pyarrow is not packaged
// for this Debian release (apt-cache policy python3-pyarrow finds nothing).
func pqTestFixture(t testing.TB, path string, recs ...arrow.Record) {
	t.Helper()
	var buf bytes.Buffer
	fw, err := pqarrow.NewFileWriter(recs[0].Schema(), &buf, parquet.NewWriterProperties(),
		pqarrow.NewArrowWriterProperties(pqarrow.WithStoreSchema()))
	if err != nil {
		t.Fatal(err)
	}
	for _, rec := range recs {
		if err := fw.Write(rec); err != nil {
			t.Fatal(err)
		}
	}
	if err := fw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// pqTestForeignRecord builds a record of the types other writers produce:
// dictionary-encoded strings and numbers, narrow and unsigned integers,
// float32, with nulls in indices. Row k of the record is row k0+k of the
// expected table returned alongside.
func pqTestForeignRecord(t testing.TB, mem memory.Allocator, k0, n int) (arrow.Record, *Table) {
	t.Helper()
	dictStr := &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Int16, ValueType: arrow.BinaryTypes.String}
	dictF := &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Int8, ValueType: arrow.PrimitiveTypes.Float64}
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "survey", Type: dictStr, Nullable: true, Metadata: arrow.NewMetadata([]string{"description"}, []string{"parent survey"})},
		{Name: "zbin", Type: dictF, Nullable: true},
		{Name: "u8", Type: arrow.PrimitiveTypes.Uint8, Nullable: true},
		{Name: "u16", Type: arrow.PrimitiveTypes.Uint16},
		{Name: "u32", Type: arrow.PrimitiveTypes.Uint32},
		{Name: "u64", Type: arrow.PrimitiveTypes.Uint64},
		{Name: "i8", Type: arrow.PrimitiveTypes.Int8},
		{Name: "i16", Type: arrow.PrimitiveTypes.Int16},
		{Name: "i32", Type: arrow.PrimitiveTypes.Int32, Metadata: arrow.NewMetadata([]string{"unit"}, []string{"mag"})},
		{Name: "f32", Type: arrow.PrimitiveTypes.Float32, Nullable: true},
		{Name: "big", Type: arrow.BinaryTypes.LargeString},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	defer b.Release()
	surveys := []string{"2dFGRS", "SDSS DR7", "6dFGS", "GAMA ✓"}
	bins := []float64{0.05, 0.15, 0.25}
	want := &Table{}
	cs := &Column{Name: "survey", Kind: String, Desc: "parent survey"}
	cz := &Column{Name: "zbin", Kind: Float64}
	ci := make([]*Column, 7)
	for j, name := range []string{"u8", "u16", "u32", "u64", "i8", "i16", "i32"} {
		ci[j] = &Column{Name: name, Kind: Int64}
	}
	ci[6].Unit = "mag"
	cf := &Column{Name: "f32", Kind: Float64}
	cl := &Column{Name: "big", Kind: String}
	for k := range n {
		i := k0 + k
		sb := b.Field(0).(*array.BinaryDictionaryBuilder)
		if i%9 == 0 {
			sb.AppendNull()
			cs.S = append(cs.S, "")
		} else {
			s := surveys[i%len(surveys)]
			if err := sb.AppendString(s); err != nil {
				t.Fatal(err)
			}
			cs.S = append(cs.S, s)
		}
		fb := b.Field(1).(*array.Float64DictionaryBuilder)
		if i%4 == 1 {
			fb.AppendNull()
			cz.F = append(cz.F, math.NaN())
		} else {
			v := bins[i%len(bins)]
			if err := fb.Append(v); err != nil {
				t.Fatal(err)
			}
			cz.F = append(cz.F, v)
		}
		u8 := uint8(250 + i%6)
		if i%10 == 7 {
			b.Field(2).(*array.Uint8Builder).AppendNull()
			ci[0].I = append(ci[0].I, 0)
		} else {
			b.Field(2).(*array.Uint8Builder).Append(u8)
			ci[0].I = append(ci[0].I, int64(u8))
		}
		u16 := uint16(65535 - i)
		u32 := uint32(4294967295 - uint32(i))
		u64 := uint64(math.MaxInt64 - uint64(i)) // the largest values that fit
		i8 := int8(-128 + i%256)
		i16 := int16(-32768 + i)
		i32 := int32(-2147483648 + i)
		b.Field(3).(*array.Uint16Builder).Append(u16)
		b.Field(4).(*array.Uint32Builder).Append(u32)
		b.Field(5).(*array.Uint64Builder).Append(u64)
		b.Field(6).(*array.Int8Builder).Append(i8)
		b.Field(7).(*array.Int16Builder).Append(i16)
		b.Field(8).(*array.Int32Builder).Append(i32)
		ci[1].I = append(ci[1].I, int64(u16))
		ci[2].I = append(ci[2].I, int64(u32))
		ci[3].I = append(ci[3].I, int64(u64))
		ci[4].I = append(ci[4].I, int64(i8))
		ci[5].I = append(ci[5].I, int64(i16))
		ci[6].I = append(ci[6].I, int64(i32))
		f := float32(i) / 3 // not exactly representable: conversion must be exact float32→float64
		if i%6 == 5 {
			b.Field(9).(*array.Float32Builder).AppendNull()
			cf.F = append(cf.F, math.NaN())
		} else {
			b.Field(9).(*array.Float32Builder).Append(f)
			cf.F = append(cf.F, float64(f))
		}
		s := fmt.Sprintf("large-%d-ünï", i)
		b.Field(10).(*array.LargeStringBuilder).Append(s)
		cl.S = append(cl.S, s)
	}
	want.Cols = append([]*Column{cs, cz}, ci...)
	want.Cols = append(want.Cols, cf, cl)
	for k := range n {
		i := k0 + k
		if i%9 == 0 {
			cs.SetNull(k)
		}
		if i%4 == 1 {
			cz.SetNull(k)
		}
		if i%10 == 7 {
			ci[0].SetNull(k)
		}
		if i%6 == 5 {
			cf.SetNull(k)
		}
	}
	return b.NewRecord(), want
}

// pqTestCat appends the rows of b to a (same columns).
func pqTestCat(t *testing.T, a, b *Table) *Table {
	t.Helper()
	out := &Table{Meta: a.Meta}
	for _, c := range a.Cols {
		d := c.cloneEmpty(0)
		out.Cols = append(out.Cols, d)
	}
	if err := out.Append(a); err != nil {
		t.Fatal(err)
	}
	if err := out.Append(b); err != nil {
		t.Fatal(err)
	}
	return out
}

func TestParquetForeignTypes(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	r1, w1 := pqTestForeignRecord(t, mem, 0, 700)
	r2, w2 := pqTestForeignRecord(t, mem, 700, 300) // second row group, own dictionaries
	defer r1.Release()
	defer r2.Release()
	path := filepath.Join(t.TempDir(), "foreign.parquet")
	pqTestFixture(t, path, r1, r2)
	want := pqTestCat(t, w1, w2)
	// The fixture must really reach our converter as dictionary arrays:
	// pqarrow restores dictionary<string> from the stored Arrow schema.
	pf, err := file.OpenParquetFile(path, false)
	if err != nil {
		t.Fatal(err)
	}
	fr, err := pqarrow.NewFileReader(pf, pqarrow.ArrowReadProperties{}, memory.NewGoAllocator())
	if err != nil {
		t.Fatal(err)
	}
	asc, err := fr.Schema()
	pf.Close()
	if err != nil {
		t.Fatal(err)
	}
	if id := asc.Field(0).Type.ID(); id != arrow.DICTIONARY {
		t.Errorf("fixture column survey reads as %s, want a dictionary", asc.Field(0).Type)
	}
	t.Logf("fixture types as pqarrow reads them: %v", asc)
	rd, err := Open(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer rd.Close()
	got, err := ReadAll(rd)
	if err != nil {
		t.Fatal(err)
	}
	pqTestEqual(t, want, got)
}

func TestParquetUint64Overflow(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{{Name: "objid", Type: arrow.PrimitiveTypes.Uint64}}, nil)
	b := array.NewRecordBuilder(mem, sc)
	b.Field(0).(*array.Uint64Builder).AppendValues([]uint64{1, math.MaxInt64, math.MaxInt64 + 1}, nil)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "u64.parquet")
	pqTestFixture(t, path, rec)
	_, err := Read(path, ReadOptions{})
	ie := pqTestInputError(t, err, path, "objid")
	if ie.Row != 3 {
		t.Errorf("InputError row %d, want 3: %v", ie.Row, err)
	}
}

func TestParquetNestedRejected(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "ra", Type: arrow.PrimitiveTypes.Float64},
		{Name: "mags", Type: arrow.ListOf(arrow.PrimitiveTypes.Float32)},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	b.Field(0).(*array.Float64Builder).AppendValues([]float64{10, 20}, nil)
	lb := b.Field(1).(*array.ListBuilder)
	for range 2 {
		lb.Append(true)
		lb.ValueBuilder().(*array.Float32Builder).AppendValues([]float32{1, 2}, nil)
	}
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "nested.parquet")
	pqTestFixture(t, path, rec)
	_, err := Read(path, ReadOptions{})
	ie := pqTestInputError(t, err, path, "mags")
	if !strings.Contains(ie.Msg, "nested") {
		t.Errorf("error does not say the column is nested: %v", err)
	}
	got, err := Read(path, ReadOptions{Columns: []string{"ra"}})
	if err != nil {
		t.Fatal(err)
	}
	if got.Len() != 2 || got.Cols[0].F[1] != 20 {
		t.Errorf("ra read back as %v", got.Cols[0].F)
	}
}

// TestParquetTimes checks that timestamps and dates become ISO 8601 text.
func TestParquetTimes(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "t_obs", Type: &arrow.TimestampType{Unit: arrow.Microsecond, TimeZone: "UTC"}, Nullable: true},
		{Name: "night", Type: arrow.FixedWidthTypes.Date32},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	// from memory: Unix time 946684800 s is 2000-01-01T00:00:00Z, and day
	// 10957 after 1970-01-01 is 2000-01-01.
	b.Field(0).(*array.TimestampBuilder).AppendValues([]arrow.Timestamp{0, 946684800_000000, 946684800_250000}, nil)
	b.Field(0).(*array.TimestampBuilder).AppendNull()
	b.Field(1).(*array.Date32Builder).AppendValues([]arrow.Date32{0, 10957, 10958, -1}, nil)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "times.parquet")
	pqTestFixture(t, path, rec)
	got, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	wantT := []string{"1970-01-01T00:00:00Z", "2000-01-01T00:00:00Z", "2000-01-01T00:00:00.25Z", ""}
	wantD := []string{"1970-01-01", "2000-01-01", "2000-01-02", "1969-12-31"}
	for i := range 4 {
		if got.Cols[0].S[i] != wantT[i] || got.Cols[1].S[i] != wantD[i] {
			t.Errorf("row %d: got %q %q, want %q %q", i, got.Cols[0].S[i], got.Cols[1].S[i], wantT[i], wantD[i])
		}
	}
	if !got.Cols[0].IsNull(3) {
		t.Error("null timestamp not null")
	}
}

func TestParquetCorrupt(t *testing.T) {
	dir := t.TempDir()
	full := filepath.Join(dir, "good.parquet")
	if err := Write(full, pqTestTable(2000), WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(full)
	if err != nil {
		t.Fatal(err)
	}
	cases := map[string][]byte{
		"empty":      nil,
		"magic":      []byte("PAR1"),
		"text":       []byte("ra,dec,z\n1,2,3\n"),
		"half":       data[:len(data)/2],
		"nofooter":   data[:len(data)-8],
		"lastbyte":   data[:len(data)-1],
		"header":     data[:100],
		"noMagic":    append(append([]byte{}, data[:len(data)-4]...), 'X', 'X', 'X', 'X'),
		"zeroFooter": pqTestZero(data, len(data)-8-int(binary.LittleEndian.Uint32(data[len(data)-8:])), 64),
	}
	for name, b := range cases {
		t.Run(name, func(t *testing.T) {
			path := filepath.Join(dir, name+".parquet")
			if err := os.WriteFile(path, b, 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := Read(path, ReadOptions{})
			if err == nil {
				t.Fatal("no error")
			}
			pqTestInputError(t, err, path, "")
			t.Log(err)
		})
	}
}

func pqTestZero(b []byte, at, n int) []byte {
	c := append([]byte{}, b...)
	clear(c[at : at+n])
	return c
}

func TestParquetWriteErrors(t *testing.T) {
	dir := t.TempDir()
	tb := pqTestTable(10)
	tb.Meta = append(tb.Meta, KeyValue{arrowReservedKey, "x"})
	if err := Write(filepath.Join(dir, "a.parquet"), tb, WriteOptions{}); err == nil {
		t.Error("reserved metadata key accepted")
	}
	if _, err := os.Stat(filepath.Join(dir, "a.parquet")); !os.IsNotExist(err) {
		t.Error("failed write left a file")
	}
	tb.Meta = Meta{{"bad", "\xff\xfe"}}
	if err := Write(filepath.Join(dir, "c.parquet"), tb, WriteOptions{}); err == nil {
		t.Error("metadata that is not UTF-8 accepted")
	}
	if err := Write(filepath.Join(dir, "b.parquet"), &Table{}, WriteOptions{}); err == nil {
		t.Error("table without columns accepted")
	}
}

// pqTestBenchTable is a 20-column catalogue: 16 float64 (two with 1% nulls),
// 2 int64, a bool and a short string per row.
func pqTestBenchTable(n int) *Table {
	rng := rand.New(rand.NewPCG(3, 4))
	t := &Table{Meta: Meta{{"source", "benchmark"}}}
	for j := range 16 {
		c := &Column{Name: fmt.Sprintf("f%02d", j), Kind: Float64, Unit: "Mpc/h", F: make([]float64, n)}
		for i := range c.F {
			c.F[i] = rng.NormFloat64() * 100
		}
		if j < 2 {
			c.Null = make([]bool, n)
			for i := 0; i < n; i += 100 {
				c.Null[i], c.F[i] = true, math.NaN()
			}
		}
		t.Cols = append(t.Cols, c)
	}
	for j := range 2 {
		c := &Column{Name: fmt.Sprintf("i%02d", j), Kind: Int64, I: make([]int64, n)}
		for i := range c.I {
			c.I[i] = int64(rng.Uint64() >> (j * 60))
		}
		t.Cols = append(t.Cols, c)
	}
	cb := &Column{Name: "flag", Kind: Bool, B: make([]bool, n)}
	cs := &Column{Name: "name", Kind: String, S: make([]string, n)}
	for i := range n {
		cb.B[i] = rng.IntN(3) == 0
		cs.S[i] = fmt.Sprintf("G%08d", i)
	}
	t.Cols = append(t.Cols, cb, cs)
	return t
}

// pqTestDataBytes is the memory held by a table's data: 8 bytes per float64
// or int64 value, 1 per bool and null-mask entry, 16 (the string header)
// plus the text per string.
func pqTestDataBytes(t *Table) int64 {
	var n int64
	for _, c := range t.Cols {
		n += int64(8*len(c.F) + 8*len(c.I) + len(c.B) + len(c.Null) + 16*len(c.S))
		for _, s := range c.S {
			n += int64(len(s))
		}
	}
	return n
}

// pqTestPeakHeap runs f while sampling the heap every half millisecond with
// the garbage collector set to run at 10% growth, and returns the peak heap
// above the heap before f, so the figure is close to the peak of live data.
func pqTestPeakHeap(f func()) int64 {
	old := debug.SetGCPercent(10)
	defer debug.SetGCPercent(old)
	runtime.GC()
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	read := func() int64 { metrics.Read(sample); return int64(sample[0].Value.Uint64()) }
	base := read()
	var peak atomic.Int64
	stop := make(chan struct{})
	done := make(chan struct{})
	go func() {
		defer close(done)
		tick := time.NewTicker(500 * time.Microsecond)
		defer tick.Stop()
		for {
			if v := read(); v > peak.Load() {
				peak.Store(v)
			}
			select {
			case <-stop:
				return
			case <-tick.C:
			}
		}
	}()
	f()
	close(stop)
	<-done
	if v := read(); v > peak.Load() {
		peak.Store(v)
	}
	return peak.Load() - base
}

// BenchmarkReadParquet1Mx20 reads a 10^6-row, 20-column Parquet file with
// Read. The timed loop runs with the default garbage collector setting; one
// more read, untimed, measures the peak heap during the read relative to the
// bytes of the Table it returns (peak-heap/data; 1 would mean no overhead).
func BenchmarkReadParquet1Mx20(b *testing.B) {
	path := filepath.Join(b.TempDir(), "bench.parquet")
	var data int64
	func() {
		t := pqTestBenchTable(1_000_000)
		data = pqTestDataBytes(t)
		if err := Write(path, t, WriteOptions{}); err != nil {
			b.Fatal(err)
		}
	}()
	st, _ := os.Stat(path)
	read := func() *Table {
		got, err := Read(path, ReadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if got.Len() != 1_000_000 {
			b.Fatalf("read %d rows", got.Len())
		}
		return got
	}
	b.ResetTimer()
	for range b.N {
		read()
	}
	b.StopTimer()
	peak := pqTestPeakHeap(func() { read() })
	b.ReportMetric(float64(peak)/float64(data), "peak-heap/data")
	b.ReportMetric(float64(data)/1e6, "data-MB")
	b.ReportMetric(float64(st.Size())/1e6, "file-MB")
}

// BenchmarkWriteParquet1Mx20 writes the same table; an untimed extra write
// measures the peak heap during the write relative to the table's bytes
// (0 would mean no copy at all).
func BenchmarkWriteParquet1Mx20(b *testing.B) {
	t := pqTestBenchTable(1_000_000)
	data := pqTestDataBytes(t)
	path := filepath.Join(b.TempDir(), "bench.parquet")
	write := func() {
		if err := Write(path, t, WriteOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ResetTimer()
	for range b.N {
		write()
	}
	b.StopTimer()
	peak := pqTestPeakHeap(write)
	b.ReportMetric(float64(peak)/float64(data), "peak-heap/data")
}
