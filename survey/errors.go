package survey

import (
	"fmt"
	"strings"
)

// InputError reports a problem with an input file at a position, in the manner
// of encoding/csv.ParseError: the file, the 1-based data row (0 when the
// problem is not tied to a row, such as a bad header), the column name (""
// when not tied to one), what was expected, and the underlying cause.
type InputError struct {
	File   string
	Row    int64  // 1-based data row; 0 when not row-specific
	Line   int64  // 1-based text line for text formats; 0 when unknown
	Byte   int64  // byte offset for binary formats; -1 when unknown
	Column string // column name; "" when not column-specific
	Msg    string // what was expected or found
	Err    error  // underlying cause, may be nil
}

func (e *InputError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ": line %d", e.Line)
	}
	if e.Row > 0 {
		fmt.Fprintf(&b, ": row %d", e.Row)
	}
	if e.Column != "" {
		fmt.Fprintf(&b, ": column %q", e.Column)
	}
	if e.Byte >= 0 && e.Row == 0 && e.Line == 0 {
		fmt.Fprintf(&b, ": byte %d", e.Byte)
	}
	if e.Msg != "" {
		b.WriteString(": ")
		b.WriteString(e.Msg)
	}
	if e.Err != nil {
		b.WriteString(": ")
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

// Unwrap returns the underlying cause.
func (e *InputError) Unwrap() error { return e.Err }

// inputErr is a short constructor for an InputError with no byte offset.
func inputErr(file string, row int64, column, msg string, err error) *InputError {
	return &InputError{File: file, Row: row, Column: column, Msg: msg, Err: err, Byte: -1}
}
