package data

import (
	"archive/zip"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

	"codeberg.org/sbinet/npyio"
)

// maxMember is the largest uncompressed .npz member decodeNPZ reads, a
// guard against a compressed member that inflates without bound.
const maxMember = 1 << 32

// decodeNPZ decodes a NumPy .npz archive (numpy.savez or
// numpy.savez_compressed: a zip file of .npy members, stored or deflated)
// and returns the float array named opts.variable, or the archive's only
// array when opts.variable is "". With opts.idsVariable set, that member,
// a 1-D array of strings (dtype 'U' or 'S') or of integers, gives the
// participant ids of a stack, one per entry of the array's first axis.
//
// The members are decoded by decodeNPY, which reads numbers only: an array
// of Python objects (dtype 'O', pickled) is an error naming the member,
// never read.
func decodeNPZ(path string, raw []byte, opts readOptions) (*array, error) {
	zr, err := zip.NewReader(bytes.NewReader(raw), int64(len(raw)))
	if err != nil {
		return nil, &FileError{Path: path, Err: fmt.Errorf("not a readable .npz file (a zip archive of .npy arrays): %w", err)}
	}
	members := map[string]*zip.File{}
	var names []string
	for _, f := range zr.File {
		name, ok := strings.CutSuffix(f.Name, ".npy")
		if !ok {
			continue
		}
		members[name] = f
		names = append(names, name)
	}
	slices.Sort(names)
	listed := quoteAll(names)
	if len(names) == 0 {
		return nil, &FileError{Path: path, Err: errors.New("archive holds no .npy arrays")}
	}
	name := opts.variable
	if name == "" {
		others := slices.DeleteFunc(slices.Clone(names), func(n string) bool { return n == opts.idsVariable })
		if len(others) != 1 {
			return nil, &FileError{Path: path, Err: fmt.Errorf("archive holds %d arrays (%s); set %s to the one to read", len(names), listed, keyName(opts))}
		}
		name = others[0]
	}
	read := func(name, key string) ([]byte, error) {
		f, ok := members[name]
		if !ok {
			return nil, &FileError{Path: path, Err: fmt.Errorf("no array %q (named by %s); the archive holds %s", name, key, listed)}
		}
		rc, err := f.Open()
		if err != nil {
			return nil, &FileError{Path: path, Err: fmt.Errorf("array %q: %w", name, err)}
		}
		defer rc.Close()
		b, err := io.ReadAll(io.LimitReader(rc, maxMember+1))
		if err == nil && len(b) > maxMember {
			err = fmt.Errorf("member is larger than %d bytes", maxMember)
		}
		if err != nil {
			return nil, &FileError{Path: path, Err: fmt.Errorf("array %q: %w", name, err)}
		}
		return b, nil
	}
	b, err := read(name, keyName(opts))
	if err != nil {
		return nil, err
	}
	member := fmt.Sprintf("%s (array %q)", path, name)
	a, err := decodeNPY(member, b)
	if err != nil {
		return nil, err
	}
	if opts.idsVariable == "" {
		return a, nil
	}
	b, err = read(opts.idsVariable, "ids_variable")
	if err != nil {
		return nil, err
	}
	a.ids, err = decodeNPYStrings(fmt.Sprintf("%s (array %q)", path, opts.idsVariable), b)
	if err != nil {
		return nil, err
	}
	return a, nil
}

// decodeNPYStrings decodes a .npy file holding a 1-D array of names:
// unicode strings (dtype '<U' or '>U', UTF-32), byte strings ('|S', read
// as UTF-8) or integers ('i' or 'u' of 1 to 8 bytes, either byte order,
// written in decimal). Trailing NUL characters, NumPy's padding, are
// dropped. It is how an .npz stack's participant ids are read.
func decodeNPYStrings(path string, raw []byte) (names []string, err error) {
	defer func() {
		if r := recover(); r != nil { // npyio panics on some malformed headers
			names, err = nil, &FileError{Path: path, Err: fmt.Errorf("not a readable .npy file: %v", r)}
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
	body := raw[len(raw)-rd.Len():]
	shape := r.Header.Descr.Shape
	if len(shape) != 1 {
		return nil, &FileError{Path: path, Err: fmt.Errorf("id array has shape %v; expected a 1-D array of names", shape)}
	}
	n := shape[0]
	descr := strings.Trim(strings.TrimSpace(r.Header.Descr.Type), `'"`)
	if len(descr) < 3 {
		return nil, &FileError{Path: path, Err: fmt.Errorf("dtype %q is not an array of names; expected strings ('<U', '|S') or integers", descr)}
	}
	var order binary.ByteOrder = binary.LittleEndian
	if descr[0] == '>' {
		order = binary.BigEndian
	}
	width, err := strconv.Atoi(descr[2:])
	if err != nil || width <= 0 {
		return nil, &FileError{Path: path, Err: fmt.Errorf("dtype %q has no item size", descr)}
	}
	esize := width
	switch descr[1] {
	case 'U':
		esize = 4 * width
	case 'S', 'i', 'u':
		if descr[1] != 'S' && width != 1 && width != 2 && width != 4 && width != 8 {
			return nil, &FileError{Path: path, Err: fmt.Errorf("dtype %q is not an integer type NumPy writes", descr)}
		}
	case 'O':
		return nil, &FileError{Path: path, Err: errors.New("id array holds Python objects (dtype 'O', pickled data), which skein does not read; save the ids as strings (numpy.array(ids, dtype=str))")}
	default:
		return nil, &FileError{Path: path, Err: fmt.Errorf("dtype %q is not an array of names; expected strings ('<U', '|S') or integers", descr)}
	}
	if n < 0 || esize > len(body) || n > len(body)/esize || n*esize != len(body) {
		return nil, &FileError{Path: path, Err: fmt.Errorf("shape %v of %s needs %d data bytes, found %d", shape, descr, max(n, 0)*esize, len(body))}
	}
	names = make([]string, n)
	for k := range n {
		e := body[k*esize : (k+1)*esize]
		switch descr[1] {
		case 'U':
			var b strings.Builder
			for c := range width {
				r := rune(order.Uint32(e[4*c:]))
				if r == 0 {
					break
				}
				if !utf8.ValidRune(r) {
					return nil, &FileError{Path: path, Err: fmt.Errorf("name %d holds an invalid character (code %#x)", k+1, uint32(r))}
				}
				b.WriteRune(r)
			}
			names[k] = b.String()
		case 'S':
			names[k] = string(bytes.TrimRight(e, "\x00"))
		default:
			names[k] = decimal(e, order, descr[1] == 'i')
		}
	}
	return names, nil
}

// decimal writes the integer of 1, 2, 4 or 8 bytes e in decimal.
func decimal(e []byte, order binary.ByteOrder, signed bool) string {
	var u uint64
	switch len(e) {
	case 1:
		u = uint64(e[0])
		if signed {
			return strconv.FormatInt(int64(int8(e[0])), 10)
		}
	case 2:
		u = uint64(order.Uint16(e))
		if signed {
			return strconv.FormatInt(int64(int16(u)), 10)
		}
	case 4:
		u = uint64(order.Uint32(e))
		if signed {
			return strconv.FormatInt(int64(int32(u)), 10)
		}
	default:
		u = order.Uint64(e)
		if signed {
			return strconv.FormatInt(int64(u), 10)
		}
	}
	return strconv.FormatUint(u, 10)
}
