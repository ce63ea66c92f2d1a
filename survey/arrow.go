package survey

// Arrow IPC file format (.arrow, Feather v2) reading and writing.

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/ipc"
	"github.com/apache/arrow/go/v15/arrow/memory"
)

// arrowReader streams an Arrow IPC file record batch by record batch. Only
// one record batch is held at a time; Next hands out its rows, converted,
// in pieces of at most max rows.
type arrowReader struct {
	path   string
	f      *os.File
	ir     *ipc.FileReader
	schema *Table
	idx    []int        // record column of each schema column
	nrec   int          // record batches in the file
	rec    arrow.Record // current record batch, nil between batches
	base   int64        // file row of rec's first row
	off    int          // next row of rec to return
	next   int          // index of the next record batch to load
	rows   int64        // total rows over all record batches (from their headers)
	known  bool         // rows is plausible enough to report by NumRows
	read   int64        // rows returned so far
	err    error        // sticky error after a failure
	mem    memory.Allocator
}

// openArrow opens an Arrow IPC file for streaming. The footer and every
// record batch header are checked against the file size before the Arrow
// library reads them. Schema metadata becomes Schema().Meta in order; field
// metadata "unit" and "description" become Column.Unit and Column.Desc.
// All columns of a record batch are loaded (the format has no column
// projection), but only the chosen ones are converted.
func openArrow(path string, opt ReadOptions) (rd Reader, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	r := &arrowReader{path: path, f: f}
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
	rows, err := arrowCheckFile(f, st.Size())
	if err != nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "not a readable Arrow IPC file", Err: err}
	}
	r.rows, r.known = rows, arrowPlausibleRows(rows, st.Size())
	// No buffer can exceed the file, or the checked uncompressed size of a
	// compressed buffer.
	r.mem = newArrowLimitAllocator(max(st.Size(), arrowMaxBuffer) + 64)
	r.ir, err = ipc.NewFileReader(f, ipc.WithAllocator(r.mem))
	if err != nil {
		return nil, &InputError{File: path, Byte: -1, Msg: "not a readable Arrow IPC file", Err: err}
	}
	r.nrec = r.ir.NumRecords()
	asc := r.ir.Schema()
	r.schema = &Table{Meta: arrowMetaAppend(nil, asc.Metadata())}
	names := make([]string, asc.NumFields())
	for i, fld := range asc.Fields() {
		names[i] = fld.Name
	}
	if r.idx, err = ResolveColumns(path, names, opt.Columns); err != nil {
		return nil, err
	}
	for _, i := range r.idx {
		c, err := arrowColumnOf(asc.Field(i))
		if err != nil {
			return nil, &InputError{File: path, Byte: -1, Column: asc.Field(i).Name, Msg: err.Error()}
		}
		r.schema.Cols = append(r.schema.Cols, c)
	}
	if err := arrowCheckNames(path, r.schema.Cols); err != nil {
		return nil, err
	}
	return r, nil
}

func (r *arrowReader) Schema() *Table { return r.schema }

// NumRows returns the row count summed over the record batch headers, or -1
// when it is too large to be believed for the file's size.
func (r *arrowReader) NumRows() int64 {
	if !r.known {
		return -1
	}
	return r.rows
}

