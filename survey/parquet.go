package survey

// Parquet reading and writing through the Arrow Go library's pqarrow layer.

import (
	"context"
	"encoding/base64"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/compress"
	"github.com/apache/arrow/go/v15/parquet/file"
	"github.com/apache/arrow/go/v15/parquet/metadata"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
)

// pqBatchRows is the number of rows a Parquet Reader returns from Next(0).
const pqBatchRows = 1 << 14

// pqStreamBuffer is the read buffer of each column chunk stream. Column chunks
// are streamed page by page through it instead of being read whole, so a file
// written with one huge row group is still read in bounded memory.
const pqStreamBuffer = 1 << 18

// pqMaxBuffer bounds a single buffer allocation while reading (2 GiB): a
// page holds at most that much (its sizes are int32), so does a batch of
// one string column (Arrow's int32 offsets), and a corrupt length must not
// be able to ask for more (see arrowLimitAllocator).
const pqMaxBuffer = 1 << 31

// pqReader streams a Parquet file column chunk by column chunk. Each output
// column has its own pqarrow leaf reader over all row groups; Next reads the
// same number of rows from each and converts them.
type pqReader struct {
	path    string
	f       *os.File
	pf      *file.Reader
	schema  *Table
	readers []*pqarrow.ColumnReader // one per schema column
	rgEnd   []int64                 // cumulative row count at the end of each row group
	rows    int64                   // row count from the file metadata
	known   bool                    // rows is plausible enough to report by NumRows
	read    int64                   // rows returned so far
	err     error                   // sticky error after a failure
}

// openParquet opens a Parquet file for streaming. Only the columns chosen by
// opt.Columns are decoded. Key-value metadata of the file (in file order,
// without pqarrow's serialised "ARROW:schema") and then any further entries of
// the stored Arrow schema's metadata become Schema().Meta; the Arrow field
// metadata "unit" and "description" (kept in the stored Arrow schema) become
// Column.Unit and Column.Desc. Nested (list, struct, map) columns are an
// error naming the column when selected.
func openParquet(path string, opt ReadOptions) (rd Reader, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	r := &pqReader{path: path, f: f}
	defer func() {
		if p := recover(); p != nil {
			err = arrowPanicError(path, "", "in the file footer or schema", p)
		}
		if err != nil {
			r.Close()
			rd = nil
		}
	}()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	mem := newArrowLimitAllocator(pqMaxBuffer)
	props := parquet.NewReaderProperties(mem)
	props.BufferedStreamEnabled = true
	props.BufferSize = pqStreamBuffer
	r.pf, err = file.NewParquetReader(f, file.WithReadProps(props))
	if err != nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "not a readable Parquet file", Err: err}
	}
	md := r.pf.MetaData()
	if md.Schema == nil || md.Schema.Root() == nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "Parquet footer has no valid schema"}
	}

	// Row counts: the file total must be the sum over row groups.
	r.rgEnd = make([]int64, r.pf.NumRowGroups())
	var sum int64
	for i := range r.rgEnd {
		n := md.RowGroup(i).NumRows()
		if n < 0 || sum+n < sum {
			return nil, &InputError{File: path, Byte: -1, Msg: fmt.Sprintf("row group %d claims %d rows", i, n)}
		}
		sum += n
		r.rgEnd[i] = sum
	}
	if md.NumRows != sum {
		return nil, &InputError{File: path, Byte: -1, Msg: fmt.Sprintf("footer claims %d rows but its row groups hold %d", md.NumRows, sum)}
	}
	r.rows = sum
	r.known = arrowPlausibleRows(sum, st.Size())
	if err := pqCheckChunks(path, md, r.pf.NumRowGroups(), st.Size()); err != nil {
		return nil, err
	}

	// pqarrow decodes a stored Arrow schema without checking the lengths
	// in it; a corrupt one could make it allocate without bound.
	if v := md.KeyValueMetadata().FindValue(arrowReservedKey); v != nil {
		if err := pqCheckStoredSchema(*v); err != nil {
			return nil, &InputError{File: path, Byte: -1, Msg: "corrupt stored Arrow schema (key " + arrowReservedKey + ")", Err: err}
		}
	}
	fr, err := pqarrow.NewFileReader(r.pf, pqarrow.ArrowReadProperties{BatchSize: pqBatchRows}, mem)
	if err != nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "cannot map the Parquet schema onto Arrow types", Err: err}
	}
	asc, err := fr.Schema()
	if err != nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "cannot map the Parquet schema onto Arrow types", Err: err}
	}
	if len(fr.Manifest.Fields) != asc.NumFields() {
		return nil, &InputError{File: path, Byte: -1, Msg: "inconsistent Parquet schema"}
	}

	// Metadata: the file's key-value list in order, then what only the
	// stored Arrow schema has.
	var meta Meta
	kv := md.KeyValueMetadata()
	meta = arrowMetaAppend(meta, arrow.NewMetadata(kv.Keys(), kv.Values()))
	meta = arrowMetaAppend(meta, asc.Metadata())
	r.schema = &Table{Meta: meta}

	names := make([]string, asc.NumFields())
	for i, fld := range asc.Fields() {
		names[i] = fld.Name
	}
	idx, err := ResolveColumns(path, names, opt.Columns)
	if err != nil {
		return nil, err
	}
	rowGroups := make([]int, len(r.rgEnd))
	for i := range rowGroups {
		rowGroups[i] = i
	}
	for _, i := range idx {
		fld := asc.Field(i)
		c, err := arrowColumnOf(fld)
		if err != nil {
			return nil, &InputError{File: path, Byte: -1, Column: fld.Name, Msg: err.Error()}
		}
		sf := &fr.Manifest.Fields[i]
		if !sf.IsLeaf() || len(sf.Children) > 0 {
			return nil, &InputError{File: path, Byte: -1, Column: fld.Name, Msg: "nested Parquet column is not supported: a catalogue column holds one scalar per row"}
		}
		// GetFieldReader reads serially (its goroutines appear only for
		// nested fields, rejected above), so a panic stays in this goroutine.
		cr, err := fr.GetFieldReader(context.Background(), i, map[int]bool{sf.ColIndex: true}, rowGroups)
		if err != nil {
			return nil, &InputError{File: path, Byte: -1, Column: fld.Name, Msg: "cannot read column", Err: err}
		}
		if cr == nil {
			return nil, &InputError{File: path, Byte: -1, Column: fld.Name, Msg: "cannot read column"}
		}
		r.readers = append(r.readers, cr)
		r.schema.Cols = append(r.schema.Cols, c)
	}
	if err := arrowCheckNames(path, r.schema.Cols); err != nil {
		return nil, err
	}
	return r, nil
}

