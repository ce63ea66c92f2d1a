package survey

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// Format is a catalogue file format.
type Format int

// The formats filigree reads and writes.
const (
	FormatUnknown Format = iota
	FormatFITS
	FormatCSV
	FormatParquet
	FormatArrow
)

func (f Format) String() string {
	return [...]string{"unknown", "FITS", "CSV", "Parquet", "Arrow IPC"}[f]
}

// FormatOf returns the format named by a file's extension: .fits/.fit/.fts
// (optionally .gz is not supported), .csv/.txt, .parquet/.pq, .arrow/.feather/.ipc.
func FormatOf(path string) Format {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".fits", ".fit", ".fts":
		return FormatFITS
	case ".csv", ".txt":
		return FormatCSV
	case ".parquet", ".pq":
		return FormatParquet
	case ".arrow", ".feather", ".ipc":
		return FormatArrow
	}
	return FormatUnknown
}

// ReadOptions choose what a Reader returns.
type ReadOptions struct {
	// HDU selects the FITS extension by 0-based index ("1") or EXTNAME
	// (case-insensitive). Empty means the first table extension.
	HDU string
	// Columns, when non-nil, restricts the read to these columns (matched
	// case-insensitively), in this order. Unknown names are an error naming the file.
	Columns []string
}

// Reader streams a catalogue in batches of rows. Every batch has the columns
// of Schema, in the same order; metadata is on Schema only.
type Reader interface {
	// Schema returns a table with the columns (names, kinds, units,
	// descriptions), no rows, and the file's metadata.
	Schema() *Table
	// NumRows returns the total row count, or -1 when the format does not
	// know it before reading (CSV).
	NumRows() int64
	// Next returns up to max rows (max <= 0 means a format-chosen batch
	// size). At the end it returns nil, io.EOF.
	Next(max int) (*Table, error)
	Close() error
}

// Open opens a catalogue for streaming, choosing the reader by extension.
func Open(path string, opt ReadOptions) (Reader, error) {
	switch FormatOf(path) {
	case FormatFITS:
		return openFITS(path, opt)
	case FormatCSV:
		return openCSV(path, opt)
	case FormatParquet:
		return openParquet(path, opt)
	case FormatArrow:
		return openArrow(path, opt)
	}
	return nil, &InputError{File: path, Byte: -1, Msg: "unknown file extension; expected .fits, .csv, .parquet or .arrow"}
}

// Read reads a whole catalogue into memory.
func Read(path string, opt ReadOptions) (*Table, error) {
	r, err := Open(path, opt)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	return ReadAll(r)
}

// maxPrealloc bounds the rows ReadAll reserves from a file's stated count.
const maxPrealloc = 1 << 24

// appender is implemented by readers that can decode a batch directly onto
// the end of a table with the reader's columns (ReadAll uses it).
type appender interface {
	appendNext(dst *Table, max int) (rows int, err error)
}

// ReadAll drains a Reader into one Table, preallocating when the row count is known.
func ReadAll(r Reader) (*Table, error) {
	s := r.Schema()
	n := r.NumRows()
	if n < 0 {
		n = 0
	}
	// A header's row count is a claim, not a promise: preallocate at most
	// maxPrealloc rows and let append grow past that for real data.
	n = min(n, maxPrealloc)
	t := &Table{Name: s.Name, Meta: s.Meta}
	for _, c := range s.Cols {
		t.Cols = append(t.Cols, c.cloneEmpty(int(n)))
	}
	if ap, ok := r.(appender); ok {
		// Decode straight into the preallocated table: no batch garbage, so
		// the peak stays near the table's own size.
		for {
			_, err := ap.appendNext(t, 0)
			if err == io.EOF {
				return t, nil
			}
			if err != nil {
				return nil, err
			}
		}
	}
	for {
		b, err := r.Next(0)
		if err == io.EOF {
			return t, nil
		}
		if err != nil {
			return nil, err
		}
		if err := t.Append(b); err != nil {
			return nil, err
		}
	}
}

// WriteOptions control writers.
type WriteOptions struct {
	// Format overrides the extension when not FormatUnknown.
	Format Format
}

// Write writes t to path in the format named by the extension. The file
// appears only when complete: it is written to a temporary file in the same
// directory and renamed into place.
func Write(path string, t *Table, opt WriteOptions) error {
	if err := t.Check(); err != nil {
		return err
	}
	f := opt.Format
	if f == FormatUnknown {
		f = FormatOf(path)
	}
	if f == FormatUnknown {
		return fmt.Errorf("%s: unknown output extension; expected .fits, .csv, .parquet or .arrow", path)
	}
	return WriteAtomic(path, func(w io.Writer) error { return Encode(w, t, f) })
}

// Encode writes t to w in format f, for streams such as standard output.
// Files should be written with Write, which makes them appear only when complete.
func Encode(w io.Writer, t *Table, f Format) error {
	if err := t.Check(); err != nil {
		return err
	}
	switch f {
	case FormatFITS:
		return writeFITS(w, t)
	case FormatCSV:
		return writeCSV(w, t)
	case FormatParquet:
		return writeParquet(w, t)
	case FormatArrow:
		return writeArrow(w, t)
	}
	return fmt.Errorf("survey: cannot encode format %v", f)
}

// WriteAtomic creates path by writing to a temporary file beside it and
// renaming it into place only after write returned nil and the data reached
// the disk. On any failure the temporary file is removed and path is untouched.
func WriteAtomic(path string, write func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if err = write(tmp); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err = tmp.Sync(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	if err = os.Chmod(tmp.Name(), 0o644); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}

// ResolveColumns maps the wanted column names (case-insensitive, exact match
// preferred) onto indices into have. A nil want selects every column in order.
// An unknown name is an InputError naming the file and listing what exists.
// Every reader uses it to honour ReadOptions.Columns.
func ResolveColumns(file string, have []string, want []string) ([]int, error) {
	if want == nil {
		idx := make([]int, len(have))
		for i := range idx {
			idx[i] = i
		}
		return idx, nil
	}
	idx := make([]int, 0, len(want))
	for _, w := range want {
		j := -1
		for i, h := range have {
			if h == w {
				j = i
				break
			}
		}
		if j < 0 {
			for i, h := range have {
				if strings.EqualFold(h, w) {
					j = i
					break
				}
			}
		}
		if j < 0 {
			return nil, &InputError{File: file, Byte: -1, Column: w,
				Msg: fmt.Sprintf("no such column; the file has %s", strings.Join(have, ", "))}
		}
		for _, k := range idx {
			if k == j {
				return nil, &InputError{File: file, Byte: -1, Column: w,
					Msg: fmt.Sprintf("column %q selected twice", have[j])}
			}
		}
		idx = append(idx, j)
	}
	return idx, nil
}
