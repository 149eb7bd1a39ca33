package data

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// array is a numeric array read from one of the cohort's files, in C
// (row-major) order whatever the file's order, with what the file says
// about its rows and columns.
type array struct {
	shape []int
	data  []float64
	// names labels the last axis (the regions) when the file names them:
	// a text header row, a CIFTI-2 parcels map. nil otherwise.
	names []string
	// ids names the participants of a stack (the first axis) when they
	// come from the file itself (an .npz id array). nil otherwise.
	ids []string
	// where gives the file line and column of entry (i, j) of a 2-D array
	// read from text; nil for binary formats.
	where func(i, j int) (line, column int)
}

// readOptions says which array to take from a file that holds several.
type readOptions struct {
	// variable names the array in an .npz or .mat file; "" takes the
	// file's only array.
	variable string
	// idsVariable names an array of participant ids in an .npz file,
	// read into array.ids; "" reads none.
	idsVariable string
	// series reads delimited text as a T × p series: a label column
	// labels the time points and need not match the header's region
	// names, as it must in a p × p matrix.
	series bool
	// key is the experiment-file key that set variable, for messages
	// ("cohort.functional.variable"); "" when the caller set it.
	key string
}

// Format names of the files readArray reads, chosen by the file's
// extension (case-insensitive).
const (
	formatText     = "text"          // delimited text, any other extension
	formatNPY      = ".npy"          // NumPy array
	formatNPZ      = ".npz"          // NumPy archive of named arrays
	formatMAT      = ".mat"          // MATLAB MAT-file, level 5 or v7.3
	formatPconn    = ".pconn.nii"    // CIFTI-2 parcellated connectivity
	formatPtseries = ".ptseries.nii" // CIFTI-2 parcellated time series
)

// formatOf returns the format of path by its extension.
func formatOf(path string) string {
	lower := strings.ToLower(filepath.Base(path))
	for _, f := range []string{formatPconn, formatPtseries, formatNPY, formatNPZ, formatMAT} {
		if strings.HasSuffix(lower, f) {
			return f
		}
	}
	if strings.HasSuffix(lower, ".nii") {
		return ".nii"
	}
	return formatText
}

// hasVariables reports whether files of format f hold named arrays, so
// that the key variable applies to them.
func hasVariables(f string) bool { return f == formatNPZ || f == formatMAT }

// readArray reads the numeric array in the file at path, in the format its
// extension names (see formatOf), and returns it in C order: a 2-D T × p
// series or p × p matrix, or a 3-D n × p × p stack. It is the single entry
// point of the loader's file formats; every failure is a *FileError naming
// the file and, where there is one, the place in it.
func readArray(path string, opts readOptions) (*array, error) {
	raw, err := readRegular(path, 8*maxTableBytes)
	if err != nil {
		return nil, err
	}
	return decodeArray(path, raw, opts)
}

// decodeArray is readArray on the file's contents raw.
func decodeArray(path string, raw []byte, opts readOptions) (*array, error) {
	f := formatOf(path)
	if opts.variable != "" && !hasVariables(f) {
		return nil, &FileError{Path: path, Err: fmt.Errorf("%s %q names an array, but a %s file holds one unnamed array; remove the key", keyName(opts), opts.variable, f)}
	}
	switch f {
	case formatNPY:
		return decodeNPY(path, raw)
	case formatNPZ:
		return decodeNPZ(path, raw, opts)
	case formatMAT:
		return decodeMAT(path, raw, opts)
	case formatPconn, formatPtseries:
		return decodeCIFTI(path, raw)
	case ".nii":
		return nil, &FileError{Path: path, Err: errors.New("a .nii file is read only as CIFTI-2 parcellated data, named .pconn.nii or .ptseries.nii")}
	}
	tm, err := parseText(path, raw, !opts.series)
	if err != nil {
		return nil, err
	}
	r, c := tm.m.Dims()
	return &array{shape: []int{r, c}, data: tm.m.RawMatrix().Data, names: tm.labels, where: tm.position}, nil
}

// keyName is the key that chose the variable, for messages.
func keyName(opts readOptions) string {
	if opts.key != "" {
		return opts.key
	}
	return "variable"
}

// ReadSeries reads one participant's regional time series from the file at
// path: a T × p array, T time points (rows) by p regions (columns), and
// the region names when the file holds them (nil otherwise). The format is
// chosen by the extension as for the cohort's matrices:
//
//   - delimited text: a header row of region names; a corner cell above an
//     index column (such as "Node" or empty) is accepted, and an index
//     column counting the rows from 0 or 1 is dropped;
//   - .npy: a 2-D float32 or float64 array;
//   - .npz and .mat (MATLAB level 5, compressed or not, or v7.3 with
//     contiguous or chunked, deflated variables): the 2-D numeric array
//     named variable ("" takes the file's only array);
//   - .ptseries.nii: CIFTI-2 parcellated series, names from its parcels
//     map.
//
// variable must be "" for the formats that hold one unnamed array. The
// values are returned as read: finiteness, constant series and the
// number of time points are the caller's checks. Errors are *FileError
// values naming the file and the place.
func ReadSeries(path, variable string) (*mat.Dense, []string, error) {
	raw, err := readRegular(path, 8*maxTableBytes)
	if err != nil {
		return nil, nil, err
	}
	return decodeSeries(path, raw, variable)
}

// decodeSeries is ReadSeries on the file's contents raw: delimited text
// through parseSeriesText, any other format through decodeArray.
func decodeSeries(path string, raw []byte, variable string) (*mat.Dense, []string, error) {
	switch formatOf(path) {
	case formatPconn:
		return nil, nil, &FileError{Path: path, Err: errors.New("a .pconn.nii file holds a connectivity matrix, not time series; expected .ptseries.nii")}
	case formatText:
		if variable != "" {
			return nil, nil, &FileError{Path: path, Err: fmt.Errorf("variable %q names an array, but a text file holds one unnamed table; remove the key", variable)}
		}
		return parseSeriesText(path, raw)
	}
	a, err := decodeArray(path, raw, readOptions{variable: variable, series: true})
	if err != nil {
		return nil, nil, err
	}
	if len(a.shape) != 2 {
		return nil, nil, &FileError{Path: path, Err: fmt.Errorf("array has %d dimensions (shape %v); expected a 2-D T × p series (time points by regions)", len(a.shape), a.shape)}
	}
	if a.shape[0] == 0 || a.shape[1] == 0 {
		return nil, nil, &FileError{Path: path, Err: fmt.Errorf("array of shape %v is empty", a.shape)}
	}
	return mat.NewDense(a.shape[0], a.shape[1], a.data), a.names, nil
}
