// Package survey holds filigree's one catalogue table type and everything that
// moves catalogues in and out of it: FITS binary tables, CSV, Parquet and Arrow
// IPC readers and writers, column mapping for sky positions, validation of
// survey rows, provenance records and (later) cross-matching.
//
// A Table is column-oriented: each Column holds one Go slice of its kind
// (float64, int64, bool or string) plus an optional null mask, a unit and a
// description. Table-level metadata is an ordered list of key-value pairs;
// provenance is stored there by every writer.
package survey

import (
	"fmt"
	"strings"
)

// Kind is the storage kind of a Column.
type Kind uint8

// The four column kinds. Every input type maps onto one of them: all integer
// types (signed, unsigned, TZERO-offset) onto Int64, all floating types onto
// Float64, logicals onto Bool, text onto String.
const (
	Float64 Kind = iota
	Int64
	Bool
	String
)

// String returns the kind's name as used in `filigree inspect`.
func (k Kind) String() string {
	switch k {
	case Float64:
		return "float64"
	case Int64:
		return "int64"
	case Bool:
		return "bool"
	case String:
		return "string"
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// Column is one named column of a Table. Exactly one of F, I, B, S is in use,
// chosen by Kind, and its length is the table's row count. Null, when non-nil,
// has the same length and marks missing values; the value slot under a null is
// zero (NaN for Float64 columns read from files, so arithmetic on it is safe).
type Column struct {
	Name string
	Kind Kind
	Unit string // physical unit as written in the file (FITS TUNIT), "" when none
	Desc string // free-text description, "" when none

	F []float64
	I []int64
	B []bool
	S []string

	Null []bool
}

// NewColumn returns an empty column of the given kind with capacity for n rows.
func NewColumn(name string, kind Kind, n int) *Column {
	c := &Column{Name: name, Kind: kind}
	switch kind {
	case Float64:
		c.F = make([]float64, 0, n)
	case Int64:
		c.I = make([]int64, 0, n)
	case Bool:
		c.B = make([]bool, 0, n)
	case String:
		c.S = make([]string, 0, n)
	}
	return c
}

// Len returns the number of rows held by the column.
func (c *Column) Len() int {
	switch c.Kind {
	case Float64:
		return len(c.F)
	case Int64:
		return len(c.I)
	case Bool:
		return len(c.B)
	case String:
		return len(c.S)
	}
	return 0
}

// IsNull reports whether row i is null.
func (c *Column) IsNull(i int) bool { return c.Null != nil && c.Null[i] }

// NullCount returns the number of null rows.
func (c *Column) NullCount() int {
	n := 0
	for _, v := range c.Null {
		if v {
			n++
		}
	}
	return n
}

// SetNull marks row i null, allocating the mask on first use at the
// column's current length: call it after the rows are in place.
func (c *Column) SetNull(i int) {
	if c.Null == nil {
		c.Null = make([]bool, c.Len())
	}
	c.Null[i] = true
}

// Float returns row i as a float64 (Int64 and Bool convert; String and nulls
// give NaN), with ok false when the row is null or not numeric.
func (c *Column) Float(i int) (v float64, ok bool) {
	if c.IsNull(i) {
		return nan, false
	}
	switch c.Kind {
	case Float64:
		return c.F[i], true
	case Int64:
		return float64(c.I[i]), true
	case Bool:
		if c.B[i] {
			return 1, true
		}
		return 0, true
	}
	return nan, false
}

// Format returns row i as text, "" for a null.
func (c *Column) Format(i int) string {
	if c.IsNull(i) {
		return ""
	}
	switch c.Kind {
	case Float64:
		return formatFloat(c.F[i])
	case Int64:
		return fmt.Sprint(c.I[i])
	case Bool:
		if c.B[i] {
			return "true"
		}
		return "false"
	case String:
		return c.S[i]
	}
	return ""
}

// AppendFrom appends row i of src (which must have the same kind) to c.
func (c *Column) AppendFrom(src *Column, i int) {
	if src.Kind != c.Kind {
		panic("survey: AppendFrom kind mismatch")
	}
	n := c.Len()
	switch c.Kind {
	case Float64:
		c.F = append(c.F, src.F[i])
	case Int64:
		c.I = append(c.I, src.I[i])
	case Bool:
		c.B = append(c.B, src.B[i])
	case String:
		c.S = append(c.S, src.S[i])
	}
	if c.Null != nil {
		c.Null = append(c.Null, src.IsNull(i))
	} else if src.IsNull(i) {
		c.Null = make([]bool, n+1)
		c.Null[n] = true
	}
}

// cloneEmpty returns a column with c's name, kind, unit and description and no rows.
func (c *Column) cloneEmpty(capacity int) *Column {
	d := NewColumn(c.Name, c.Kind, capacity)
	d.Unit, d.Desc = c.Unit, c.Desc
	return d
}

// KeyValue is one table-level metadata entry.
type KeyValue struct {
	Key, Value string
}

// Meta is ordered table-level metadata. Keys are case-sensitive and unique.
type Meta []KeyValue

// Get returns the value for key and whether it is present.
func (m Meta) Get(key string) (string, bool) {
	for _, kv := range m {
		if kv.Key == key {
			return kv.Value, true
		}
	}
	return "", false
}

// Set replaces the value for key, or appends it.
func (m *Meta) Set(key, value string) {
	for i := range *m {
		if (*m)[i].Key == key {
			(*m)[i].Value = value
			return
		}
	}
	*m = append(*m, KeyValue{key, value})
}

// Table is a column-oriented catalogue: columns of equal length plus ordered
// metadata. Name is the table's name where the format has one (FITS EXTNAME).
type Table struct {
	Name string
	Cols []*Column
	Meta Meta
}

// Len returns the row count (that of the first column; 0 for no columns).
func (t *Table) Len() int {
	if len(t.Cols) == 0 {
		return 0
	}
	return t.Cols[0].Len()
}

// Col returns the column with exactly this name, or nil.
func (t *Table) Col(name string) *Column {
	for _, c := range t.Cols {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// ColFold returns the column whose name equals name ignoring case, or nil.
// An exact match wins over a case-folded one.
func (t *Table) ColFold(name string) *Column {
	if c := t.Col(name); c != nil {
		return c
	}
	for _, c := range t.Cols {
		if strings.EqualFold(c.Name, name) {
			return c
		}
	}
	return nil
}

// Add appends a column. It returns an error when the name is taken or the
// length differs from the table's.
func (t *Table) Add(c *Column) error {
	if t.Col(c.Name) != nil {
		return fmt.Errorf("survey: column %q already exists", c.Name)
	}
	if len(t.Cols) > 0 && c.Len() != t.Len() {
		return fmt.Errorf("survey: column %q has %d rows, table has %d", c.Name, c.Len(), t.Len())
	}
	if c.Null != nil && len(c.Null) != c.Len() {
		return fmt.Errorf("survey: column %q null mask has %d rows, data has %d", c.Name, len(c.Null), c.Len())
	}
	t.Cols = append(t.Cols, c)
	return nil
}

// Check reports the first structural inconsistency: unequal column lengths,
// mismatched null masks or duplicate names. Writers call it before writing.
func (t *Table) Check() error {
	seen := make(map[string]bool, len(t.Cols))
	n := t.Len()
	for _, c := range t.Cols {
		if seen[c.Name] {
			return fmt.Errorf("survey: duplicate column name %q", c.Name)
		}
		seen[c.Name] = true
		if c.Len() != n {
			return fmt.Errorf("survey: column %q has %d rows, table has %d", c.Name, c.Len(), n)
		}
		if c.Null != nil && len(c.Null) != n {
			return fmt.Errorf("survey: column %q null mask has %d rows, data has %d", c.Name, len(c.Null), n)
		}
	}
	return nil
}

// Select returns a table holding rows keep (in that order) of every column.
// Metadata is shared with t.
func (t *Table) Select(keep []int) *Table {
	out := &Table{Name: t.Name, Meta: t.Meta}
	for _, c := range t.Cols {
		d := c.cloneEmpty(len(keep))
		for _, i := range keep {
			d.AppendFrom(c, i)
		}
		out.Cols = append(out.Cols, d)
	}
	return out
}

// Append appends all rows of u, which must have the same column names and
// kinds in the same order (as batches from one Reader do).
func (t *Table) Append(u *Table) error {
	if len(u.Cols) != len(t.Cols) {
		return fmt.Errorf("survey: appending %d columns to %d", len(u.Cols), len(t.Cols))
	}
	for j, c := range t.Cols {
		d := u.Cols[j]
		if d.Name != c.Name || d.Kind != c.Kind {
			return fmt.Errorf("survey: column %d is %s %s, appended %s %s", j, c.Name, c.Kind, d.Name, d.Kind)
		}
		n := c.Len()
		switch c.Kind {
		case Float64:
			c.F = append(c.F, d.F...)
		case Int64:
			c.I = append(c.I, d.I...)
		case Bool:
			c.B = append(c.B, d.B...)
		case String:
			c.S = append(c.S, d.S...)
		}
		switch {
		case c.Null != nil && d.Null != nil:
			c.Null = append(c.Null, d.Null...)
		case c.Null != nil:
			c.Null = append(c.Null, make([]bool, d.Len())...)
		case d.Null != nil:
			c.Null = append(make([]bool, n, n+d.Len()), d.Null...)
		}
	}
	return nil
}
