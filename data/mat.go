package data

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
)

// MAT-file level 5 data types and array classes (MATLAB's "MAT-File
// Format" document, tables 1-2 and 1-3).
const (
	miINT8       = 1
	miUINT8      = 2
	miINT16      = 3
	miUINT16     = 4
	miINT32      = 5
	miUINT32     = 6
	miSINGLE     = 7
	miDOUBLE     = 9
	miINT64      = 12
	miUINT64     = 13
	miMATRIX     = 14
	miCOMPRESSED = 15

	mxDOUBLE = 6  // first numeric class
	mxUINT64 = 15 // last numeric class

	matHeaderSize = 128
	matComplex    = 0x08 // array flags bit: complex
)

// matElemSize is the byte size of the numeric MAT data types.
var matElemSize = map[uint32]int{miINT8: 1, miUINT8: 1, miINT16: 2, miUINT16: 2, miINT32: 4, miUINT32: 4, miSINGLE: 4, miDOUBLE: 8, miINT64: 8, miUINT64: 8}

// hdf5Signature starts an HDF5 file; a MATLAB v7.3 MAT-file has it after
// a 512-byte user block holding the MAT header text.
const hdf5Signature = "\x89HDF\r\n\x1a\n"

// matVar is one top-level variable of a MAT-file: its name, and where its
// miMATRIX element's contents lie.
type matVar struct {
	name   string
	body   []byte // the miMATRIX element's contents
	offset int    // byte offset of the element in the file
	zipped bool   // found inside an miCOMPRESSED element
}

// decodeMAT decodes a MATLAB level 5 MAT-file (save -v6 or -v7; zlib
// compressed variables, miCOMPRESSED, are inflated) and returns the
// numeric array named opts.variable, or the file's only variable when
// opts.variable is "". Every numeric class (double, single, 8- to 64-bit
// integers, logical) is read as float64, whatever type the file stores
// the values in; MATLAB's column-major order is turned into C order. A
// complex, sparse, cell, struct, object or char variable is an error
// naming it. A v7.3 file (HDF5 after a 512-byte header) is read by
// decodeMAT73, within the limits stated there.
func decodeMAT(path string, raw []byte, opts readOptions) (*array, error) {
	bad := func(format string, args ...any) error {
		return &FileError{Path: path, Err: fmt.Errorf(format, args...)}
	}
	if isMATv73(raw) {
		return decodeMAT73(path, raw, opts)
	}
	if len(raw) < matHeaderSize {
		return nil, bad("MAT-file header truncated: file has %d bytes, the header needs %d", len(raw), matHeaderSize)
	}
	var order binary.ByteOrder
	switch string(raw[126:128]) {
	case "IM":
		order = binary.LittleEndian
	case "MI":
		order = binary.BigEndian
	default:
		return nil, bad("header offset 126 (endian indicator): found %q, expected \"IM\" or \"MI\" of a MATLAB level 5 MAT-file", raw[126:128])
	}
	if v := order.Uint16(raw[124:]); v != 0x0100 {
		return nil, bad("header offset 124 (version): found %#04x, expected 0x0100 (level 5)", v)
	}
	vars, err := matVariables(raw, order)
	if err != nil {
		return nil, bad("%w", err)
	}
	names := make([]string, len(vars))
	for k, v := range vars {
		names[k] = v.name
	}
	listed := quoteAll(slices.Sorted(slices.Values(names)))
	var v *matVar
	switch {
	case opts.variable != "":
		for k := range vars {
			if vars[k].name == opts.variable {
				v = &vars[k]
				break
			}
		}
		if v == nil {
			if len(vars) == 0 {
				listed = "no variables"
			}
			return nil, bad("no variable %q (named by %s); the file holds %s", opts.variable, keyName(opts), listed)
		}
	case len(vars) == 1:
		v = &vars[0]
	default:
		return nil, bad("file holds %d variables (%s); set %s to the one to read", len(vars), listed, keyName(opts))
	}
	a, err := matNumeric(v.body, order)
	if err != nil {
		where := fmt.Sprintf("variable %q (element at byte %d)", v.name, v.offset)
		if v.zipped {
			where = fmt.Sprintf("variable %q (compressed element at byte %d)", v.name, v.offset)
		}
		return nil, bad("%s: %w", where, err)
	}
	return a, nil
}

// matElement reads the data element at the start of b: its type, its data
// and the number of bytes it takes with padding to 8 bytes. The small data
// element format (type and size in one 4-byte word) is understood.
func matElement(b []byte, order binary.ByteOrder) (typ uint32, data []byte, n int, err error) {
	if len(b) < 8 {
		return 0, nil, 0, fmt.Errorf("element tag truncated: %d bytes left, a tag needs 8", len(b))
	}
	first := order.Uint32(b)
	if small := first >> 16; small != 0 {
		if small > 4 {
			return 0, nil, 0, fmt.Errorf("small element of %d bytes; at most 4 fit", small)
		}
		return first & 0xffff, b[4 : 4+small], 8, nil
	}
	size := order.Uint32(b[4:])
	if uint64(size) > uint64(len(b)-8) {
		return 0, nil, 0, fmt.Errorf("element of type %d declares %d bytes, only %d follow", first, size, len(b)-8)
	}
	n = 8 + int(size)
	if first != miCOMPRESSED {
		n = min(len(b), (n+7)/8*8)
	}
	return first, b[8 : 8+size], n, nil
}