// pqCheckChunks checks that every column chunk named by the footer lies
// inside the file's data region (after the 4-byte leading magic, before the
// footer). Arrow v15 checks this only for files from old writers; a chunk
// that runs past the end of the file makes its page reader walk an endless
// run of empty page headers, which hangs the read instead of failing it.
// Inside a bounded chunk every page header takes at least one byte, so the
// walk ends.
func pqCheckChunks(path string, md *metadata.FileMetaData, rowGroups int, size int64) error {
	const magic = 4
	end := size - int64(md.Size()) - 8 // footer, its 4-byte length and the trailing magic
	for g := 0; g < rowGroups; g++ {
		rg := md.RowGroup(g)
		for c := 0; c < rg.NumColumns(); c++ {
			col, err := rg.ColumnChunk(c)
			if err != nil {
				return &InputError{File: path, Byte: -1, Msg: fmt.Sprintf("row group %d, column chunk %d: unreadable metadata", g, c), Err: err}
			}
			start := col.DataPageOffset()
			if col.HasDictionaryPage() && col.DictionaryPageOffset() > 0 && col.DictionaryPageOffset() < start {
				start = col.DictionaryPageOffset()
			}
			n := col.TotalCompressedSize()
			if start < magic || n < 0 || n > end || start > end-n || col.NumValues() < 0 {
				return &InputError{File: path, Byte: -1, Column: strings.Join(col.PathInSchema(), "."),
					Msg: fmt.Sprintf("row group %d: column chunk at byte %d of length %d (%d values) lies outside the data region [%d, %d)",
						g, start, n, col.NumValues(), magic, end)}
			}
		}
	}
	return nil
}

func (r *pqReader) Schema() *Table { return r.schema }

// NumRows returns the row count from the file metadata, or -1 when that
// count is too large to be believed for the file's size (see arrowPlausibleRows).
func (r *pqReader) NumRows() int64 {
	if !r.known {
		return -1
	}
	return r.rows
}

// rowGroupOf returns the row group holding 0-based row i.
func (r *pqReader) rowGroupOf(i int64) int {
	for g, end := range r.rgEnd {
		if i < end {
			return g
		}
	}
	return len(r.rgEnd) - 1
}

// where describes rows [lo, hi) of the file for error messages.
func (r *pqReader) where(lo, hi int64) string {
	g0, g1 := r.rowGroupOf(lo), r.rowGroupOf(hi-1)
	if g0 == g1 {
		return fmt.Sprintf("reading rows %d-%d (row group %d)", lo+1, hi, g0)
	}
	return fmt.Sprintf("reading rows %d-%d (row groups %d-%d)", lo+1, hi, g0, g1)
}

