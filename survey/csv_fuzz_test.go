package survey

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"
)

// FuzzReadCSV reads arbitrary bytes as a CSV file. It must not panic or
// hang (more than 10 s for one input), every error must be an *InputError naming the file, and whatever
// reads without error must survive writeCSV and a second read unchanged
// (kinds included, thanks to the type comments).
func FuzzReadCSV(f *testing.F) {
	files, err := filepath.Glob(filepath.Join("..", "testdata", "csv", "*.csv"))
	if err != nil || len(files) == 0 {
		f.Fatalf("no seed files: %v", err)
	}
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	for _, s := range []string{
		"a\n\"x", "a,b\r\n1,\"2\r\n\"\"3\"\r\n", "# type.a: int64\na\n1.5\n", "#\n\n\xef\xbb\xbfa\n",
		"# \"k\\x\": \"v\\u00e9\"\na\n\"\"\n", "a,a\n", "a\n9223372036854775808\n", "\"a\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		// The fuzzing engine has no time limit per input: a hang shows as a
		// crash of the fuzzing process, which records this input.
		watchdog := time.AfterFunc(10*time.Second, func() {
			panic(fmt.Sprintf("FuzzReadCSV: no result after 10 s for %q", data))
		})
		defer watchdog.Stop()
		got, err := csvReadBytes("fuzz.csv", data, ReadOptions{}, 7)
		if err != nil {
			var ie *InputError
			if !errors.As(err, &ie) || ie.File != "fuzz.csv" {
				t.Fatalf("error %v (%T) is not an *InputError naming the file", err, err)
			}
			return
		}
		var buf bytes.Buffer
		if err := writeCSV(&buf, got); err != nil {
			t.Fatalf("writing what was read: %v", err)
		}
		back, err := csvReadBytes("back.csv", buf.Bytes(), ReadOptions{}, 0)
		if err != nil {
			t.Fatalf("reading what was written: %v\n%q", err, buf.Bytes())
		}
		if d := csvDiff(got, back); d != "" {
			t.Fatalf("round trip: %s\nwritten %q", d, buf.Bytes())
		}
	})
}