// matVariables lists the top-level variables of a level 5 MAT-file,
// inflating compressed ones.
func matVariables(raw []byte, order binary.ByteOrder) ([]matVar, error) {
	var vars []matVar
	for off := matHeaderSize; off < len(raw); {
		typ, data, n, err := matElement(raw[off:], order)
		if err != nil {
			return nil, fmt.Errorf("byte %d: %w", off, err)
		}
		zipped := false
		if typ == miCOMPRESSED {
			zr, err := zlib.NewReader(bytes.NewReader(data))
			if err != nil {
				return nil, fmt.Errorf("compressed element at byte %d: %w", off, err)
			}
			inner, err := io.ReadAll(io.LimitReader(zr, maxMember+1))
			if err == nil && len(inner) > maxMember {
				err = fmt.Errorf("inflates past %d bytes", maxMember)
			}
			if err != nil {
				return nil, fmt.Errorf("compressed element at byte %d: %w", off, err)
			}
			typ, data, _, err = matElement(inner, order)
			if err != nil {
				return nil, fmt.Errorf("compressed element at byte %d: %w", off, err)
			}
			zipped = true
		}
		if typ == miMATRIX {
			name, err := matName(data, order)
			if err != nil {
				return nil, fmt.Errorf("element at byte %d: %w", off, err)
			}
			vars = append(vars, matVar{name: name, body: data, offset: off, zipped: zipped})
		}
		off += n
	}
	return vars, nil
}

// matName returns the array name of an miMATRIX element's contents.
func matName(b []byte, order binary.ByteOrder) (string, error) {
	off := 0
	for range 2 { // array flags, dimensions
		_, _, n, err := matElement(b[off:], order)
		if err != nil {
			return "", err
		}
		off += n
	}
	_, name, _, err := matElement(b[off:], order)
	if err != nil {
		return "", fmt.Errorf("array name: %w", err)
	}
	return string(name), nil
}

// matNumeric decodes the contents of a numeric miMATRIX element into a C
// order array of MATLAB's dimensions.
func matNumeric(b []byte, order binary.ByteOrder) (*array, error) {
	typ, flags, n, err := matElement(b, order)
	if err != nil {
		return nil, fmt.Errorf("array flags: %w", err)
	}
	if typ != miUINT32 || len(flags) < 8 {
		return nil, fmt.Errorf("array flags: type %d of %d bytes; expected miUINT32 of 8", typ, len(flags))
	}
	class := order.Uint32(flags) & 0xff
	if class < mxDOUBLE || class > mxUINT64 {
		names := map[uint32]string{1: "a cell array", 2: "a struct", 3: "an object", 4: "a char array", 5: "a sparse matrix"}
		what, ok := names[class]
		if !ok {
			what = fmt.Sprintf("of class %d", class)
		}
		return nil, fmt.Errorf("is %s; expected a numeric array (double, single or integer)", what)
	}
	if order.Uint32(flags)&(matComplex<<8) != 0 {
		return nil, errors.New("is complex; expected real numbers")
	}
	off := n
	typ, dimsRaw, n, err := matElement(b[off:], order)
	if err != nil {
		return nil, fmt.Errorf("dimensions: %w", err)
	}
	if typ != miINT32 || len(dimsRaw)%4 != 0 || len(dimsRaw) < 8 {
		return nil, fmt.Errorf("dimensions: type %d of %d bytes; expected miINT32, at least 2", typ, len(dimsRaw))
	}
	off += n
	shape := make([]int, len(dimsRaw)/4)
	total := 1
	for k := range shape {
		d := int(int32(order.Uint32(dimsRaw[4*k:])))
		if d < 0 || (d > 0 && total > math.MaxInt32/d) {
			return nil, fmt.Errorf("dimensions %v: dimension %d is %d", shape[:k], k+1, d)
		}
		shape[k] = d
		total *= d
	}
	_, _, n, err = matElement(b[off:], order) // array name
	if err != nil {
		return nil, fmt.Errorf("array name: %w", err)
	}
	off += n
	typ, vals, _, err := matElement(b[off:], order)
	if err != nil {
		return nil, fmt.Errorf("real part: %w", err)
	}
	esize, ok := matElemSize[typ]
	if !ok {
		return nil, fmt.Errorf("real part: data type %d is not numeric", typ)
	}
	if len(vals) != total*esize {
		return nil, fmt.Errorf("real part: dimensions %v need %d values, found %d bytes of %d-byte type %d", shape, total, len(vals), esize, typ)
	}
	data := make([]float64, total)
	for k := range data {
		data[k] = matValue(vals[k*esize:], typ, order)
	}
	// Drop trailing singleton dimensions beyond 2, as MATLAB does.
	for len(shape) > 2 && shape[len(shape)-1] == 1 {
		shape = shape[:len(shape)-1]
	}
	return &array{shape: shape, data: fortranToC(data, shape)}, nil
}

// matValue decodes the element of MAT data type typ at the start of b.
func matValue(b []byte, typ uint32, order binary.ByteOrder) float64 {
	switch typ {
	case miINT8:
		return float64(int8(b[0]))
	case miUINT8:
		return float64(b[0])
	case miINT16:
		return float64(int16(order.Uint16(b)))
	case miUINT16:
		return float64(order.Uint16(b))
	case miINT32:
		return float64(int32(order.Uint32(b)))
	case miUINT32:
		return float64(order.Uint32(b))
	case miSINGLE:
		return float64(math.Float32frombits(order.Uint32(b)))
	case miINT64:
		return float64(int64(order.Uint64(b)))
	case miUINT64:
		return float64(order.Uint64(b))
	default: // miDOUBLE
		return math.Float64frombits(order.Uint64(b))
	}
}

// isMATv73 reports whether raw starts like a MATLAB v7.3 MAT-file.
func isMATv73(raw []byte) bool {
	return len(raw) >= 512+len(hdf5Signature) && strings.HasPrefix(string(raw[512:]), hdf5Signature)
}
