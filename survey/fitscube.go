package survey

// FITS image cubes (FITS Standard 4.0 §3.3.2, §7.1): the gridded fields of
// a run (density, classification, potential, ...) in one file, each as an
// IMAGE extension of 32-bit IEEE floats, readable by astropy, ds9 and
// every other FITS tool. Headers are written and parsed with the same
// helpers as the binary tables (fits_header.go, fits_write.go).

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
)

// Cube is a 3D image of Shape = (N1, N2, N3) values along our x, y, z.
// Data is flat with z fastest: the value at (i, j, k) is
// Data[(i·N2+j)·N3+k], the layout of reconstruct/grid. In the file the
// FITS axes run the other way, NAXIS1 fastest, so NAXIS1 = N3 (z),
// NAXIS2 = N2 (y), NAXIS3 = N1 (x), and the bytes are in the same order as
// Data; astropy's data array therefore has shape (N1, N2, N3) and
// data[i, j, k] = Data[(i·N2+j)·N3+k].
type Cube struct {
	Name  string       // EXTNAME; printable ASCII; "" writes none
	Shape [3]int       // sizes along x, y, z, each ≥ 1
	Data  []float32    // len Shape[0]·Shape[1]·Shape[2]; NaN is allowed (a blank)
	Unit  string       // BUNIT; printable ASCII; "" writes none
	Cards []HeaderCard // further keywords of the cube's header, in order
}

// HeaderCard is one header keyword. Key is a standard FITS keyword (1-8 of
// A-Z, 0-9, '-', '_'); the keywords that describe the file's layout
// (SIMPLE, BITPIX, NAXISn, EXTNAME, BUNIT, BSCALE, ...) are reserved.
// Value is a float64 (finite), int64, bool or string (printable ASCII,
// no trailing blank; long strings use CONTINUE cards); int and float32 are
// accepted on writing and read back as int64 and float64. Key COMMENT or
// HISTORY with a string Value of at most 72 characters writes a
// commentary card. Comment is printable ASCII, dropped when it does not
// fit on the card; comments are not read back. A card read with an
// undefined value has Value nil.
type HeaderCard struct {
	Key     string
	Value   any
	Comment string
}

// CubeFile is the whole content of a cube file as read by ReadCubeFile.
type CubeFile struct {
	Cubes   []Cube
	Primary []HeaderCard // the primary header's keywords, without the Meta encoding (MKEYn/MVALn)
	Meta    Meta         // the primary header decoded as table metadata (provenance lives here)
}

// cubeReserved reports whether key describes an image HDU's layout and so
// cannot be a HeaderCard.
func cubeReserved(key string) bool {
	if fitsStructuralKey(key) {
		return true
	}
	switch key {
	case "BSCALE", "BZERO", "BUNIT", "BLANK":
		return true
	}
	return false
}

// WriteCubes writes cubes to path atomically (a temporary file renamed
// into place; see WriteAtomic): a primary HDU without data whose header
// holds the primary cards and then meta (for provenance, Provenance.Meta)
// in the encoding of table metadata ("Table metadata in FITS headers" in
// fits_header.go), followed by one IMAGE extension per cube, BITPIX −32,
// with EXTNAME, BUNIT and the cube's Cards. It returns an error, and leaves
// path untouched, when a cube's Shape does not match its Data or a name,
// unit or card cannot be written as FITS.
func WriteCubes(path string, cubes []Cube, primary []HeaderCard, meta Meta) error {
	var ph fitsHeaderWriter
	ph.logical("SIMPLE", true, "conforms to the FITS Standard 4.0")
	ph.int("BITPIX", 8, "")
	ph.int("NAXIS", 0, "no primary data; the cubes are IMAGE extensions")
	ph.logical("EXTEND", true, "extensions follow")
	var rest fitsHeaderWriter
	if err := cubeWriteCards(&rest, primary, true); err != nil {
		return fmt.Errorf("survey: FITS cube file %s: primary header: %w", path, err)
	}
	if err := fitsWriteMeta(&rest, meta); err != nil {
		return err
	}
	if rest.long {
		// fitsverify warns about CONTINUE cards without it (HEASARC convention).
		ph.str("LONGSTRN", "OGIP 1.0", "CONTINUE cards hold long strings")
	}
	ph.buf = append(ph.buf, rest.buf...)
	headers := [][]byte{ph.end()}
	for c := range cubes {
		h, err := cubeHeader(&cubes[c])
		if err != nil {
			return fmt.Errorf("survey: FITS cube file %s: cube %d (%q): %w", path, c, cubes[c].Name, err)
		}
		headers = append(headers, h)
	}
	return WriteAtomic(path, func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<20)
		if _, err := bw.Write(headers[0]); err != nil {
			return err
		}
		buf := make([]byte, 1<<20)
		for c := range cubes {
			if _, err := bw.Write(headers[c+1]); err != nil {
				return err
			}
			data := cubes[c].Data
			for start := 0; start < len(data); start += len(buf) / 4 {
				part := data[start:min(len(data), start+len(buf)/4)]
				for i, v := range part {
					binary.BigEndian.PutUint32(buf[4*i:], math.Float32bits(v))
				}
				if _, err := bw.Write(buf[:4*len(part)]); err != nil {
					return err
				}
			}
			n := int64(4 * len(data))
			if pad := fitsPadded(n) - n; pad > 0 {
				clear(buf[:pad])
				if _, err := bw.Write(buf[:pad]); err != nil {
					return err
				}
			}
		}
		return bw.Flush()
	})
}

