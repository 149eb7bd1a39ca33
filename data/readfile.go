package data

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
)

// MaxMagnitude is the largest magnitude skein accepts for an entry of a
// matrix, as read and after preprocessing. Statistics of the cohort and
// the models square entries and sum them over participants and edges;
// below 1e100 such sums stay finite (1e200 per square, far below the
// float64 maximum of about 1.8e308), above it they may overflow to Inf
// and turn into NaN. Common practice, no source: no connectome measure
// comes near it.
const MaxMagnitude = 1e100

// maxTableBytes bounds the participants table and one-name-a-line files
// (region labels, a stack's participant order): 1 GiB, far beyond any
// cohort, so that a wrong path never reads without end.
const maxTableBytes = 1 << 30

// readRegular reads the file at path, which must be a regular file (after
// following symbolic links) of at most limit bytes. A FIFO, a device such
// as /dev/zero, a socket or a folder is refused before it is opened for
// reading, so that no read can block or run without end; a symbolic link
// that leads nowhere is an error naming it.
func readRegular(path string, limit int64) ([]byte, error) {
	info, err := os.Stat(path)
	if errors.Is(err, fs.ErrNotExist) {
		if li, lerr := os.Lstat(path); lerr == nil && li.Mode()&fs.ModeSymlink != 0 {
			target, _ := os.Readlink(path)
			return nil, &FileError{Path: path, Err: fmt.Errorf("a symbolic link to %q, which does not exist", target)}
		}
	}
	if err != nil {
		_, err = os.Open(path) // the error as os.ReadFile gives it: "open PATH: ..."
		return nil, err
	}
	if !info.Mode().IsRegular() {
		return nil, &FileError{Path: path, Err: fmt.Errorf("not a regular file but %s", describeMode(info.Mode()))}
	}
	if info.Size() > limit {
		return nil, &FileError{Path: path, Err: fmt.Errorf("file of %d bytes, more than the %d it can hold", info.Size(), limit)}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// One buffer of the size the file had, with a byte to spare to see it
	// grow, read into as os.ReadFile does: io.ReadAll's doubling would
	// leave about as much garbage as the file holds.
	raw := make([]byte, 0, min(info.Size(), limit)+1)
	lr := io.LimitReader(f, limit+1)
	for {
		n, err := lr.Read(raw[len(raw):cap(raw)])
		raw = raw[:len(raw)+n]
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, &FileError{Path: path, Err: err}
		}
		if len(raw) == cap(raw) {
			raw = append(raw, 0)[:len(raw)]
		}
	}
	if int64(len(raw)) > limit {
		return nil, &FileError{Path: path, Err: fmt.Errorf("file grew past %d bytes while it was read", limit)}
	}
	return raw, nil
}

// describeMode names the kind of a file that is not a regular one.
func describeMode(m fs.FileMode) string {
	switch {
	case m.IsDir():
		return "a folder"
	case m&fs.ModeNamedPipe != 0:
		return "a named pipe (FIFO)"
	case m&fs.ModeCharDevice != 0:
		return "a character device"
	case m&fs.ModeDevice != 0:
		return "a device"
	case m&fs.ModeSocket != 0:
		return "a socket"
	default:
		return "mode " + m.String()
	}
}

// matrixLimit returns the most bytes a matrix file of p regions may hold:
// for a binary file (.npy, .npz, .mat, CIFTI-2), headers of up to 64 KiB,
// 1 KiB a region for names (CIFTI-2's XML) and room for four p × p
// float64 arrays (an .npz or .mat may hold a few named arrays); for text,
// 64 bytes a value (a number in full precision with its separator) and
// 1 KiB a row for labels and white space. With p unknown (the first file)
// it allows p = 10,000 regions.
func matrixLimit(p int, binary bool) int64 {
	if p <= 0 {
		p = 10000
	}
	n := int64(p) * int64(p)
	if binary {
		return 64<<10 + 32*n + 1024*int64(p+1)
	}
	return 64<<10 + 64*n + 1024*int64(p+1)
}
