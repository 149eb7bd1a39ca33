package data

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strings"

	"codeberg.org/sbinet/npyio"
	"gonum.org/v1/gonum/mat"
)

// npyDtypes are the element types decodeNPY accepts: float32 and float64 in
// either byte order, as NumPy writes them in the header's 'descr'.
var npyDtypes = map[string]string{"<f4": "float32", ">f4": "float32", "<f8": "float64", ">f8": "float64"}

// decodeNPY decodes the contents of a .npy file (format versions 1 and 2)
// holding a float32 or float64 array of any byte order, C or Fortran
// order, and returns it in C order. Reading is done by
// codeberg.org/sbinet/npyio; this wrapper checks the header first (dtype,
// shape against the data's length) and turns every failure into a
// FileError.
func decodeNPY(path string, raw []byte) (arr *array, err error) {
	defer func() {
		if r := recover(); r != nil { // npyio panics on some malformed headers
			arr, err = nil, &FileError{Path: path, Err: fmt.Errorf("not a readable .npy file: %v", r)}
		}
	}()
	if err := checkNPYPreamble(raw); err != nil {
		return nil, &FileError{Path: path, Err: fmt.Errorf("not a readable .npy file: %w", err)}
	}
	rd := bytes.NewReader(raw)
	r, err := npyio.NewReader(rd)
	if err != nil {
		return nil, &FileError{Path: path, Err: fmt.Errorf("not a readable .npy file: %w", err)}
	}
	descr := strings.Trim(strings.TrimSpace(r.Header.Descr.Type), `'"`)
	kind, ok := npyDtypes[descr]
	if strings.Contains(descr, "O") {
		return nil, &FileError{Path: path, Err: errors.New("array holds Python objects (dtype 'O', pickled data), which skein does not read; save a float32 or float64 array (numpy.asarray(x, dtype=float))")}
	}
	if !ok {
		return nil, &FileError{Path: path, Err: fmt.Errorf("dtype %q is not supported; expected float32 or float64 ('<f4', '>f4', '<f8', '>f8')", descr)}
	}
	shape := r.Header.Descr.Shape
	n := 1
	for _, d := range shape {
		if d < 0 || (d > 0 && n > rd.Len()/d) {
			return nil, &FileError{Path: path, Err: fmt.Errorf("shape %v does not fit the file's %d data bytes", shape, rd.Len())}
		}
		n *= d
	}
	esize := 8
	if kind == "float32" {
		esize = 4
	}
	if n*esize != rd.Len() {
		return nil, &FileError{Path: path, Err: fmt.Errorf("shape %v of %s needs %d data bytes, found %d", shape, kind, n*esize, rd.Len())}
	}
	// The data are decoded straight from the file's bytes into the
	// float64 array, without an intermediate copy in the file's type.
	data := make([]float64, n)
	body := raw[len(raw)-rd.Len():]
	var order binary.ByteOrder = binary.LittleEndian
	if descr[0] == '>' {
		order = binary.BigEndian
	}
	if kind == "float32" {
		for i := range data {
			data[i] = float64(math.Float32frombits(order.Uint32(body[4*i:])))
		}
	} else {
		for i := range data {
			data[i] = math.Float64frombits(order.Uint64(body[8*i:]))
		}
	}
	if r.Header.Descr.Fortran && len(shape) > 1 {
		data = fortranToC(data, shape)
	}
	return &array{shape: shape, data: data}, nil
}

// checkNPYPreamble checks the magic string, the format version and that
// the header length fits in raw, before npyio allocates the header.
func checkNPYPreamble(raw []byte) error {
	const magic = "\x93NUMPY"
	if len(raw) < len(magic)+4 || string(raw[:len(magic)]) != magic {
		return errors.New(`file does not start with the .npy magic string "\x93NUMPY"`)
	}
	var headerLen, start int
	switch major := raw[6]; major {
	case 1:
		headerLen, start = int(binary.LittleEndian.Uint16(raw[8:10])), 10
	case 2:
		if len(raw) < 12 {
			return errors.New("file ends inside the preamble")
		}
		headerLen, start = int(binary.LittleEndian.Uint32(raw[8:12])), 12
	default:
		return fmt.Errorf("format version %d.%d is not supported; expected 1.0 or 2.0", major, raw[7])
	}
	if headerLen > len(raw)-start {
		return fmt.Errorf("header of %d bytes runs past the end of the file", headerLen)
	}
	if !bytes.Contains(raw[start:start+headerLen], []byte("\n")) {
		return errors.New("header does not end with a newline")
	}
	return nil
}

// fortranToC reorders data of the given shape from Fortran (first index
// fastest) to C order (last index fastest).
func fortranToC(data []float64, shape []int) []float64 {
	out := make([]float64, len(data))
	idx := make([]int, len(shape))
	for c := range out {
		// idx is the multi-index of C position c; find its Fortran offset.
		f, stride := 0, 1
		for k := range shape {
			f += idx[k] * stride
			stride *= shape[k]
		}
		out[c] = data[f]
		for k := len(shape) - 1; k >= 0; k-- {
			idx[k]++
			if idx[k] < shape[k] {
				break
			}
			idx[k] = 0
		}
	}
	return out
}

// matrix returns the 2-D array as a matrix, or an error naming the shape.
func (a *array) matrix(path string) (*mat.Dense, error) {
	if len(a.shape) != 2 {
		return nil, &FileError{Path: path, Err: fmt.Errorf("array has %d dimensions (shape %v); expected a 2-D p × p matrix", len(a.shape), a.shape)}
	}
	if a.shape[0] == 0 || a.shape[1] == 0 {
		return nil, &FileError{Path: path, Err: fmt.Errorf("array of shape %v is empty", a.shape)}
	}
	return mat.NewDense(a.shape[0], a.shape[1], a.data), nil
}

// stack returns the k-th p × p matrix of an n × p × p array as a view of
// the array's data, not a copy, so that a stack is held once: the matrices
// of different k share no element, and each participant's matrix is read
// (and preprocessed in place) once.
func (a *array) stack(k int) *mat.Dense {
	r, c := a.shape[1], a.shape[2]
	return mat.NewDense(r, c, a.data[k*r*c:(k+1)*r*c:(k+1)*r*c])
}

// checkStack reports an error unless the array is a non-empty n × p × q stack.
func (a *array) checkStack(path string) error {
	if len(a.shape) != 3 {
		return &FileError{Path: path, Err: fmt.Errorf("array has %d dimensions (shape %v); expected a 3-D n × p × p stack", len(a.shape), a.shape)}
	}
	if a.shape[0] == 0 || a.shape[1] == 0 || a.shape[2] == 0 {
		return &FileError{Path: path, Err: errors.New("stack is empty")}
	}
	return nil
}