// Next returns the next max rows (pqBatchRows when max <= 0), or fewer at
// the end of the file, reading the same rows of every selected column. After
// an error every call returns that error.
func (r *pqReader) Next(max int) (out *Table, err error) {
	if r.err != nil {
		return nil, r.err
	}
	if r.read >= r.rows || len(r.readers) == 0 {
		return nil, io.EOF
	}
	n := int64(max)
	if n <= 0 {
		n = pqBatchRows
	}
	n = min(n, r.rows-r.read)
	lo, hi := r.read, r.read+n
	column := ""
	defer func() {
		if p := recover(); p != nil {
			err = arrowPanicError(r.path, column, r.where(lo, hi), p)
		}
		if err != nil {
			out = nil
			r.err = err
		}
	}()
	out = &Table{Name: r.schema.Name}
	for j, cr := range r.readers {
		sc := r.schema.Cols[j]
		column = sc.Name
		c := sc.cloneEmpty(int(n))
		chunked, err := cr.NextBatch(n)
		if err != nil {
			return nil, &InputError{File: r.path, Byte: -1, Column: sc.Name, Msg: r.where(lo, hi), Err: err}
		}
		var got int64
		for _, a := range chunked.Chunks() {
			if err = arrowAppend(c, a, 0, a.Len(), lo+got); err != nil {
				break
			}
			got += int64(a.Len())
		}
		chunked.Release()
		if err != nil {
			if ve, ok := err.(*arrowValueError); ok {
				return nil, &InputError{File: r.path, Byte: -1, Row: ve.Row + 1, Column: sc.Name, Msg: ve.Msg}
			}
			return nil, &InputError{File: r.path, Byte: -1, Column: sc.Name, Msg: r.where(lo, hi), Err: err}
		}
		if got != n {
			return nil, &InputError{File: r.path, Byte: -1, Column: sc.Name,
				Msg: fmt.Sprintf("%s: column data ends after %d of %d rows; the file is truncated or corrupt", r.where(lo, hi), lo+got, r.rows)}
		}
		out.Cols = append(out.Cols, c)
	}
	r.read = hi
	return out, nil
}

// Close releases the column readers and closes the file.
func (r *pqReader) Close() (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = arrowPanicError(r.path, "", "closing the file", p)
		}
	}()
	for _, cr := range r.readers {
		cr.Release()
	}
	r.readers = nil
	if r.f != nil {
		err = r.f.Close()
		r.f = nil
	}
	return err
}

// pqCheckStoredSchema decodes the base64 "ARROW:schema" value the way
// pqarrow does (padded, else unpadded standard encoding) and checks the IPC
// schema message inside.
func pqCheckStoredSchema(v string) error {
	var dec []byte
	var err error
	if len(v)%4 == 0 {
		dec, err = base64.StdEncoding.DecodeString(v)
	}
	if len(dec) == 0 || err != nil {
		if dec, err = base64.RawStdEncoding.DecodeString(v); err != nil {
			return err
		}
	}
	return arrowCheckSchemaMessage(dec)
}

// writeParquet writes t as Parquet: one nullable (OPTIONAL) column per Table
// column (DOUBLE, INT64, BOOLEAN or UTF-8 BYTE_ARRAY), Snappy-compressed
// (the Parquet ecosystem's default codec: every reader has it, and it is
// cheaper to write and read than zstd), dictionary encoding for string
// columns only, data pages of format version 2, row groups of
// arrowChunkRows rows, Table.Meta as the file's key-value metadata in order,
// and the Arrow schema stored under "ARROW:schema" so the field metadata
// "unit" and "description" travel with the file.
//
// Data pages v2 are chosen because the Arrow Go v15 writer re-allocates its
// definition-level buffer on every literal run in v1 pages, which made
// columns with scattered nulls several times slower to write.
func writeParquet(w io.Writer, t *Table) error {
	if err := t.Check(); err != nil {
		return err
	}
	if len(t.Cols) == 0 {
		return fmt.Errorf("survey: a Parquet file needs at least one column")
	}
	sc, err := arrowSchemaOf(t)
	if err != nil {
		return err
	}
	mem := memory.NewGoAllocator()
	opts := []parquet.WriterProperty{
		parquet.WithAllocator(mem),
		parquet.WithCompression(compress.Codecs.Snappy),
		parquet.WithDictionaryDefault(false),
		parquet.WithMaxRowGroupLength(arrowChunkRows),
		parquet.WithDataPageVersion(parquet.DataPageV2),
		parquet.WithCreatedBy("filigree (github.com/filigree-survey/filigree)"),
	}
	for _, c := range t.Cols {
		if c.Kind == String {
			opts = append(opts, parquet.WithDictionaryPath(parquet.ColumnPath{c.Name}, true))
		}
	}
	// The wrapper hides any Close method of w: the Parquet writer closes
	// its sink, and the caller (WriteAtomic) still has to sync the file.
	fw, err := pqarrow.NewFileWriter(sc, struct{ io.Writer }{w}, parquet.NewWriterProperties(opts...),
		pqarrow.NewArrowWriterProperties(pqarrow.WithAllocator(mem), pqarrow.WithStoreSchema()))
	if err != nil {
		return err
	}
	for lo := 0; lo < t.Len(); lo += arrowChunkRows {
		hi := min(lo+arrowChunkRows, t.Len())
		rec, err := arrowRecordOf(sc, t, lo, hi, mem)
		if err != nil {
			fw.Close()
			return err
		}
		err = fw.Write(rec)
		rec.Release()
		if err != nil {
			fw.Close()
			return err
		}
	}
	return fw.Close()
}
