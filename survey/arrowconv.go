package survey

// Conversions between Arrow arrays and Table columns, shared by the Parquet
// reader and writer (parquet.go, through pqarrow) and the Arrow IPC ones
// (arrow.go).

import (
	"fmt"
	"math"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/bitutil"
	"github.com/apache/arrow/go/v15/arrow/memory"
)

// Field metadata keys under which a column's unit and description are stored
// in Arrow schemas (and, through the stored Arrow schema, in Parquet files).
const (
	arrowUnitKey = "unit"
	arrowDescKey = "description"
)

// arrowReservedKey is the file key-value entry pqarrow uses for the serialised
// Arrow schema; it is format plumbing, not table metadata.
const arrowReservedKey = "ARROW:schema"

// arrowChunkRows is the number of rows converted into one Arrow record when
// writing, so a writer holds at most this many rows of converted data besides
// the Table itself. 1<<17 rows of 20 float64 columns is 20 MiB.
const arrowChunkRows = 1 << 17

// arrowKindOf returns the column kind an Arrow type is read as, or an error
// message for types the catalogue cannot hold. Integers of every width and
// sign become Int64; float16/32/64 and decimals become Float64 (decimals
// rounded to the nearest float64); the null type becomes an all-null Float64
// column; strings and binaries become String (binary bytes kept as they are);
// timestamps and dates become String in ISO 8601 (timestamps in UTC with a
// trailing "Z", RFC 3339 with nanoseconds as needed; dates as YYYY-MM-DD);
// dictionaries take the kind of their values.
func arrowKindOf(dt arrow.DataType) (Kind, error) {
	switch dt.ID() {
	case arrow.INT8, arrow.INT16, arrow.INT32, arrow.INT64,
		arrow.UINT8, arrow.UINT16, arrow.UINT32, arrow.UINT64:
		return Int64, nil
	case arrow.FLOAT16, arrow.FLOAT32, arrow.FLOAT64, arrow.DECIMAL128, arrow.DECIMAL256, arrow.NULL:
		return Float64, nil
	case arrow.BOOL:
		return Bool, nil
	case arrow.STRING, arrow.LARGE_STRING, arrow.BINARY, arrow.LARGE_BINARY,
		arrow.STRING_VIEW, arrow.BINARY_VIEW, arrow.TIMESTAMP, arrow.DATE32, arrow.DATE64:
		return String, nil
	case arrow.DICTIONARY:
		vt := dt.(*arrow.DictionaryType).ValueType
		if vt.ID() == arrow.DICTIONARY {
			break
		}
		return arrowKindOf(vt)
	case arrow.LIST, arrow.LARGE_LIST, arrow.FIXED_SIZE_LIST, arrow.LIST_VIEW, arrow.LARGE_LIST_VIEW,
		arrow.STRUCT, arrow.MAP, arrow.SPARSE_UNION, arrow.DENSE_UNION, arrow.RUN_END_ENCODED:
		return 0, fmt.Errorf("nested type %s is not supported: a catalogue column holds one scalar per row", dt)
	}
	return 0, fmt.Errorf("type %s is not supported; expected an integer, floating-point, boolean, string, binary, timestamp or date column", dt)
}

// arrowColumnOf returns an empty column (no rows) for an Arrow field, taking
// the unit and description from the field metadata.
func arrowColumnOf(f arrow.Field) (*Column, error) {
	k, err := arrowKindOf(f.Type)
	if err != nil {
		return nil, err
	}
	c := NewColumn(f.Name, k, 0)
	if i := f.Metadata.FindKey(arrowUnitKey); i >= 0 {
		c.Unit = f.Metadata.Values()[i]
	}
	if i := f.Metadata.FindKey(arrowDescKey); i >= 0 {
		c.Desc = f.Metadata.Values()[i]
	}
	return c, nil
}

// arrowMetaAppend appends the entries of an Arrow metadata list to m, in
// order, skipping format plumbing and keys already present (the first
// occurrence of a key wins).
func arrowMetaAppend(m Meta, md arrow.Metadata) Meta {
	keys, vals := md.Keys(), md.Values()
	for i, k := range keys {
		if k == arrowReservedKey {
			continue
		}
		if _, ok := m.Get(k); ok {
			continue
		}
		m = append(m, KeyValue{k, vals[i]})
	}
	return m
}

// arrowValueError is a problem with one value, at a 0-based row of the file.
type arrowValueError struct {
	Row int64
	Msg string
}

func (e *arrowValueError) Error() string { return fmt.Sprintf("row %d: %s", e.Row+1, e.Msg) }