// Next returns up to max rows (max <= 0: the rest of the current record
// batch), never crossing a record batch boundary. After an error every call
// returns that error.
func (r *arrowReader) Next(max int) (out *Table, err error) {
	if r.err != nil {
		return nil, r.err
	}
	column, where := "", fmt.Sprintf("in record batch %d", r.next)
	defer func() {
		if p := recover(); p != nil {
			err = arrowPanicError(r.path, column, where, p)
		}
		if err != nil {
			out = nil
			r.err = err
		}
	}()
	for r.rec == nil || r.off >= int(r.rec.NumRows()) {
		if r.rec != nil {
			r.base += r.rec.NumRows()
			r.rec.Release()
			r.rec = nil
		}
		if r.next >= r.nrec {
			return nil, io.EOF
		}
		where = fmt.Sprintf("in record batch %d", r.next)
		rec, err := r.ir.RecordAt(r.next)
		if err != nil {
			return nil, &InputError{File: r.path, Byte: -1, Msg: "reading " + where[3:], Err: err}
		}
		r.rec, r.off = rec, 0
		r.next++
		for j, i := range r.idx {
			if a := rec.Column(i); int64(a.Len()) != rec.NumRows() {
				return nil, &InputError{File: r.path, Byte: -1, Column: r.schema.Cols[j].Name,
					Msg: fmt.Sprintf("%s: column has %d rows, the batch %d", where, a.Len(), rec.NumRows())}
			}
		}
	}
	n := int(r.rec.NumRows()) - r.off
	if max > 0 && max < n {
		n = max
	}
	out = &Table{Name: r.schema.Name}
	for j, i := range r.idx {
		sc := r.schema.Cols[j]
		column = sc.Name
		c := sc.cloneEmpty(n)
		if err := arrowAppend(c, r.rec.Column(i), r.off, r.off+n, r.base); err != nil {
			if ve, ok := err.(*arrowValueError); ok {
				return nil, &InputError{File: r.path, Byte: -1, Row: ve.Row + 1, Column: sc.Name, Msg: ve.Msg}
			}
			return nil, &InputError{File: r.path, Byte: -1, Column: sc.Name, Msg: where, Err: err}
		}
		out.Cols = append(out.Cols, c)
	}
	r.off += n
	r.read += int64(n)
	return out, nil
}

// Close releases the current record batch and closes the file.
func (r *arrowReader) Close() (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = arrowPanicError(r.path, "", "closing the file", p)
		}
	}()
	if r.rec != nil {
		r.rec.Release()
		r.rec = nil
	}
	if r.ir != nil {
		r.ir.Close()
		r.ir = nil
	}
	if r.f != nil {
		err = r.f.Close()
		r.f = nil
	}
	return err
}

// writeArrow writes t as an Arrow IPC file: one nullable field per column
// (float64, int64, bool or utf8, uncompressed), "unit" and "description"
// field metadata, Table.Meta as the schema metadata in order, and record
// batches of arrowChunkRows rows.
func writeArrow(w io.Writer, t *Table) error {
	if err := t.Check(); err != nil {
		return err
	}
	sc, err := arrowSchemaOf(t)
	if err != nil {
		return err
	}
	mem := memory.NewGoAllocator()
	fw, err := ipc.NewFileWriter(&arrowCountingWriter{w: w}, ipc.WithSchema(sc), ipc.WithAllocator(mem))
	if err != nil {
		return err
	}
	for lo := 0; lo < t.Len(); lo += arrowChunkRows {
		hi := min(lo+arrowChunkRows, t.Len())
		rec, err := arrowRecordOf(sc, t, lo, hi, mem)
		if err != nil {
			return err
		}
		err = fw.Write(rec)
		rec.Release()
		if err != nil {
			return err
		}
	}
	return fw.Close()
}

// arrowCountingWriter gives an io.Writer the one Seek the IPC file writer
// uses, asking for the current position, so any writer can take a file.
type arrowCountingWriter struct {
	w   io.Writer
	pos int64
}

func (c *arrowCountingWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.pos += int64(n)
	return n, err
}

func (c *arrowCountingWriter) Seek(offset int64, whence int) (int64, error) {
	if offset == 0 && whence == io.SeekCurrent {
		return c.pos, nil
	}
	return 0, errors.New("survey: Arrow IPC output cannot seek")
}

