package region

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/filigree-survey/filigree/survey"
)

// maxLine is the longest line Parse accepts, in bytes.
const maxLine = 1 << 20

// ReadFile reads the region file at path; see Parse.
func ReadFile(path string) (*Region, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return Parse(path, f)
}

// Parse reads a region in the format of the package documentation from r;
// name is the file name used in errors and stored in Region.Name. Errors
// about the content are *survey.InputError values with the line and, in the
// message, the 1-based byte column of the offending token; read errors are
// returned wrapped in one.
func Parse(name string, r io.Reader) (*Region, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), maxLine)
	var shapes []Shape
	line := 0
	for sc.Scan() {
		line++
		s, ok, err := parseLine(name, line, sc.Text())
		if err != nil {
			return nil, err
		}
		if ok {
			shapes = append(shapes, s)
		}
	}
	if err := sc.Err(); err != nil {
		msg := "cannot read"
		if errors.Is(err, bufio.ErrTooLong) {
			msg = fmt.Sprintf("line longer than %d bytes", maxLine)
		}
		return nil, &survey.InputError{File: name, Line: int64(line + 1), Byte: -1, Msg: msg, Err: err}
	}
	return &Region{Name: name, shapes: shapes}, nil
}

// token is a blank-separated word of a line and its 1-based byte column.
type token struct {
	s   string
	col int
}

// tokens splits text (without its comment) at blanks (space, tab, CR).
func tokens(text string) []token {
	if i := strings.IndexByte(text, '#'); i >= 0 {
		text = text[:i]
	}
	var out []token
	start := -1
	for i := 0; i <= len(text); i++ {
		blank := i == len(text) || text[i] == ' ' || text[i] == '\t' || text[i] == '\r' || text[i] == '\v' || text[i] == '\f'
		switch {
		case blank && start >= 0:
			out = append(out, token{text[start:i], start + 1})
			start = -1
		case !blank && start < 0:
			start = i
		}
	}
	return out
}

// parseLine parses one line; ok is false for blank and comment lines.
func parseLine(name string, line int, text string) (s Shape, ok bool, err error) {
	fail := func(col int, format string, args ...any) error {
		return &survey.InputError{File: name, Line: int64(line), Byte: -1,
			Msg: fmt.Sprintf("column %d: ", col) + fmt.Sprintf(format, args...)}
	}
	toks := tokens(text)
	if len(toks) == 0 {
		return s, false, nil
	}
	s.Line = line
	switch toks[0].s {
	case "include":
	case "exclude":
		s.Exclude = true
	default:
		return s, false, fail(toks[0].col, "expected include or exclude, found %q", clip(toks[0].s))
	}
	if len(toks) < 2 {
		return s, false, fail(len(text)+1, "expected a shape (cap, box or polygon) after %s", toks[0].s)
	}
	switch toks[1].s {
	case "cap":
		s.Kind = Cap
	case "box":
		s.Kind = Box
	case "polygon":
		s.Kind = Polygon
	default:
		return s, false, fail(toks[1].col, "expected a shape (cap, box or polygon), found %q", clip(toks[1].s))
	}
	seen := map[string]bool{}
	for _, t := range toks[2:] {
		key, val, hasEq := strings.Cut(t.s, "=")
		if !hasEq {
			if s.Kind != Polygon {
				return s, false, fail(t.col, "expected name=value, found %q", clip(t.s))
			}
			ra, dec, err := pair(t.s)
			if err != nil {
				return s, false, fail(t.col, "expected a vertex RA,Dec in degrees, found %q: %v", clip(t.s), err)
			}
			if err := checkRADec(ra, dec); err != nil {
				return s, false, fail(t.col, "vertex %d: %v", len(s.Vertices)/2+1, err)
			}
			s.Vertices = append(s.Vertices, ra, dec)
			continue
		}
		vcol := t.col + len(key) + 1
		if key == "center" {
			key = "centre"
		}
		allowed := map[Kind][]string{Cap: {"centre", "radius", "completeness"},
			Box: {"ra", "dec", "completeness"}, Polygon: {"completeness"}}[s.Kind]
		known := false
		for _, a := range allowed {
			known = known || a == key
		}
		if !known {
			return s, false, fail(t.col, "unknown field %q for %s (expected %s)", clip(key), s.Kind, strings.Join(allowed, ", "))
		}
		if seen[key] {
			return s, false, fail(t.col, "field %s given twice", key)
		}
		seen[key] = true
		switch key {
		case "centre", "ra", "dec":
			a, b, err := pair(val)
			if err != nil {
				return s, false, fail(vcol, "%s: expected two numbers separated by a comma, found %q: %v", key, clip(val), err)
			}
			switch {
			case key != "dec" && !(a >= 0 && a <= 360):
				return s, false, fail(vcol, "%s: RA must be in [0, 360], got %v", key, a)
			case key == "ra" && !(b >= 0 && b <= 360):
				return s, false, fail(vcol, "%s: RA must be in [0, 360], got %v", key, b)
			case key == "centre" && !(b >= -90 && b <= 90):
				return s, false, fail(vcol, "%s: Dec must be in [-90, 90], got %v", key, b)
			case key == "dec" && !(a >= -90 && a <= 90 && b >= -90 && b <= 90):
				return s, false, fail(vcol, "dec: Dec must be in [-90, 90], got %v,%v", a, b)
			}
			switch key {
			case "centre":
				s.RA, s.Dec = a, b
			case "ra":
				s.RAMin, s.RAMax = a, b
			case "dec":
				s.DecMin, s.DecMax = a, b
			}
		case "radius", "completeness":
			v, err := number(val)
			if err != nil {
				return s, false, fail(vcol, "%s: expected a number, found %q: %v", key, clip(val), err)
			}
			if key == "radius" {
				if !(v > 0 && v <= 180) {
					return s, false, fail(vcol, "radius must be in (0, 180] degrees, got %v", v)
				}
				s.Radius = v
			} else {
				if !(v > 0 && v <= 1) {
					return s, false, fail(vcol, "completeness must be in (0, 1], got %v", v)
				}
				if s.Exclude {
					return s, false, fail(t.col, "completeness is only allowed on include shapes")
				}
				s.Completeness = v
			}
		}
	}
	need := map[Kind][]string{Cap: {"centre", "radius"}, Box: {"ra", "dec"}}[s.Kind]
	for _, k := range need {
		if !seen[k] {
			return s, false, fail(len(strings.TrimRight(text, " \t\r"))+1, "%s needs the field %s=", s.Kind, k)
		}
	}
	if err := s.compile(); err != nil {
		return s, false, fail(toks[0].col, "%s %s: %v", toks[0].s, s.Kind, err)
	}
	return s, true, nil
}

// pair parses "a,b".
func pair(v string) (a, b float64, err error) {
	x, y, ok := strings.Cut(v, ",")
	if !ok {
		return 0, 0, errors.New("missing comma")
	}
	if a, err = number(x); err != nil {
		return 0, 0, err
	}
	if b, err = number(y); err != nil {
		return 0, 0, err
	}
	return a, b, nil
}

// number parses a finite decimal floating-point number.
func number(v string) (float64, error) {
	if v == "" {
		return 0, errors.New("empty number")
	}
	f, err := strconv.ParseFloat(v, 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) {
			return 0, ne.Err
		}
		return 0, err
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return 0, errors.New("not a finite number")
	}
	return f, nil
}

// clip shortens s for an error message.
func clip(s string) string {
	if len(s) > 40 {
		return s[:40] + "…"
	}
	return s
}