// cubeHeader checks c and returns its IMAGE extension header.
func cubeHeader(c *Cube) ([]byte, error) {
	n := 1
	for a, s := range c.Shape {
		if s < 1 {
			return nil, fmt.Errorf("shape %v: axis %d below 1", c.Shape, a)
		}
		if n > math.MaxInt/s {
			return nil, fmt.Errorf("shape %v overflows", c.Shape)
		}
		n *= s
	}
	if n != len(c.Data) {
		return nil, fmt.Errorf("shape %v holds %d values, Data has %d", c.Shape, n, len(c.Data))
	}
	if !fitsPrintable(c.Name) || strings.HasSuffix(c.Name, " ") {
		return nil, fmt.Errorf("name %q is not printable ASCII without trailing blanks, as EXTNAME must be", c.Name)
	}
	if !fitsPrintable(c.Unit) || strings.HasSuffix(c.Unit, " ") {
		return nil, fmt.Errorf("unit %q is not printable ASCII without trailing blanks, as BUNIT must be", c.Unit)
	}
	var h, rest fitsHeaderWriter
	h.str("XTENSION", "IMAGE", "image extension")
	h.int("BITPIX", -32, "IEEE 754 32-bit floats")
	h.int("NAXIS", 3, "")
	h.int("NAXIS1", int64(c.Shape[2]), "z, fastest")
	h.int("NAXIS2", int64(c.Shape[1]), "y")
	h.int("NAXIS3", int64(c.Shape[0]), "x, slowest")
	h.int("PCOUNT", 0, "")
	h.int("GCOUNT", 1, "")
	if c.Name != "" {
		rest.str("EXTNAME", c.Name, "")
	}
	if c.Unit != "" {
		rest.str("BUNIT", c.Unit, "")
	}
	if err := cubeWriteCards(&rest, c.Cards, false); err != nil {
		return nil, err
	}
	if rest.long {
		h.str("LONGSTRN", "OGIP 1.0", "CONTINUE cards hold long strings")
	}
	h.buf = append(h.buf, rest.buf...)
	return h.end(), nil
}

// cubeWriteCards appends cards to hw after checking them. In the primary
// header the MKEYn/MVALn keywords of the metadata encoding are reserved too.
func cubeWriteCards(hw *fitsHeaderWriter, cards []HeaderCard, primary bool) error {
	seen := map[string]bool{}
	for _, c := range cards {
		k := c.Key
		if !fitsPrintable(c.Comment) {
			return fmt.Errorf("keyword %s: comment %q is not printable ASCII", k, c.Comment)
		}
		if k == "COMMENT" || k == "HISTORY" {
			s, ok := c.Value.(string)
			if !ok || len(s) > 72 || !fitsPrintable(s) || strings.HasSuffix(s, " ") {
				return fmt.Errorf("%s card: value must be a string of at most 72 printable ASCII characters without a trailing blank, found %#v", k, c.Value)
			}
			hw.commentary(k, s)
			continue
		}
		if !fitsKeywordOK(k) {
			return fmt.Errorf("keyword %q is not 1-8 of A-Z, 0-9, '-', '_'", k)
		}
		if cubeReserved(k) || k == "LONGSTRN" {
			return fmt.Errorf("keyword %s is reserved for the file's layout", k)
		}
		if primary {
			_, mk := fitsIndexed(k, "MKEY")
			_, mv := fitsIndexed(k, "MVAL")
			if mk || mv {
				return fmt.Errorf("keyword %s is reserved for metadata", k)
			}
		}
		if seen[k] {
			return fmt.Errorf("keyword %s given twice", k)
		}
		seen[k] = true
		switch v := c.Value.(type) {
		case float64:
			if err := cubeFloatCard(hw, k, v, c.Comment); err != nil {
				return err
			}
		case float32:
			if err := cubeFloatCard(hw, k, float64(v), c.Comment); err != nil {
				return err
			}
		case int64:
			hw.int(k, v, c.Comment)
		case int:
			hw.int(k, int64(v), c.Comment)
		case bool:
			hw.logical(k, v, c.Comment)
		case string:
			if !fitsPrintable(v) || strings.HasSuffix(v, " ") {
				return fmt.Errorf("keyword %s: string %q is not printable ASCII without a trailing blank", k, v)
			}
			hw.str(k, v, c.Comment)
		default:
			return fmt.Errorf("keyword %s: value %#v of type %T is not a float64, int64, bool or string", k, c.Value, c.Value)
		}
	}
	return nil
}

