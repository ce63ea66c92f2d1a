package footprint

import (
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzOpenFootprint checks that Open returns an error, never a panic, for
// any file content; it is seeded with the healpy, pymoc and astropy
// fixtures and a region file.
func FuzzOpenFootprint(f *testing.F) {
	for _, name := range []string{"map_nest16.fits", "map_partial64.fits", "moc_ring7.fits",
		"bad_value.fits", "bad_moc_uniq.fits", "cap.reg"} {
		b, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	tmp := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		path := filepath.Join(tmp, "in")
		if err := os.WriteFile(path, data, 0o600); err != nil {
			t.Fatal(err)
		}
		fp, err := Open(path)
		if err != nil {
			return
		}
		fp.Completeness(10, 20)
		if a := fp.Area(); a < 0 || a > 41253 || fp.EffectiveArea() > a*(1+1e-9) {
			t.Errorf("area %g, effective %g", a, fp.EffectiveArea())
		}
		_ = fp.Describe()
	})
}

// TestOpenMutations complements FuzzOpenFootprint, whose engine runs only a
// few inputs per second on a busy machine: it opens deterministic random
// mutations of the fixtures (bytes overwritten, header values replaced by
// other numbers or words, truncation) and checks that each gives a
// footprint with sane areas or an error, without panicking.
func TestOpenMutations(t *testing.T) {
	seeds := []string{"map_nest16.fits", "map_ring32.fits", "map_partial64.fits", "map_partial64_nest.fits",
		"moc_discs.fits", "moc_ring7.fits"}
	words := []string{"0", "-1", "3", "1024", "536870912", "999999999999", "'NESTED'", "'RING'", "'NUNIQ'",
		"'EXPLICIT'", "'PARTIAL'", "'1024K'", "'1J'", "'2I'", "'0E'", "1.5", "T"}
	keys := []string{"NSIDE   =", "NAXIS1  =", "NAXIS2  =", "TFORM1  =", "TFORM2  =", "ORDERING=",
		"INDXSCHM=", "FIRSTPIX=", "LASTPIX =", "MOCORDER=", "TFIELDS =", "OBJECT  ="}
	rng := rand.New(rand.NewPCG(5, 6))
	tmp := t.TempDir()
	n := 400
	if testing.Short() {
		n = 50
	}
	for _, name := range seeds {
		orig, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		for range n {
			b := append([]byte(nil), orig...)
			for range 1 + rng.IntN(3) {
				switch rng.IntN(4) {
				case 0: // overwrite a byte
					b[rng.IntN(len(b))] = byte(rng.IntN(256))
				case 1: // replace a header value
					k := keys[rng.IntN(len(keys))]
					if j := strings.Index(string(b[:min(len(b), 8640)]), k); j >= 0 {
						v := fmt.Sprintf("%-20s", words[rng.IntN(len(words))])
						copy(b[j+10:j+30], v)
					}
				case 2: // truncate
					b = b[:rng.IntN(len(b)+1)]
				case 3: // overwrite a data byte near the start of the data
					if len(b) > 5760 {
						b[5760+rng.IntN(min(len(b)-5760, 4096))] = byte(rng.IntN(256))
					}
				}
				if len(b) == 0 {
					break
				}
			}
			path := filepath.Join(tmp, name)
			if err := os.WriteFile(path, b, 0o600); err != nil {
				t.Fatal(err)
			}
			fp, err := Open(path)
			if err != nil {
				if !strings.Contains(err.Error(), path) {
					t.Errorf("error %q does not name the file", err)
				}
				continue
			}
			if c := fp.Completeness(150, 20); c < 0 || c > 1 {
				t.Errorf("%s: completeness %g", path, c)
			}
			if a := fp.Area(); a < 0 || a > 41253 || fp.EffectiveArea() > a*(1+1e-9) {
				t.Errorf("%s: area %g, effective %g", path, a, fp.EffectiveArea())
			}
		}
	}
}