// The Arrow IPC file format (Arrow Columnar Format specification, "IPC File
// Format"): "ARROW1", padding, the stream of encapsulated messages, a Footer
// flatbuffer, its int32 length and "ARROW1" again. The Footer lists Blocks
// (int64 offset, int32 metadata length, int64 body length) for dictionary and
// record batches; each block's metadata is a Message flatbuffer whose header
// is a RecordBatch (or a DictionaryBatch wrapping one) giving the row count
// and the (offset, length) of every body buffer.
//
// arrowCheckFile reads the footer and every block's message header, checks
// that all offsets and lengths fall inside the file (the Arrow library
// allocates whatever a header claims before reading it), and returns the
// total row count of the record batches.
func arrowCheckFile(f io.ReaderAt, size int64) (rows int64, err error) {
	defer func() {
		if p := recover(); p != nil {
			rows, err = 0, fmt.Errorf("malformed flatbuffer: %v", p)
		}
	}()
	const magic = "ARROW1"
	if size < 2*8+4 {
		return 0, fmt.Errorf("file of %d bytes is too small", size)
	}
	tail := make([]byte, 10)
	if _, err := f.ReadAt(tail, size-10); err != nil {
		return 0, err
	}
	head := make([]byte, 6)
	if _, err := f.ReadAt(head, 0); err != nil {
		return 0, err
	}
	if string(tail[4:]) != magic || string(head) != magic {
		return 0, errors.New("no ARROW1 magic at the start and end (a truncated file, or an Arrow stream rather than a file)")
	}
	flen := int64(binary.LittleEndian.Uint32(tail))
	fstart := size - 10 - flen
	if flen <= 0 || fstart < 8 {
		return 0, fmt.Errorf("footer length %d does not fit in the file", flen)
	}
	fb := make([]byte, flen)
	if _, err := f.ReadAt(fb, fstart); err != nil {
		return 0, err
	}
	footer := arrowFB(fb)
	root := footer.root()
	s, ok := footer.table(root, 1)
	if !ok {
		return 0, errors.New("footer has no schema")
	}
	footer.checkSchema(s)
	for slot, isRec := range []bool{false, true} { // dictionaries, recordBatches
		vec, ok := footer.field(root, 2+slot)
		if !ok {
			continue
		}
		vec = footer.deref(vec)
		n := int(footer.u32(vec))
		if n < 0 || n > len(fb)/24 {
			return 0, fmt.Errorf("footer lists %d blocks", n)
		}
		for k := range n {
			b := vec + 4 + 24*k
			off := int64(binary.LittleEndian.Uint64(fb[b:]))
			meta := int64(int32(binary.LittleEndian.Uint32(fb[b+8:])))
			body := int64(binary.LittleEndian.Uint64(fb[b+16:]))
			if off < 8 || meta < 8 || body < 0 || meta > fstart || body > fstart || off > fstart-meta-body {
				return 0, fmt.Errorf("block %d (offset %d, metadata %d, body %d bytes) lies outside the %d data bytes", k, off, meta, body, fstart)
			}
			n, err := arrowCheckMessage(f, off, meta, body, isRec)
			if err != nil {
				return 0, fmt.Errorf("block at byte %d: %w", off, err)
			}
			rows += n
			if rows < 0 {
				return 0, errors.New("row count overflows")
			}
		}
	}
	return rows, nil
}

// arrowMaxBuffer bounds the uncompressed size a compressed body buffer may
// claim (2 GiB), which is also what the Arrow library can hold in one buffer
// of 32-bit offsets.
const arrowMaxBuffer = 1 << 31