// cubeFloatCard writes a real-valued card with the shortest decimal that
// reads back as v, always with '.' or an exponent so it stays a real.
func cubeFloatCard(hw *fitsHeaderWriter, k string, v float64, comment string) error {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("keyword %s: %v has no FITS representation", k, v)
	}
	s := strconv.FormatFloat(v, 'G', -1, 64)
	if !strings.ContainsAny(s, ".E") {
		s += ".0"
	}
	hw.literal(k, s, comment)
	return nil
}

// ReadCubes reads a file written by WriteCubes (or any FITS file whose
// images are 3D): the cubes of the primary HDU (when it has NAXIS = 3) and
// of every IMAGE extension with NAXIS = 3, in file order, and the primary
// header's keywords. Other extensions (tables) and empty images are
// skipped. BITPIX −32 and −64 are read, the latter rounded to float32;
// BSCALE and BZERO are applied. Every error about the file's content is an
// *InputError naming the file, the HDU and the keyword or byte at fault.
func ReadCubes(path string) ([]Cube, []HeaderCard, error) {
	cf, err := ReadCubeFile(path)
	if err != nil {
		return nil, nil, err
	}
	return cf.Cubes, cf.Primary, nil
}

// ReadCubeFile is ReadCubes that also returns the primary header's
// metadata (ProvenanceFromMeta recovers the provenance from it). Plain
// metadata keywords appear both in Meta and, typed, in Primary.
func ReadCubeFile(path string) (cf *CubeFile, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	defer fitsRecover(path, &err)
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	size := st.Size()
	cf = &CubeFile{}
	off := int64(0)
	for hdu := 0; ; hdu++ {
		if hdu > 0 {
			if off >= size {
				break
			}
			probe := make([]byte, min(8, size-off))
			if _, err := f.ReadAt(probe, off); err != nil {
				return nil, &InputError{File: path, Byte: off, Msg: fmt.Sprintf("reading HDU %d header", hdu), Err: err}
			}
			if !strings.HasPrefix("XTENSION", string(probe)) {
				break // FITS 4.0 §3.5: special records may follow the last HDU
			}
		}
		h, err := fitsReadHeader(f, path, off, size, hdu)
		if err != nil {
			return nil, err
		}
		dsize, err := h.dataSize(path)
		if err != nil {
			return nil, err
		}
		if h.dataOff+dsize > size {
			return nil, &InputError{File: path, Byte: h.dataOff,
				Msg: fmt.Sprintf("HDU %s data unit is truncated: %d bytes expected, %d present", h.describe(), dsize, size-h.dataOff)}
		}
		if hdu == 0 {
			cf.Primary = cubeCards(h, true)
			cf.Meta = h.meta()
		}
		kind := h.kind()
		if kind == "primary" || kind == "IMAGE" {
			c, err := cubeRead(f, path, h, dsize)
			if err != nil {
				return nil, err
			}
			if c != nil {
				cf.Cubes = append(cf.Cubes, *c)
			}
		}
		off = h.dataOff + fitsPadded(dsize)
	}
	return cf, nil
}

