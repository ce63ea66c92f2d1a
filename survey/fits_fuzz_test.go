package survey

import (
	"bytes"
	"errors"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// FuzzReadFITS feeds arbitrary bytes to the FITS reader, seeded with the
// astropy fixtures and a file from writeFITS. Opening and reading every row
// must end without a panic, and every error must be an *InputError naming
// the file that did not come from the last-resort recover.
func FuzzReadFITS(f *testing.F) {
	for _, name := range []string{"types.fits", "unsigned.fits", "multi.fits"} {
		b, err := os.ReadFile(filepath.Join(fitsFixtureDir, name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b, uint8(0))
		f.Add(b, uint8(2))
	}
	var buf bytes.Buffer
	if err := writeFITS(&buf, fitsSample()); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes(), uint8(0))
	f.Add(buf.Bytes()[:fitsBlock+100], uint8(0))

	f.Fuzz(func(t *testing.T, data []byte, hdu uint8) {
		path := filepath.Join(t.TempDir(), "f.fits")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		opt := ReadOptions{}
		if hdu > 0 {
			opt.HDU = strconv.Itoa(int(hdu) - 1)
		}
		check := func(err error) {
			var ie *InputError
			if !errors.As(err, &ie) {
				t.Fatalf("error %v (%T) is not an *InputError", err, err)
			}
			if ie.File != path || strings.Contains(ie.Msg, "internal error") {
				t.Fatalf("bad error: %v", err)
			}
		}
		r, err := openFITS(path, opt)
		if err != nil {
			check(err)
			return
		}
		defer r.Close()
		rows := int64(0)
		for {
			b, err := r.Next(0)
			if err == io.EOF {
				break
			}
			if err != nil {
				check(err)
				return
			}
			if err := b.Check(); err != nil {
				t.Fatalf("batch: %v", err)
			}
			rows += int64(b.Len())
			if rows > r.NumRows() {
				t.Fatalf("read %d rows, NumRows %d", rows, r.NumRows())
			}
		}
		if len(r.Schema().Cols) > 0 && rows != r.NumRows() {
			t.Fatalf("read %d rows, NumRows %d", rows, r.NumRows())
		}
	})
}
