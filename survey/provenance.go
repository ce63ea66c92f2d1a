package survey

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"
)

// Provenance is the record every output file carries (design: conventions):
// the program version, the command line, every parameter with its value, the
// cosmology, the input files with checksums and row counts, and the time.
// It is stored in a table's Meta under keys starting with "filigree.", so a
// run can be repeated from any of its output files.
type Provenance struct {
	Version   string     // program version
	Command   []string   // os.Args as given
	Params    []KeyValue // every parameter of the run with its value, defaults included
	Cosmology []KeyValue // the cosmological model's parameters
	Inputs    []InputFile
	Time      time.Time // UTC, whole seconds
}

// InputFile identifies one input of a run.
type InputFile struct {
	Path   string
	SHA256 string // hex digest of the file's bytes
	Rows   int64  // rows read; −1 when not a table
}

// AddInput records an input file, computing its SHA-256 by streaming the file.
func (p *Provenance) AddInput(path string, rows int64) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	p.Inputs = append(p.Inputs, InputFile{Path: path, SHA256: hex.EncodeToString(h.Sum(nil)), Rows: rows})
	return nil
}

// The provenance key prefix, and the keys themselves.
const (
	provPrefix  = "filigree."
	keyVersion  = provPrefix + "version"
	keyCommand  = provPrefix + "command"
	keyTime     = provPrefix + "time"
	keyParam    = provPrefix + "param."
	keyCosmo    = provPrefix + "cosmo."
	keyInput    = provPrefix + "input."
	commandArgs = provPrefix + "command.argc"
)

// Meta renders p as ordered metadata. The command line is stored both as one
// shell-quoted string (for people) and argument by argument (to repeat it exactly).
func (p *Provenance) Meta() Meta {
	var m Meta
	m = append(m, KeyValue{keyVersion, p.Version})
	m = append(m, KeyValue{keyCommand, ShellQuote(p.Command)})
	m = append(m, KeyValue{commandArgs, strconv.Itoa(len(p.Command))})
	for i, a := range p.Command {
		m = append(m, KeyValue{fmt.Sprintf("%s.%d", keyCommand, i), a})
	}
	m = append(m, KeyValue{keyTime, p.Time.UTC().Format(time.RFC3339)})
	for _, kv := range p.Params {
		m = append(m, KeyValue{keyParam + kv.Key, kv.Value})
	}
	for _, kv := range p.Cosmology {
		m = append(m, KeyValue{keyCosmo + kv.Key, kv.Value})
	}
	for i, in := range p.Inputs {
		pre := fmt.Sprintf("%s%d.", keyInput, i+1)
		m = append(m, KeyValue{pre + "path", in.Path},
			KeyValue{pre + "sha256", in.SHA256},
			KeyValue{pre + "rows", strconv.FormatInt(in.Rows, 10)})
	}
	return m
}

// ProvenanceFromMeta recovers a Provenance from metadata written by Meta.
// It returns ok false when m holds no provenance.
func ProvenanceFromMeta(m Meta) (p *Provenance, ok bool, err error) {
	v, ok := m.Get(keyVersion)
	if !ok {
		return nil, false, nil
	}
	p = &Provenance{Version: v}
	if s, ok := m.Get(keyTime); ok {
		if p.Time, err = time.Parse(time.RFC3339, s); err != nil {
			return nil, true, fmt.Errorf("provenance %s: %w", keyTime, err)
		}
	}
	if s, ok := m.Get(commandArgs); ok {
		n, err := strconv.Atoi(s)
		if err != nil || n < 0 || n > 1<<16 {
			return nil, true, fmt.Errorf("provenance %s: bad count %q", commandArgs, s)
		}
		for i := 0; i < n; i++ {
			a, ok := m.Get(fmt.Sprintf("%s.%d", keyCommand, i))
			if !ok {
				return nil, true, fmt.Errorf("provenance: command argument %d missing", i)
			}
			p.Command = append(p.Command, a)
		}
	}
	inputs := map[int]*InputFile{}
	for _, kv := range m {
		switch {
		case strings.HasPrefix(kv.Key, keyParam):
			p.Params = append(p.Params, KeyValue{strings.TrimPrefix(kv.Key, keyParam), kv.Value})
		case strings.HasPrefix(kv.Key, keyCosmo):
			p.Cosmology = append(p.Cosmology, KeyValue{strings.TrimPrefix(kv.Key, keyCosmo), kv.Value})
		case strings.HasPrefix(kv.Key, keyInput):
			rest := strings.TrimPrefix(kv.Key, keyInput)
			num, field, found := strings.Cut(rest, ".")
			i, err := strconv.Atoi(num)
			if !found || err != nil || i < 1 {
				return nil, true, fmt.Errorf("provenance: bad key %q", kv.Key)
			}
			in := inputs[i]
			if in == nil {
				in = &InputFile{Rows: -1}
				inputs[i] = in
			}
			switch field {
			case "path":
				in.Path = kv.Value
			case "sha256":
				in.SHA256 = kv.Value
			case "rows":
				if in.Rows, err = strconv.ParseInt(kv.Value, 10, 64); err != nil {
					return nil, true, fmt.Errorf("provenance %s: %w", kv.Key, err)
				}
			}
		}
	}
	idx := make([]int, 0, len(inputs))
	for i := range inputs {
		idx = append(idx, i)
	}
	sort.Ints(idx)
	for _, i := range idx {
		p.Inputs = append(p.Inputs, *inputs[i])
	}
	return p, true, nil
}

// ShellQuote joins args into one line that a POSIX shell splits back into
// the same arguments: plain words stay bare, anything else is single-quoted.
func ShellQuote(args []string) string {
	out := make([]string, len(args))
	for i, a := range args {
		if a != "" && strings.IndexFunc(a, func(r rune) bool {
			return !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_./=,:+@%", r))
		}) < 0 {
			out[i] = a
			continue
		}
		out[i] = "'" + strings.ReplaceAll(a, "'", `'\''`) + "'"
	}
	return strings.Join(out, " ")
}