// cubeRead reads the 3D image of HDU h; it returns nil for an image with
// NAXIS = 0 and an error for any other dimension.
func cubeRead(f *os.File, path string, h *fitsHeader, dsize int64) (*Cube, error) {
	naxis, err := h.int(path, "NAXIS", true, 0, 0, 999)
	if err != nil {
		return nil, err
	}
	if naxis == 0 {
		return nil, nil
	}
	if naxis != 3 {
		return nil, h.cardErr(path, h.get("NAXIS"), fmt.Sprintf("expected a 3-dimensional image (NAXIS = 3), found NAXIS = %d", naxis))
	}
	if h.hdu == 0 {
		if c := h.get("GROUPS"); c != nil && c.raw == "T" {
			return nil, h.cardErr(path, c, "random groups are not an image")
		}
	} else {
		// FITS 4.0 §7.1.1: an IMAGE extension has PCOUNT 0 and GCOUNT 1.
		// Missing ones are taken as those values, as some writers
		// (astrogo/fitsio v0.3.0) leave them out.
		if _, err := h.int(path, "PCOUNT", false, 0, 0, 0); err != nil {
			return nil, err
		}
		if _, err := h.int(path, "GCOUNT", false, 1, 1, 1); err != nil {
			return nil, err
		}
	}
	bitpix, err := h.int(path, "BITPIX", true, 0, -64, 64)
	if err != nil {
		return nil, err
	}
	if bitpix != -32 && bitpix != -64 {
		return nil, h.cardErr(path, h.get("BITPIX"), fmt.Sprintf("expected a floating-point image (BITPIX = -32 or -64), found %d", bitpix))
	}
	var shape [3]int
	for a := 0; a < 3; a++ {
		// dataSize has checked NAXISn and that the data fit in the file.
		v, err := h.int(path, "NAXIS"+strconv.Itoa(3-a), true, 0, 1, 1<<40)
		if err != nil {
			return nil, err
		}
		shape[a] = int(v)
	}
	scale, zero := 1.0, 0.0
	for _, kz := range []struct {
		key string
		dst *float64
	}{{"BSCALE", &scale}, {"BZERO", &zero}} {
		if c := h.get(kz.key); c != nil {
			v, err := fitsParseReal(c)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, h.cardErr(path, c, fmt.Sprintf("expected a finite number, found %q", c.valueString()))
			}
			*kz.dst = v
		}
	}
	n := shape[0] * shape[1] * shape[2]
	width := int(-bitpix / 8)
	if int64(n)*int64(width) != dsize {
		return nil, &InputError{File: path, Byte: h.off, Msg: fmt.Sprintf("HDU %s: data size %d does not match the shape", h.describe(), dsize)}
	}
	c := &Cube{Name: h.extName(), Shape: shape, Data: make([]float32, n), Unit: strings.TrimSpace(h.str("BUNIT")), Cards: cubeCards(h, false)}
	r := io.NewSectionReader(f, h.dataOff, dsize)
	per := min(n, (1<<20)/width)
	buf := make([]byte, per*width)
	for start := 0; start < n; start += per {
		m := min(per, n-start)
		if _, err := io.ReadFull(r, buf[:m*width]); err != nil {
			return nil, &InputError{File: path, Byte: h.dataOff + int64(start*width), Msg: fmt.Sprintf("reading HDU %s data", h.describe()), Err: err}
		}
		out := c.Data[start : start+m]
		for i := range out {
			var v float64
			if width == 4 {
				v = float64(math.Float32frombits(binary.BigEndian.Uint32(buf[4*i:])))
			} else {
				v = math.Float64frombits(binary.BigEndian.Uint64(buf[8*i:]))
			}
			if scale != 1 || zero != 0 {
				v = v*scale + zero
			}
			out[i] = float32(v)
		}
	}
	return c, nil
}

// cubeCards returns the non-layout keywords of h as typed HeaderCards, in
// order. In the primary header the MKEYn/MVALn metadata pairs are left out.
func cubeCards(h *fitsHeader, primary bool) []HeaderCard {
	var out []HeaderCard
	for i := range h.cards {
		c := &h.cards[i]
		if !c.hasValue {
			if c.key == "COMMENT" || c.key == "HISTORY" {
				out = append(out, HeaderCard{Key: c.key, Value: c.text})
			}
			continue
		}
		if c.hierarch || cubeReserved(c.key) || c.key == "LONGSTRN" {
			continue
		}
		if primary {
			_, mk := fitsIndexed(c.key, "MKEY")
			_, mv := fitsIndexed(c.key, "MVAL")
			if mk || mv {
				continue
			}
		}
		out = append(out, HeaderCard{Key: c.key, Value: cubeValue(c)})
	}
	return out
}

// cubeValue types a card's value: string, bool (T/F), int64, float64, the
// literal text for anything else (complex numbers), nil when undefined.
func cubeValue(c *fitsCard) any {
	if c.isStr {
		return c.str
	}
	switch c.raw {
	case "":
		return nil
	case "T":
		return true
	case "F":
		return false
	}
	if v, err := strconv.ParseInt(c.raw, 10, 64); err == nil {
		return v
	}
	if v, err := strconv.ParseFloat(strings.Replace(c.raw, "D", "E", 1), 64); err == nil {
		return v
	}
	return c.raw
}