// arrowGetter reads element i of an Arrow array as one of the four kinds.
// s returns a string that may alias Arrow memory; callers copy it.
type arrowGetter struct {
	f func(i int) float64
	n func(i int) (int64, bool) // false when the value does not fit in int64
	b func(i int) bool
	s func(i int) string
}

// arrowGetterOf returns the getter for a non-dictionary array.
func arrowGetterOf(arr arrow.Array) (arrowGetter, error) {
	var g arrowGetter
	switch a := arr.(type) {
	case *array.Float64:
		g.f = func(i int) float64 { return a.Value(i) }
	case *array.Float32:
		g.f = func(i int) float64 { return float64(a.Value(i)) }
	case *array.Float16:
		g.f = func(i int) float64 { return float64(a.Value(i).Float32()) }
	case *array.Decimal128:
		scale := a.DataType().(*arrow.Decimal128Type).Scale
		g.f = func(i int) float64 { return a.Value(i).ToFloat64(scale) }
	case *array.Decimal256:
		scale := a.DataType().(*arrow.Decimal256Type).Scale
		g.f = func(i int) float64 { return a.Value(i).ToFloat64(scale) }
	case *array.Null:
		g.f = func(int) float64 { return nan }
	case *array.Int8:
		g.n = func(i int) (int64, bool) { return int64(a.Value(i)), true }
	case *array.Int16:
		g.n = func(i int) (int64, bool) { return int64(a.Value(i)), true }
	case *array.Int32:
		g.n = func(i int) (int64, bool) { return int64(a.Value(i)), true }
	case *array.Int64:
		g.n = func(i int) (int64, bool) { return a.Value(i), true }
	case *array.Uint8:
		g.n = func(i int) (int64, bool) { return int64(a.Value(i)), true }
	case *array.Uint16:
		g.n = func(i int) (int64, bool) { return int64(a.Value(i)), true }
	case *array.Uint32:
		g.n = func(i int) (int64, bool) { return int64(a.Value(i)), true }
	case *array.Uint64:
		g.n = func(i int) (int64, bool) { v := a.Value(i); return int64(v), v <= math.MaxInt64 }
	case *array.Boolean:
		g.b = a.Value
	case *array.String:
		g.s = a.Value
	case *array.LargeString:
		g.s = a.Value
	case *array.StringView:
		g.s = a.Value
	case *array.Binary:
		g.s = a.ValueString
	case *array.LargeBinary:
		g.s = a.ValueString
	case *array.BinaryView:
		g.s = a.ValueString
	case *array.Timestamp:
		unit := a.DataType().(*arrow.TimestampType).Unit
		g.s = func(i int) string { return a.Value(i).ToTime(unit).UTC().Format(time.RFC3339Nano) }
	case *array.Date32:
		g.s = func(i int) string { return a.Value(i).ToTime().Format(time.DateOnly) }
	case *array.Date64:
		g.s = func(i int) string { return a.Value(i).ToTime().Format(time.DateOnly) }
	default:
		return g, fmt.Errorf("type %s is not supported", arr.DataType())
	}
	return g, nil
}

// arrowAppend appends rows [lo, hi) of arr to c, whose kind must be
// arrowKindOf(arr.DataType()). Null rows are marked in c.Null, with NaN under
// a Float64 null and the zero value under the others. base is the 0-based
// file row of arr's row 0, for errors: a uint64 above MaxInt64 and a
// dictionary index out of range are *arrowValueError.
func arrowAppend(c *Column, arr arrow.Array, lo, hi int, base int64) error {
	start := c.Len()
	n := hi - lo
	if n <= 0 {
		return nil
	}
	var mask []bool
	switch a := arr.(type) {
	case *array.Float64:
		// Fast paths for the common plain kinds: one copy, then fix nulls.
		c.F = append(c.F, a.Float64Values()[lo:hi]...)
		if a.NullN() > 0 {
			mask = make([]bool, n)
			for i := lo; i < hi; i++ {
				if a.IsNull(i) {
					mask[i-lo] = true
					c.F[start+i-lo] = nan
				}
			}
		}
	case *array.Int64:
		c.I = append(c.I, a.Int64Values()[lo:hi]...)
		if a.NullN() > 0 {
			mask = make([]bool, n)
			for i := lo; i < hi; i++ {
				if a.IsNull(i) {
					mask[i-lo] = true
					c.I[start+i-lo] = 0
				}
			}
		}
	case *array.Dictionary:
		var err error
		if mask, err = arrowAppendDict(c, a, lo, hi, base); err != nil {
			return err
		}
	default:
		var err error
		if mask, err = arrowAppendPlain(c, arr, lo, hi, base); err != nil {
			return err
		}
	}
	switch {
	case mask != nil:
		if c.Null == nil {
			c.Null = make([]bool, start, start+n)
		}
		c.Null = append(c.Null, mask...)
	case c.Null != nil:
		c.Null = append(c.Null, make([]bool, n)...)
	}
	return nil
}

