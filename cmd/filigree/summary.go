package main

import (
	"bytes"
	"encoding/json"
	"io"

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
		prov := map[string]string{}
		for _, kv := range s.provenance.Meta() {
			prov[kv.Key] = kv.Value
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
