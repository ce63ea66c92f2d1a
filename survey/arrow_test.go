package survey

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/decimal128"
	"github.com/apache/arrow/go/v15/arrow/float16"
	"github.com/apache/arrow/go/v15/arrow/ipc"
	"github.com/apache/arrow/go/v15/arrow/memory"
)

func TestArrowRoundTrip(t *testing.T) {
	for _, n := range []int{0, 1, 1000, 2*arrowChunkRows + 17} {
		t.Run(fmt.Sprint(n), func(t *testing.T) {
			want := pqTestTable(n)
			path := filepath.Join(t.TempDir(), "cat.arrow")
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

// TestArrowIndependentDecode reads our IPC output with the Arrow library's
// own reader, without our conversion, and checks the types, values, nulls
// and metadata it sees.
func TestArrowIndependentDecode(t *testing.T) {
	want := pqTestTable(arrowChunkRows + 10)
	var buf bytes.Buffer // not seekable: writeArrow must cope
	if err := writeArrow(&buf, want); err != nil {
		t.Fatal(err)
	}
	ir, err := ipc.NewFileReader(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	defer ir.Close()
	if ir.NumRecords() != 2 {
		t.Errorf("%d record batches, want 2", ir.NumRecords())
	}
	md := ir.Schema().Metadata()
	for i, kv := range want.Meta {
		if md.Keys()[i] != kv.Key || md.Values()[i] != kv.Value {
			t.Errorf("schema metadata %d is %.40q, want %.40q", i, md.Keys()[i], kv.Key)
		}
	}
	wantType := map[Kind]arrow.DataType{Float64: arrow.PrimitiveTypes.Float64, Int64: arrow.PrimitiveTypes.Int64,
		Bool: arrow.FixedWidthTypes.Boolean, String: arrow.BinaryTypes.String}
	row := 0
	for k := range ir.NumRecords() {
		rec, err := ir.Record(k)
		if err != nil {
			t.Fatal(err)
		}
		for j, c := range want.Cols {
			a := rec.Column(j)
			if !arrow.TypeEqual(a.DataType(), wantType[c.Kind]) {
				t.Fatalf("column %q has type %s", c.Name, a.DataType())
			}
			for i := range a.Len() {
				w := row + i
				if a.IsNull(i) != c.IsNull(w) {
					t.Fatalf("column %q row %d: null %v, want %v", c.Name, w, a.IsNull(i), c.IsNull(w))
				}
				if a.IsNull(i) {
					continue
				}
				var ok bool
				switch a := a.(type) {
				case *array.Float64:
					ok = math.Float64bits(a.Value(i)) == math.Float64bits(c.F[w]) || math.IsNaN(c.F[w]) && math.IsNaN(a.Value(i))
				case *array.Int64:
					ok = a.Value(i) == c.I[w]
				case *array.Boolean:
					ok = a.Value(i) == c.B[w]
				case *array.String:
					ok = a.Value(i) == c.S[w]
				}
				if !ok {
					t.Fatalf("column %q row %d: got %v, want %q", c.Name, w, a.ValueStr(i), c.Format(w))
				}
			}
		}
		row += int(rec.NumRows())
	}
	if row != want.Len() {
		t.Errorf("read %d rows, want %d", row, want.Len())
	}
}

// arrowTestFixture writes records with the Arrow library's IPC file writer.
func arrowTestFixture(t *testing.T, path string, recs ...arrow.Record) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	w, err := ipc.NewFileWriter(f, ipc.WithSchema(recs[0].Schema()))
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range recs {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func TestArrowForeignTypes(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	rec, want := pqTestForeignRecord(t, mem, 0, 1000)
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "foreign.arrow")
	arrowTestFixture(t, path, rec)
	r, err := Open(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	got := &Table{Meta: r.Schema().Meta}
	for _, c := range r.Schema().Cols {
		got.Cols = append(got.Cols, c.cloneEmpty(0))
	}
	for {
		b, err := r.Next(333) // batches cut inside the record
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if b.Len() > 333 {
			t.Fatalf("Next(333) gave %d rows", b.Len())
		}
		if err := got.Append(b); err != nil {
			t.Fatal(err)
		}
	}
	pqTestEqual(t, want, got)
}

func TestArrowUint64Overflow(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{{Name: "objid", Type: arrow.PrimitiveTypes.Uint64}}, nil)
	b := array.NewRecordBuilder(mem, sc)
	b.Field(0).(*array.Uint64Builder).AppendValues([]uint64{math.MaxUint64, 5}, nil)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "u64.arrow")
	arrowTestFixture(t, path, rec)
	_, err := Read(path, ReadOptions{})
	ie := pqTestInputError(t, err, path, "objid")
	if ie.Row != 1 {
		t.Errorf("InputError row %d, want 1: %v", ie.Row, err)
	}
}

func TestArrowColumnSelection(t *testing.T) {
	want := pqTestTable(2000)
	path := filepath.Join(t.TempDir(), "cat.arrow")
	if err := Write(path, want, WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	got, err := Read(path, ReadOptions{Columns: []string{"GOOD", "obj id"}})
	if err != nil {
		t.Fatal(err)
	}
	pqTestEqual(t, &Table{Meta: want.Meta, Cols: []*Column{want.Col("good"), want.Col("Obj ID")}}, got)
	_, err = Read(path, ReadOptions{Columns: []string{"dec"}})
	pqTestInputError(t, err, path, "dec")
}

func TestArrowNestedRejected(t *testing.T) {
	mem := memory.NewGoAllocator()
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "pos", Type: arrow.StructOf(arrow.Field{Name: "x", Type: arrow.PrimitiveTypes.Float64})},
		{Name: "z", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	b := array.NewRecordBuilder(mem, sc)
	sb := b.Field(0).(*array.StructBuilder)
	sb.Append(true)
	sb.FieldBuilder(0).(*array.Float64Builder).Append(1)
	b.Field(1).(*array.Float64Builder).Append(0.1)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "nested.arrow")
	arrowTestFixture(t, path, rec)
	_, err := Read(path, ReadOptions{})
	pqTestInputError(t, err, path, "pos")
	got, err := Read(path, ReadOptions{Columns: []string{"z"}})
	if err != nil || got.Cols[0].F[0] != 0.1 {
		t.Fatalf("reading z: %v %v", got, err)
	}
}

func TestArrowCorrupt(t *testing.T) {
	dir := t.TempDir()
	full := filepath.Join(dir, "good.arrow")
	if err := Write(full, pqTestTable(3000), WriteOptions{}); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(full)
	if err != nil {
		t.Fatal(err)
	}
	cases := map[string][]byte{
		"empty":    nil,
		"magic":    []byte("ARROW1\x00\x00ARROW1"),
		"text":     []byte("ra,dec,z\n1,2,3\n"),
		"half":     data[:len(data)/2],
		"lastbyte": data[:len(data)-1],
		"noMagic":  append(append([]byte{}, data[:len(data)-6]...), "ARROW2"...),
		// The start of the footer flatbuffer (root offset and vtable).
		"footer": pqTestZero(data, len(data)-10-int(binary.LittleEndian.Uint32(data[len(data)-10:])), 16),
		// The first record batch message, after the 8-byte magic and
		// the schema message (continuation marker, int32 length, body).
		"batch": pqTestZero(data, 16+int(binary.LittleEndian.Uint32(data[12:])), 32),
	}
	for name, b := range cases {
		t.Run(name, func(t *testing.T) {
			path := filepath.Join(dir, name+".arrow")
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

// TestArrowMoreTypes covers types that reach the reader through Arrow IPC:
// float16, decimal128, the null type, binary, date64 and a dictionary of
// unsigned integers.
func TestArrowMoreTypes(t *testing.T) {
	mem := memory.NewGoAllocator()
	dictU := &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Uint8, ValueType: arrow.PrimitiveTypes.Uint32}
	md := arrow.NewMetadata([]string{"b", "a"}, []string{"2", "1"})
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "h", Type: arrow.FixedWidthTypes.Float16, Nullable: true},
		{Name: "dec", Type: &arrow.Decimal128Type{Precision: 10, Scale: 3}},
		{Name: "nothing", Type: arrow.Null, Nullable: true},
		{Name: "bin", Type: arrow.BinaryTypes.Binary},
		{Name: "d64", Type: arrow.FixedWidthTypes.Date64},
		{Name: "cls", Type: dictU, Nullable: true},
	}, &md)
	b := array.NewRecordBuilder(mem, sc)
	defer b.Release()
	hb := b.Field(0).(*array.Float16Builder)
	hb.Append(float16.New(1.5))
	hb.AppendNull()
	hb.Append(float16.New(-65504)) // from memory: the largest-magnitude finite float16
	db := b.Field(1).(*array.Decimal128Builder)
	db.Append(decimal128.FromI64(12345)) // 12.345 at scale 3
	db.Append(decimal128.FromI64(-1))
	db.Append(decimal128.FromI64(0))
	b.Field(2).(*array.NullBuilder).AppendNulls(3)
	bb := b.Field(3).(*array.BinaryBuilder)
	bb.Append([]byte{0xff, 0x00, 'a'})
	bb.Append(nil)
	bb.Append([]byte("xyz"))
	b.Field(4).(*array.Date64Builder).AppendValues([]arrow.Date64{0, 86400000, 946684800000}, nil)
	cb := b.Field(5).(*array.Uint32DictionaryBuilder)
	cb.Append(4000000000)
	cb.AppendNull()
	cb.Append(4000000000)
	rec := b.NewRecord()
	defer rec.Release()
	path := filepath.Join(t.TempDir(), "more.arrow")
	arrowTestFixture(t, path, rec)
	got, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := &Table{Meta: Meta{{"b", "2"}, {"a", "1"}}, Cols: []*Column{
		{Name: "h", Kind: Float64, F: []float64{1.5, math.NaN(), -65504}, Null: []bool{false, true, false}},
		{Name: "dec", Kind: Float64, F: []float64{12.345, -0.001, 0}},
		{Name: "nothing", Kind: Float64, F: []float64{math.NaN(), math.NaN(), math.NaN()}, Null: []bool{true, true, true}},
		{Name: "bin", Kind: String, S: []string{"\xff\x00a", "", "xyz"}},
		{Name: "d64", Kind: String, S: []string{"1970-01-01", "1970-01-02", "2000-01-01"}},
		{Name: "cls", Kind: Int64, I: []int64{4000000000, 0, 4000000000}, Null: []bool{false, true, false}},
	}}
	pqTestEqual(t, want, got)
}

// BenchmarkReadArrow1Mx20 is BenchmarkReadParquet1Mx20 for an Arrow IPC file.
func BenchmarkReadArrow1Mx20(b *testing.B) {
	path := filepath.Join(b.TempDir(), "bench.arrow")
	var data int64
	func() {
		t := pqTestBenchTable(1_000_000)
		data = pqTestDataBytes(t)
		if err := Write(path, t, WriteOptions{}); err != nil {
			b.Fatal(err)
		}
	}()
	st, _ := os.Stat(path)
	read := func() {
		got, err := Read(path, ReadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if got.Len() != 1_000_000 {
			b.Fatalf("read %d rows", got.Len())
		}
	}
	b.ResetTimer()
	for range b.N {
		read()
	}
	b.StopTimer()
	b.ReportMetric(float64(pqTestPeakHeap(read))/float64(data), "peak-heap/data")
	b.ReportMetric(float64(st.Size())/1e6, "file-MB")
}