// arrowAppendPlain appends rows [lo, hi) of a non-dictionary array through
// its getter and returns the null mask of those rows (nil when none is null).
func arrowAppendPlain(c *Column, arr arrow.Array, lo, hi int, base int64) ([]bool, error) {
	g, err := arrowGetterOf(arr)
	if err != nil {
		return nil, err
	}
	n := hi - lo
	var mask []bool
	isNull := func(i int) bool {
		if arr.IsNull(i) {
			if mask == nil {
				mask = make([]bool, n)
			}
			mask[i-lo] = true
			return true
		}
		return false
	}
	if arr.DataType().ID() == arrow.NULL {
		mask = make([]bool, n)
		for k := range mask {
			mask[k] = true
		}
		for range n {
			c.F = append(c.F, nan)
		}
		return mask, nil
	}
	switch c.Kind {
	case Float64:
		for i := lo; i < hi; i++ {
			if isNull(i) {
				c.F = append(c.F, nan)
				continue
			}
			c.F = append(c.F, g.f(i))
		}
	case Int64:
		for i := lo; i < hi; i++ {
			if isNull(i) {
				c.I = append(c.I, 0)
				continue
			}
			v, ok := g.n(i)
			if !ok {
				return nil, &arrowValueError{base + int64(i), fmt.Sprintf("unsigned value %d exceeds the int64 range of catalogue integers", uint64(v))}
			}
			c.I = append(c.I, v)
		}
	case Bool:
		for i := lo; i < hi; i++ {
			c.B = append(c.B, !isNull(i) && g.b(i))
		}
	case String:
		// Copy the batch's text into one Go string and slice the rows out
		// of it: one allocation per batch instead of one per row.
		total := 0
		for i := lo; i < hi; i++ {
			if !arr.IsNull(i) {
				total += len(g.s(i))
			}
		}
		var sb strings.Builder
		sb.Grow(total)
		for i := lo; i < hi; i++ {
			if !arr.IsNull(i) {
				sb.WriteString(g.s(i))
			}
		}
		all := sb.String()
		off := 0
		for i := lo; i < hi; i++ {
			if isNull(i) {
				c.S = append(c.S, "")
				continue
			}
			m := len(g.s(i))
			if off+m > len(all) {
				// Only a getter that changes its answer (none does) gets here.
				return nil, &arrowValueError{base + int64(i), "string value changed while reading"}
			}
			c.S = append(c.S, all[off:off+m])
			off += m
		}
	}
	return mask, nil
}

// arrowAppendDict appends rows [lo, hi) of a dictionary-encoded array,
// decoding each index through the dictionary. A row is null when its index
// or the dictionary entry it points to is null. Dictionary strings are copied
// once per batch and shared by every row that uses them.
func arrowAppendDict(c *Column, a *array.Dictionary, lo, hi int, base int64) ([]bool, error) {
	dict := a.Dictionary()
	g, err := arrowGetterOf(dict)
	if err != nil {
		return nil, err
	}
	nullType := dict.DataType().ID() == arrow.NULL
	n, nd := hi-lo, dict.Len()
	var mask []bool
	var cache []string
	var cached []bool
	if c.Kind == String {
		cache, cached = make([]string, nd), make([]bool, nd)
	}
	for i := lo; i < hi; i++ {
		j := -1
		if a.IsValid(i) {
			j = a.GetValueIndex(i)
			if j < 0 || j >= nd {
				return nil, &arrowValueError{base + int64(i), fmt.Sprintf("dictionary index %d outside the dictionary of %d values", j, nd)}
			}
			if nullType || dict.IsNull(j) {
				j = -1
			}
		}
		if j < 0 {
			if mask == nil {
				mask = make([]bool, n)
			}
			mask[i-lo] = true
		}
		switch c.Kind {
		case Float64:
			v := nan
			if j >= 0 {
				v = g.f(j)
			}
			c.F = append(c.F, v)
		case Int64:
			var v int64
			if j >= 0 {
				var ok bool
				if v, ok = g.n(j); !ok {
					return nil, &arrowValueError{base + int64(i), fmt.Sprintf("unsigned value %d exceeds the int64 range of catalogue integers", uint64(v))}
				}
			}
			c.I = append(c.I, v)
		case Bool:
			c.B = append(c.B, j >= 0 && g.b(j))
		case String:
			var v string
			if j >= 0 {
				if !cached[j] {
					cache[j], cached[j] = strings.Clone(g.s(j)), true
				}
				v = cache[j]
			}
			c.S = append(c.S, v)
		}
	}
	return mask, nil
}