// arrowCheckMessage checks one block's message: its type, its row count and
// that every buffer lies inside the body. It returns the row count of a
// record batch (0 for a dictionary batch).
func arrowCheckMessage(f io.ReaderAt, off, meta, body int64, isRec bool) (int64, error) {
	mb := make([]byte, meta)
	if _, err := f.ReadAt(mb, off); err != nil {
		return 0, err
	}
	// The same prefix rule as the Arrow library's reader (ipc/metadata.go),
	// so both look at the same flatbuffer.
	prefix := 4 // before format 0.15: int32 length, then the flatbuffer
	switch binary.LittleEndian.Uint32(mb) {
	case 0xFFFFFFFF:
		prefix = 8 // continuation marker, int32 length
	case 0:
		prefix = 0
	}
	m := arrowFB(mb[prefix:])
	msg := m.root()
	htPos, ok := m.field(msg, 1)
	if !ok {
		return 0, errors.New("message has no header")
	}
	ht := m[htPos]
	hdr, ok := m.field(msg, 2)
	if !ok {
		return 0, errors.New("message has no header")
	}
	rb := m.deref(hdr)
	switch {
	case isRec && ht == 3: // MessageHeader.RecordBatch
	case !isRec && ht == 2: // MessageHeader.DictionaryBatch: data is field 1
		if p, ok := m.field(rb, 1); ok {
			rb = m.deref(p)
		} else {
			return 0, errors.New("dictionary batch has no data")
		}
	default:
		return 0, fmt.Errorf("unexpected message type %d", ht)
	}
	var length int64
	if p, ok := m.field(rb, 0); ok {
		length = int64(binary.LittleEndian.Uint64(m[p:]))
	}
	if length < 0 {
		return 0, fmt.Errorf("record batch claims %d rows", length)
	}
	_, compressed := m.field(rb, 3)
	if p, ok := m.field(rb, 2); ok {
		vec := m.deref(p)
		n := int(m.u32(vec))
		if n < 0 || n > len(m)/16 {
			return 0, fmt.Errorf("record batch lists %d buffers", n)
		}
		var pre [8]byte
		for k := range n {
			b := vec + 4 + 16*k
			bo := int64(binary.LittleEndian.Uint64(m[b:]))
			bl := int64(binary.LittleEndian.Uint64(m[b+8:]))
			if bo < 0 || bl < 0 || bo > body || bl > body-bo {
				return 0, fmt.Errorf("buffer %d (offset %d, %d bytes) lies outside the %d-byte body", k, bo, bl, body)
			}
			if compressed && bl >= 8 {
				if _, err := f.ReadAt(pre[:], off+meta+bo); err != nil {
					return 0, err
				}
				u := int64(binary.LittleEndian.Uint64(pre[:]))
				if u != -1 && (u < 0 || u > arrowMaxBuffer) {
					return 0, fmt.Errorf("compressed buffer %d claims %d uncompressed bytes", k, u)
				}
			}
		}
	}
	if !isRec {
		return 0, nil
	}
	return length, nil
}

// arrowFB reads a flatbuffer (flatbuffers binary format, little-endian).
// Out-of-range offsets panic, and arrowCheckFile recovers them as errors.
type arrowFB []byte

func (b arrowFB) u32(at int) uint32 { return binary.LittleEndian.Uint32(b[at:]) }

// root returns the position of the root table.
func (b arrowFB) root() int { return int(b.u32(0)) }

// deref follows the uoffset stored at position at (to a table or vector).
func (b arrowFB) deref(at int) int {
	t := at + int(b.u32(at))
	if t < 0 || t >= len(b) {
		panic(fmt.Sprintf("offset %d out of range", t))
	}
	return t
}

// field returns the position of field k of the table at position t, and
// false when the field is absent (default value).
func (b arrowFB) field(t, k int) (int, bool) {
	vt := t - int(int32(b.u32(t)))
	vsize := int(binary.LittleEndian.Uint16(b[vt:]))
	if 4+2*k+2 > vsize {
		return 0, false
	}
	o := int(binary.LittleEndian.Uint16(b[vt+4+2*k:]))
	if o == 0 {
		return 0, false
	}
	if t+o >= len(b) {
		panic(fmt.Sprintf("field %d out of range", k))
	}
	return t + o, true
}

// arrowMaxDepth bounds the nesting of fields in a schema we hand to the
// Arrow library, whose schema decoder recurses once per level.
const arrowMaxDepth = 64

