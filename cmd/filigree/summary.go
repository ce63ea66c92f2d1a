package main

import (
	"bytes"
	"encoding/json"
	"io"
	"time"

	"github.com/filigree-survey/filigree/survey"
)

// Summary is the one machine-readable record of a run (--summary FILE.json):
// the command, the provenance and the results each command adds, in order.
type Summary struct {
	command    string
	provenance *survey.Provenance
	keys       []string
	values     map[string]any
}

// NewSummary starts the summary of a command.
func NewSummary(command string) *Summary {
	return &Summary{command: command, values: map[string]any{}}
}

// Set records a result; setting a key again replaces its value in place.
// A nil Summary ignores the call, so commands need not check for --summary.
func (s *Summary) Set(key string, value any) {
	if s == nil {
		return
	}
	if _, ok := s.values[key]; !ok {
		s.keys = append(s.keys, key)
	}
	s.values[key] = value
}

// SetProvenance attaches the run's provenance record.
func (s *Summary) SetProvenance(p *survey.Provenance) {
	if s != nil {
		s.provenance = p
	}
}

// Write writes the summary as indented JSON, appearing only when complete.
func (s *Summary) Write(path string) error {
	var buf bytes.Buffer
	buf.WriteString("{\n  \"command\": ")
	cmd, _ := json.Marshal(s.command)
	buf.Write(cmd)
	if s.provenance != nil {
		p := s.provenance
		inputs := make([]map[string]any, len(p.Inputs))
		for i, in := range p.Inputs {
			inputs[i] = map[string]any{"path": in.Path, "sha256": in.SHA256, "rows": in.Rows}
		}
		prov := orderedObject{
			{"version", p.Version},
			{"command", p.Command},
			{"time", p.Time.UTC().Format(time.RFC3339)},
			{"parameters", keyValueObject(p.Params)},
			{"cosmology", keyValueObject(p.Cosmology)},
			{"inputs", inputs},
		}
		b, err := json.MarshalIndent(prov, "  ", "  ")
		if err != nil {
			return err
		}
		buf.WriteString(",\n  \"provenance\": ")
		buf.Write(b)
	}
	for _, k := range s.keys {
		kb, _ := json.Marshal(k)
		vb, err := json.MarshalIndent(s.values[k], "  ", "  ")
		if err != nil {
			return err
		}
		buf.WriteString(",\n  ")
		buf.Write(kb)
		buf.WriteString(": ")
		buf.Write(vb)
	}
	buf.WriteString("\n}\n")
	return survey.WriteAtomic(path, func(w io.Writer) error {
		_, err := w.Write(buf.Bytes())
		return err
	})
}

// orderedObject is a JSON object whose members keep their order.
type orderedObject []struct {
	key   string
	value any
}

// MarshalJSON writes the members in order.
func (o orderedObject) MarshalJSON() ([]byte, error) {
	var buf bytes.Buffer
	buf.WriteByte('{')
	for i, m := range o {
		if i > 0 {
			buf.WriteByte(',')
		}
		k, _ := json.Marshal(m.key)
		v, err := json.Marshal(m.value)
		if err != nil {
			return nil, err
		}
		buf.Write(k)
		buf.WriteByte(':')
		buf.Write(v)
	}
	buf.WriteByte('}')
	return buf.Bytes(), nil
}

func keyValueObject(kvs []survey.KeyValue) orderedObject {
	o := make(orderedObject, len(kvs))
	for i, kv := range kvs {
		o[i].key, o[i].value = kv.Key, kv.Value
	}
	return o
}