// arrowSchemaOf returns the Arrow schema a Table is written with: one
// nullable field per column (float64, int64, bool or utf8) carrying "unit"
// and "description" field metadata when set, and Table.Meta, in order, as the
// schema metadata.
func arrowSchemaOf(t *Table) (*arrow.Schema, error) {
	fields := make([]arrow.Field, len(t.Cols))
	for j, c := range t.Cols {
		var dt arrow.DataType
		switch c.Kind {
		case Float64:
			dt = arrow.PrimitiveTypes.Float64
		case Int64:
			dt = arrow.PrimitiveTypes.Int64
		case Bool:
			dt = arrow.FixedWidthTypes.Boolean
		case String:
			dt = arrow.BinaryTypes.String
		default:
			return nil, fmt.Errorf("survey: column %q has unknown kind %s", c.Name, c.Kind)
		}
		var keys, vals []string
		if c.Unit != "" {
			keys, vals = append(keys, arrowUnitKey), append(vals, c.Unit)
		}
		if c.Desc != "" {
			keys, vals = append(keys, arrowDescKey), append(vals, c.Desc)
		}
		fields[j] = arrow.Field{Name: c.Name, Type: dt, Nullable: true, Metadata: arrow.NewMetadata(keys, vals)}
	}
	keys := make([]string, 0, len(t.Meta))
	vals := make([]string, 0, len(t.Meta))
	seen := make(map[string]bool, len(t.Meta))
	for _, kv := range t.Meta {
		if kv.Key == arrowReservedKey {
			return nil, fmt.Errorf("survey: metadata key %q is reserved by the Parquet/Arrow formats", kv.Key)
		}
		if !utf8.ValidString(kv.Key) || !utf8.ValidString(kv.Value) {
			// Parquet writers silently drop such entries; say so instead.
			return nil, fmt.Errorf("survey: metadata key %q: key and value must be valid UTF-8", kv.Key)
		}
		if seen[kv.Key] {
			return nil, fmt.Errorf("survey: metadata key %q appears twice", kv.Key)
		}
		seen[kv.Key] = true
		keys, vals = append(keys, kv.Key), append(vals, kv.Value)
	}
	md := arrow.NewMetadata(keys, vals)
	return arrow.NewSchema(fields, &md), nil
}

// arrowRecordOf returns rows [lo, hi) of t as an Arrow record of schema sc
// (from arrowSchemaOf). Float64 and Int64 values are not copied: the record's
// buffers alias the column slices, so t must not change while the record is
// in use. Validity bitmaps, booleans and strings are built in mem.
func arrowRecordOf(sc *arrow.Schema, t *Table, lo, hi int, mem memory.Allocator) (arrow.Record, error) {
	n := hi - lo
	cols := make([]arrow.Array, len(t.Cols))
	defer func() {
		for _, a := range cols {
			if a != nil {
				a.Release()
			}
		}
	}()
	for j, c := range t.Cols {
		validity, nulls := arrowValidity(c, lo, hi, mem)
		var data arrow.ArrayData
		switch c.Kind {
		case Float64:
			vals := memory.NewBufferBytes(arrow.Float64Traits.CastToBytes(c.F[lo:hi]))
			data = array.NewData(sc.Field(j).Type, n, []*memory.Buffer{validity, vals}, nil, nulls, 0)
		case Int64:
			vals := memory.NewBufferBytes(arrow.Int64Traits.CastToBytes(c.I[lo:hi]))
			data = array.NewData(sc.Field(j).Type, n, []*memory.Buffer{validity, vals}, nil, nulls, 0)
		case Bool:
			vals := memory.NewResizableBuffer(mem)
			vals.Resize(int(bitutil.BytesForBits(int64(n))))
			bits := vals.Bytes()
			clear(bits)
			for i, v := range c.B[lo:hi] {
				if v {
					bitutil.SetBit(bits, i)
				}
			}
			data = array.NewData(sc.Field(j).Type, n, []*memory.Buffer{validity, vals}, nil, nulls, 0)
			vals.Release()
		case String:
			total := 0
			for _, s := range c.S[lo:hi] {
				total += len(s)
			}
			if total > math.MaxInt32 {
				if validity != nil {
					validity.Release()
				}
				return nil, fmt.Errorf("survey: column %q holds %d bytes of text in rows %d-%d, more than an Arrow string array can (2 GiB)", c.Name, total, lo+1, hi)
			}
			offs := memory.NewResizableBuffer(mem)
			offs.Resize((n + 1) * arrow.Int32SizeBytes)
			o := arrow.Int32Traits.CastFromBytes(offs.Bytes())
			body := memory.NewResizableBuffer(mem)
			body.Resize(total)
			b := body.Bytes()
			pos := 0
			for i, s := range c.S[lo:hi] {
				o[i] = int32(pos)
				if c.IsNull(lo + i) {
					continue
				}
				pos += copy(b[pos:], s)
			}
			o[n] = int32(pos)
			body.Resize(pos)
			data = array.NewData(sc.Field(j).Type, n, []*memory.Buffer{validity, offs, body}, nil, nulls, 0)
			offs.Release()
			body.Release()
		}
		if validity != nil {
			validity.Release()
		}
		cols[j] = array.MakeFromData(data)
		data.Release()
	}
	return array.NewRecord(sc, cols, int64(n)), nil
}