// vector returns the start of the elements and the length of the vector in
// field k of table t, checking that n elements of size bytes fit in the
// buffer (the Arrow library allocates by the stored length before reading).
// ok is false when the field is absent.
func (b arrowFB) vector(t, k, size int) (start, n int, ok bool) {
	p, ok := b.field(t, k)
	if !ok {
		return 0, 0, false
	}
	v := b.deref(p)
	n = int(b.u32(v))
	if n < 0 || v+4+n*size > len(b) {
		panic(fmt.Sprintf("vector of %d elements does not fit in %d bytes", n, len(b)))
	}
	return v + 4, n, true
}

// table returns the table referenced by field k of table t.
func (b arrowFB) table(t, k int) (int, bool) {
	p, ok := b.field(t, k)
	if !ok {
		return 0, false
	}
	return b.deref(p), true
}

// checkKeyValues checks a [KeyValue] vector (Schema.fbs: key, value strings).
func (b arrowFB) checkKeyValues(t, k int) {
	start, n, ok := b.vector(t, k, 4)
	for i := range n {
		if !ok {
			break
		}
		kv := b.deref(start + 4*i)
		b.vector(kv, 0, 1)
		b.vector(kv, 1, 1)
	}
}

// checkField checks a Field table (Schema.fbs: name 0, nullable 1,
// type_type 2, type 3, dictionary 4, children 5, custom_metadata 6).
func (b arrowFB) checkField(f, depth int) {
	if depth > arrowMaxDepth {
		panic(fmt.Sprintf("fields nested more than %d deep", arrowMaxDepth))
	}
	b.vector(f, 0, 1)
	if p, ok := b.field(f, 2); ok && b[p] == 14 { // Type.Union: typeIds is [int] field 1
		if u, ok := b.table(f, 3); ok {
			b.vector(u, 1, 4)
		}
	}
	b.checkKeyValues(f, 6)
	start, n, ok := b.vector(f, 5, 4)
	for i := range n {
		if !ok {
			break
		}
		b.checkField(b.deref(start+4*i), depth+1)
	}
}

// checkSchema checks a Schema table (Schema.fbs: endianness 0, fields 1,
// custom_metadata 2, features 3).
func (b arrowFB) checkSchema(s int) {
	start, n, ok := b.vector(s, 1, 4)
	for i := range n {
		if !ok {
			break
		}
		b.checkField(b.deref(start+4*i), 0)
	}
	b.checkKeyValues(s, 2)
	b.vector(s, 3, 8)
}

// arrowCheckSchemaMessage checks an encapsulated IPC Schema message, as
// pqarrow stores (base64-encoded) under "ARROW:schema" in a Parquet file,
// before the Arrow library decodes it: every vector must fit in the message,
// fields nest at most arrowMaxDepth deep, and the message has no body.
func arrowCheckSchemaMessage(msg []byte) (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("malformed flatbuffer: %v", p)
		}
	}()
	if len(msg) < 8 {
		return errors.New("message too short")
	}
	prefix := 4
	if binary.LittleEndian.Uint32(msg) == 0xFFFFFFFF {
		prefix = 8
	}
	n := int64(binary.LittleEndian.Uint32(msg[prefix-4:]))
	if n <= 0 || n > int64(len(msg)-prefix) {
		return fmt.Errorf("message length %d does not fit in %d bytes", n, len(msg))
	}
	m := arrowFB(msg[prefix : prefix+int(n)])
	root := m.root()
	if p, ok := m.field(root, 1); !ok || m[p] != 1 { // MessageHeader.Schema
		return errors.New("message is not a schema")
	}
	if p, ok := m.field(root, 3); ok && binary.LittleEndian.Uint64(m[p:]) != 0 {
		return errors.New("schema message claims a body")
	}
	s, ok := m.table(root, 2)
	if !ok {
		return errors.New("message has no schema")
	}
	m.checkSchema(s)
	return nil
}