// arrowValidity returns the validity bitmap of rows [lo, hi) of c and the
// null count, or nil and 0 when none of them is null.
func arrowValidity(c *Column, lo, hi int, mem memory.Allocator) (*memory.Buffer, int) {
	if c.Null == nil {
		return nil, 0
	}
	nulls := 0
	for _, v := range c.Null[lo:hi] {
		if v {
			nulls++
		}
	}
	if nulls == 0 {
		return nil, 0
	}
	buf := memory.NewResizableBuffer(mem)
	buf.Resize(int(bitutil.BytesForBits(int64(hi - lo))))
	bits := buf.Bytes()
	clear(bits)
	for i, v := range c.Null[lo:hi] {
		if !v {
			bitutil.SetBit(bits, i)
		}
	}
	return buf, nulls
}

// arrowPanicError turns a value recovered from a panic inside the Arrow or
// Parquet libraries into an InputError: corrupt input can make them index out
// of range, and the caller must get an error, not a crash.
func arrowPanicError(file, column, where string, p any) *InputError {
	msg := "corrupt or unsupported data"
	if where != "" {
		msg += " " + where
	}
	return &InputError{File: file, Byte: -1, Column: column, Msg: msg, Err: fmt.Errorf("decoder failed: %v", p)}
}

// arrowPlausibleRows reports whether a row count claimed by a file's metadata
// is believable for a file of size bytes, so it can be used to preallocate.
// Compression and run-length encoding can make a row cost well under a byte,
// so the bound is generous (1024 rows per byte, and any count up to 2^20); a
// count above it is treated as unknown rather than trusted, so a corrupt
// header cannot make a reader allocate terabytes before finding out.
func arrowPlausibleRows(rows, size int64) bool {
	if rows < 0 {
		return false
	}
	if rows <= 1<<20 {
		return true
	}
	return size > 0 && rows/1024 <= size
}

// arrowLimitAllocator is a Go allocator that refuses single allocations
// above limit bytes by panicking (which the readers recover into an
// InputError). The Arrow and Parquet decoders size buffers from lengths
// stored in the file before reading the bytes, so without a limit a few
// corrupt bytes could ask for more memory than the machine has, which the Go
// runtime treats as fatal rather than as a panic.
type arrowLimitAllocator struct {
	memory.Allocator
	limit int
}

func newArrowLimitAllocator(limit int64) arrowLimitAllocator {
	return arrowLimitAllocator{memory.NewGoAllocator(), int(min(limit, math.MaxInt))}
}

func (a arrowLimitAllocator) check(n int) {
	if n < 0 || n > a.limit {
		panic(fmt.Sprintf("a length in the file asks for a buffer of %d bytes, over the %d-byte limit", n, a.limit))
	}
}

func (a arrowLimitAllocator) Allocate(n int) []byte {
	a.check(n)
	return a.Allocator.Allocate(n)
}

func (a arrowLimitAllocator) Reallocate(n int, b []byte) []byte {
	a.check(n)
	return a.Allocator.Reallocate(n, b)
}

// arrowCheckNames returns an InputError when two selected columns share a
// name, which a Table cannot hold (Table.Check).
func arrowCheckNames(path string, cols []*Column) error {
	seen := make(map[string]bool, len(cols))
	for _, c := range cols {
		if seen[c.Name] {
			return &InputError{File: path, Byte: -1, Column: c.Name, Msg: "column name appears more than once among the columns read"}
		}
		seen[c.Name] = true
	}
	return nil
}
