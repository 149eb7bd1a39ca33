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

// This file reads the variables of a MATLAB v7.3 MAT-file: an HDF5 file
// after a 512-byte user block holding the MAT header text. Only the part
// of HDF5 such files need is read (the HDF5 File Format Specification,
// version 2.0 sections cited below): superblock version 0 or 1, the root
// group's symbol table (version 1 B-tree and local heap), version 1 object
// headers, and datasets of fixed-point or floating-point numbers stored
// contiguously, compactly or in chunks. Chunked datasets, which MATLAB
// writes for large or compressed variables, are read when their chunks
// are indexed by a version 1 B-tree (data layout message version 3) and
// their filter pipeline holds only deflate, shuffle and Fletcher-32
// (whose checksum is dropped, not checked); other chunk indexes and
// filters are refused with an error naming them.

// h5file is an HDF5 file being read: its bytes from the superblock's base
// address on, and the sizes of addresses and lengths.
type h5file struct {
	b        []byte // the file from the base address on
	base     int    // base address in the whole file, for messages
	offSize  int    // size of addresses (offsets)
	lenSize  int    // size of lengths
	undefAdd uint64 // the undefined address, all bits set
}

// errorf is an error at address addr of the HDF5 data (file byte
// base+addr).
func (h *h5file) errorf(addr uint64, format string, args ...any) error {
	return fmt.Errorf("HDF5 at byte %d: %s", uint64(h.base)+addr, fmt.Sprintf(format, args...))
}

// at returns the n bytes at address addr, or an error if they run past
// the end of the file.
func (h *h5file) at(addr uint64, n int) ([]byte, error) {
	if n < 0 || addr > uint64(len(h.b)) || uint64(n) > uint64(len(h.b))-addr {
		return nil, h.errorf(addr, "%d bytes run past the end of the file", n)
	}
	return h.b[addr : addr+uint64(n)], nil
}

// h5uint reads a little-endian unsigned integer of size bytes (1 to 8).
func h5uint(b []byte, size int) uint64 {
	var v uint64
	for k := size - 1; k >= 0; k-- {
		v = v<<8 | uint64(b[k])
	}
	return v
}

// h5var is a dataset of the root group: its name and object header.
type h5var struct {
	name   string
	header uint64
}

// decodeMAT73 reads the variable opts.variable (or the only variable) of
// a MATLAB v7.3 MAT-file raw, whose HDF5 superblock is at byte 512.
func decodeMAT73(path string, raw []byte, opts readOptions) (*array, error) {
	bad := func(err error) error { return &FileError{Path: path, Err: err} }
	h, root, err := h5open(raw, 512)
	if err != nil {
		return nil, bad(err)
	}
	vars, err := h.groupEntries(root)
	if err != nil {
		return nil, bad(err)
	}
	var names []string
	for _, v := range vars {
		names = append(names, v.name)
	}
	slices.Sort(names)
	var v *h5var
	switch {
	case opts.variable != "":
		for k := range vars {
			if vars[k].name == opts.variable {
				v = &vars[k]
			}
		}
		if v == nil {
			listed := quoteAll(names)
			if len(names) == 0 {
				listed = "no variables"
			}
			return nil, bad(fmt.Errorf("no variable %q (named by %s); the file holds %s", opts.variable, keyName(opts), listed))
		}
	case len(vars) == 1:
		v = &vars[0]
	default:
		return nil, bad(fmt.Errorf("file holds %d variables (%s); set %s to the one to read", len(vars), quoteAll(names), keyName(opts)))
	}
	a, err := h.dataset(v.header)
	if err != nil {
		return nil, bad(fmt.Errorf("variable %q: %w", v.name, err))
	}
	return a, nil
}

// h5open reads the superblock (section II.A, versions 0 and 1) at byte
// start of raw and returns the file and the root group's object header
// address with its symbol-table scratch pad.
func h5open(raw []byte, start int) (*h5file, h5entry, error) {
	var root h5entry
	if len(raw) < start+24 || string(raw[start:start+8]) != hdf5Signature {
		return nil, root, fmt.Errorf("byte %d: no HDF5 signature", start)
	}
	sb := raw[start:]
	version := sb[8]
	if version > 1 {
		return nil, root, fmt.Errorf("byte %d: HDF5 superblock version %d; only versions 0 and 1 are read", start+8, version)
	}
	h := &h5file{offSize: int(sb[13]), lenSize: int(sb[14])}
	if h.offSize != 8 && h.offSize != 4 || h.lenSize != 8 && h.lenSize != 4 {
		return nil, root, fmt.Errorf("byte %d: HDF5 sizes of offsets %d and lengths %d; expected 4 or 8", start+13, h.offSize, h.lenSize)
	}
	h.undefAdd = math.MaxUint64 >> (64 - 8*h.offSize)
	off := 24
	if version == 1 {
		off += 4
	}
	need := off + 4*h.offSize + 2*h.offSize + 8 + 16
	if len(sb) < need {
		return nil, root, fmt.Errorf("byte %d: HDF5 superblock truncated", start)
	}
	base := h5uint(sb[off:], h.offSize)
	if base != uint64(start) && base != 0 {
		return nil, root, fmt.Errorf("byte %d: HDF5 base address %d; expected %d, the superblock's place", start+off, base, start)
	}
	h.base = start
	h.b = raw[start:]
	e, err := h.entry(uint64(off + 4*h.offSize))
	if err != nil {
		return nil, root, err
	}
	return h, e, nil
}

// h5entry is a symbol table entry (section III.C): a link name offset in
// the group's local heap, an object header address and, for a group with
// cache type 1, its B-tree and local heap addresses.
type h5entry struct {
	nameOff, header  uint64
	cache            uint32
	btree, localHeap uint64
}

// entry reads the symbol table entry at address addr.
func (h *h5file) entry(addr uint64) (h5entry, error) {
	b, err := h.at(addr, 2*h.offSize+8+16)
	if err != nil {
		return h5entry{}, err
	}
	e := h5entry{nameOff: h5uint(b, h.offSize), header: h5uint(b[h.offSize:], h.offSize), cache: binary.LittleEndian.Uint32(b[2*h.offSize:])}
	if e.cache == 1 {
		e.btree = h5uint(b[2*h.offSize+8:], h.offSize)
		e.localHeap = h5uint(b[3*h.offSize+8:], h.offSize)
	}
	return e, nil
}

// groupEntries lists the datasets and groups of a group given by its
// symbol table entry with cache type 1 (MATLAB's and h5py's root group),
// skipping names that start with "#" (MATLAB's "#refs#" and
// "#subsystem#").
func (h *h5file) groupEntries(g h5entry) ([]h5var, error) {
	if g.cache != 1 {
		return nil, h.errorf(0, "root group without a symbol table in its entry (cache type %d); only the HDF5 layout with symbol tables (h5py's and MATLAB's default) is read", g.cache)
	}
	heap, err := h.at(g.localHeap, 8+2*h.lenSize+h.offSize)
	if err != nil {
		return nil, err
	}
	if string(heap[:4]) != "HEAP" {
		return nil, h.errorf(g.localHeap, "expected a local heap (\"HEAP\")")
	}
	heapSize := h5uint(heap[8:], h.lenSize)
	heapData := h5uint(heap[8+2*h.lenSize:], h.offSize)
	data, err := h.at(heapData, int(min(heapSize, uint64(len(h.b)))))
	if err != nil {
		return nil, err
	}
	var out []h5var
	seen := map[uint64]bool{}
	var walk func(addr uint64, depth int) error
	walk = func(addr uint64, depth int) error {
		if seen[addr] || depth > 64 {
			return h.errorf(addr, "B-tree node visited twice or nested too deep")
		}
		seen[addr] = true
		hdr, err := h.at(addr, 8+2*h.offSize)
		if err != nil {
			return err
		}
		if string(hdr[:4]) != "TREE" || hdr[4] != 0 {
			return h.errorf(addr, "expected a group B-tree node (\"TREE\", type 0)")
		}
		level, used := hdr[5], int(binary.LittleEndian.Uint16(hdr[6:]))
		pos := addr + uint64(8+2*h.offSize)
		for k := range used {
			child, err := h.at(pos+uint64(h.lenSize)+uint64(k*(h.lenSize+h.offSize)), h.offSize)
			if err != nil {
				return err
			}
			caddr := h5uint(child, h.offSize)
			if level > 0 {
				if err := walk(caddr, depth+1); err != nil {
					return err
				}
				continue
			}
			snod, err := h.at(caddr, 8)
			if err != nil {
				return err
			}
			if string(snod[:4]) != "SNOD" {
				return h.errorf(caddr, "expected a symbol table node (\"SNOD\")")
			}
			n := int(binary.LittleEndian.Uint16(snod[6:]))
			for s := range n {
				e, err := h.entry(caddr + 8 + uint64(s*(2*h.offSize+24)))
				if err != nil {
					return err
				}
				if e.nameOff >= uint64(len(data)) {
					return h.errorf(caddr, "symbol %d: name offset %d outside the local heap", s+1, e.nameOff)
				}
				name, _, _ := strings.Cut(string(data[e.nameOff:]), "\x00")
				if !strings.HasPrefix(name, "#") {
					out = append(out, h5var{name: name, header: e.header})
				}
			}
		}
		return nil
	}
	if err := walk(g.btree, 0); err != nil {
		return nil, err
	}
	return out, nil
}

// h5msg is one object header message: its type and data.
type h5msg struct {
	typ  uint16
	data []byte
}

// messages reads the messages of the version 1 object header at addr
// (section IV.A.1.a), following continuation messages.
func (h *h5file) messages(addr uint64) ([]h5msg, error) {
	hdr, err := h.at(addr, 16)
	if err != nil {
		return nil, err
	}
	if hdr[0] != 1 {
		return nil, h.errorf(addr, "object header version %d; only version 1 (h5py's and MATLAB's default) is read", hdr[0])
	}
	total := int(binary.LittleEndian.Uint16(hdr[2:]))
	type block struct{ addr, size uint64 }
	blocks := []block{{addr + 16, uint64(binary.LittleEndian.Uint32(hdr[8:]))}}
	var out []h5msg
	for len(blocks) > 0 && len(out) < total && len(blocks) < 1000 {
		bl := blocks[0]
		blocks = blocks[1:]
		b, err := h.at(bl.addr, int(min(bl.size, uint64(len(h.b)))))
		if err != nil {
			return nil, err
		}
		for len(b) >= 8 && len(out) < total {
			typ, size := binary.LittleEndian.Uint16(b), int(binary.LittleEndian.Uint16(b[2:]))
			if 8+size > len(b) {
				return nil, h.errorf(bl.addr, "object header message of %d bytes runs past its block", size)
			}
			m := h5msg{typ: typ, data: b[8 : 8+size]}
			out = append(out, m)
			if typ == 0x10 && size >= h.offSize+h.lenSize { // continuation
				blocks = append(blocks, block{h5uint(m.data, h.offSize), h5uint(m.data[h.offSize:], h.lenSize)})
			}
			b = b[8+size:]
		}
	}
	return out, nil
}

// dataset reads the numeric dataset whose object header is at addr and
// returns it as MATLAB sees it: HDF5's dimensions reversed, the values in
// C order of those.
func (h *h5file) dataset(addr uint64) (*array, error) {
	msgs, err := h.messages(addr)
	if err != nil {
		return nil, err
	}
	var space, dtype, layout, pipeline []byte
	class := ""
	for _, m := range msgs {
		switch m.typ {
		case 0x0001:
			space = m.data
		case 0x0003:
			dtype = m.data
		case 0x0008:
			layout = m.data
		case 0x000B:
			pipeline = m.data
		case 0x000C:
			name, value, ok := h5stringAttribute(m.data)
			if ok && name == "MATLAB_class" {
				class = value
			}
			if name == "MATLAB_sparse" {
				return nil, errors.New("is a sparse matrix; expected a full numeric array")
			}
		}
	}
	switch class {
	case "double", "single", "int8", "uint8", "int16", "uint16", "int32", "uint32", "int64", "uint64", "logical":
	case "":
		if space == nil {
			return nil, errors.New("is a group, not an array (a struct or cell?); expected a numeric array")
		}
		return nil, errors.New("has no MATLAB_class attribute; not a MATLAB variable")
	default:
		return nil, fmt.Errorf("is of MATLAB class %q; expected a numeric array (double, single or integer)", class)
	}
	if space == nil || dtype == nil || layout == nil {
		return nil, errors.New("lacks a dataspace, datatype or layout message")
	}
	dims, err := h5dims(space, h.lenSize)
	if err != nil {
		return nil, fmt.Errorf("dataspace: %w", err)
	}
	total := 1
	for _, d := range dims {
		if d < 0 || (d > 0 && total > math.MaxInt32/d) {
			return nil, fmt.Errorf("dataspace: dimensions %v too large", dims)
		}
		total *= d
	}
	if len(dtype) < 8 {
		return nil, errors.New("datatype message truncated")
	}
	tclass, flags, esize := dtype[0]&0x0f, dtype[1], int(binary.LittleEndian.Uint32(dtype[4:]))
	var order binary.ByteOrder = binary.LittleEndian
	if flags&1 != 0 {
		order = binary.BigEndian
	}
	signed := flags&0x08 != 0
	switch {
	case tclass == 0 && (esize == 1 || esize == 2 || esize == 4 || esize == 8):
	case tclass == 1 && (esize == 4 || esize == 8):
	default:
		return nil, fmt.Errorf("datatype class %d of %d bytes; expected integers or float32/float64", tclass, esize)
	}
	if len(layout) < 2 || layout[0] != 3 {
		if len(layout) >= 2 && layout[0] == 4 && layout[1] == 2 {
			return nil, errors.New("is stored in chunks indexed by a structure of data layout message version 4 (HDF5 1.10 and later), which skein does not read; only version 1 B-tree chunk indexes are read")
		}
		return nil, errors.New("data layout message of a version other than 3")
	}
	var raw []byte
	switch layout[1] {
	case 0: // compact
		if len(layout) < 4 {
			return nil, errors.New("compact layout truncated")
		}
		n := int(binary.LittleEndian.Uint16(layout[2:]))
		if 4+n > len(layout) {
			return nil, errors.New("compact layout truncated")
		}
		raw = layout[4 : 4+n]
	case 1: // contiguous
		if len(layout) < 2+h.offSize+h.lenSize {
			return nil, errors.New("contiguous layout truncated")
		}
		at := h5uint(layout[2:], h.offSize)
		if at == h.undefAdd && total == 0 {
			break
		}
		if raw, err = h.at(at, total*esize); err != nil {
			return nil, err
		}
	case 2: // chunked
		filters, err := h5filters(pipeline)
		if err != nil {
			return nil, fmt.Errorf("filter pipeline: %w", err)
		}
		if raw, err = h.chunked(layout, dims, esize, filters); err != nil {
			return nil, err
		}
	default:
		return nil, fmt.Errorf("data layout class %d", layout[1])
	}
	if len(raw) != total*esize {
		return nil, fmt.Errorf("dimensions %v need %d bytes, the layout holds %d", dims, total*esize, len(raw))
	}
	data := make([]float64, total)
	for k := range data {
		e := raw[k*esize:]
		switch {
		case tclass == 1 && esize == 4:
			data[k] = float64(math.Float32frombits(order.Uint32(e)))
		case tclass == 1:
			data[k] = math.Float64frombits(order.Uint64(e))
		default:
			data[k] = h5int(e[:esize], order, signed)
		}
	}
	// MATLAB writes its column-major array as HDF5's row-major array of
	// the reversed dimensions: the same bytes.
	shape := slices.Clone(dims)
	slices.Reverse(shape)
	if len(shape) == 1 {
		shape = append(shape, 1)
	}
	for len(shape) > 2 && shape[len(shape)-1] == 1 {
		shape = shape[:len(shape)-1]
	}
	return &array{shape: shape, data: fortranToC(data, shape)}, nil
}

// h5int decodes a fixed-point number of 1, 2, 4 or 8 bytes.
func h5int(e []byte, order binary.ByteOrder, signed bool) float64 {
	var u uint64
	switch len(e) {
	case 1:
		u = uint64(e[0])
	case 2:
		u = uint64(order.Uint16(e))
	case 4:
		u = uint64(order.Uint32(e))
	default:
		u = order.Uint64(e)
	}
	if signed {
		shift := 64 - 8*uint(len(e))
		return float64(int64(u<<shift) >> shift)
	}
	return float64(u)
}

// h5dims decodes a dataspace message (section IV.A.2.b, versions 1 and 2).
func h5dims(b []byte, lenSize int) ([]int, error) {
	if len(b) < 4 {
		return nil, errors.New("truncated")
	}
	version, rank := b[0], int(b[1])
	off := 8
	if version == 2 {
		off = 4
	} else if version != 1 {
		return nil, fmt.Errorf("version %d", version)
	}
	if len(b) < off+rank*lenSize {
		return nil, errors.New("truncated")
	}
	dims := make([]int, rank)
	for k := range dims {
		v := h5uint(b[off+k*lenSize:], lenSize)
		if v > math.MaxInt32 {
			return nil, fmt.Errorf("dimension %d is %d", k+1, v)
		}
		dims[k] = int(v)
	}
	return dims, nil
}

// h5stringAttribute decodes an attribute message (section IV.A.2.m,
// versions 1 to 3) holding a scalar fixed-length string, such as
// MATLAB_class; ok is false for other attributes, whose name is still
// returned when it can be read.
func h5stringAttribute(b []byte) (name, value string, ok bool) {
	if len(b) < 8 {
		return "", "", false
	}
	version := b[0]
	nameSize, typeSize, spaceSize := int(binary.LittleEndian.Uint16(b[2:])), int(binary.LittleEndian.Uint16(b[4:])), int(binary.LittleEndian.Uint16(b[6:]))
	pad := func(n int) int { return n }
	off := 8
	switch version {
	case 1:
		pad = func(n int) int { return (n + 7) / 8 * 8 }
	case 3:
		off = 9
	case 2:
	default:
		return "", "", false
	}
	if off+pad(nameSize) > len(b) {
		return "", "", false
	}
	name, _, _ = strings.Cut(string(b[off:off+nameSize]), "\x00")
	off += pad(nameSize)
	if off+pad(typeSize)+pad(spaceSize) > len(b) || typeSize < 8 {
		return name, "", false
	}
	dt := b[off : off+typeSize]
	off += pad(typeSize) + pad(spaceSize)
	if dt[0]&0x0f != 3 { // string class
		return name, "", false
	}
	size := int(binary.LittleEndian.Uint32(dt[4:]))
	if size < 0 || off+size > len(b) {
		return name, "", false
	}
	value = string(bytes.TrimRight(b[off:off+size], "\x00 "))
	return name, value, true
}

// h5filter is one filter of a filter pipeline: its identification and
// client data.
type h5filter struct {
	id     uint16
	name   string
	client []uint32
}

// Filter identifications read (section IV.A.2.l).
const (
	h5Deflate    = 1
	h5Shuffle    = 2
	h5Fletcher32 = 3
)

// h5filters decodes a filter pipeline message (section IV.A.2.l,
// versions 1 and 2); nil b is an empty pipeline. Filters other than
// deflate, shuffle and Fletcher-32 are refused.
func h5filters(b []byte) ([]h5filter, error) {
	if b == nil {
		return nil, nil
	}
	if len(b) < 2 {
		return nil, errors.New("truncated")
	}
	version, n := b[0], int(b[1])
	off := 2
	switch version {
	case 1:
		off = 8
	case 2:
	default:
		return nil, fmt.Errorf("version %d; only versions 1 and 2 are read", version)
	}
	pad8 := func(k int) int {
		if version == 1 {
			return (k + 7) / 8 * 8
		}
		return k
	}
	var out []h5filter
	for k := range n {
		if off+4 > len(b) {
			return nil, fmt.Errorf("filter %d truncated", k+1)
		}
		f := h5filter{id: binary.LittleEndian.Uint16(b[off:])}
		nameLen := 0
		if version == 1 || f.id >= 256 {
			nameLen = int(binary.LittleEndian.Uint16(b[off+2:]))
			off += 2
		}
		off += 2
		if off+4 > len(b) {
			return nil, fmt.Errorf("filter %d truncated", k+1)
		}
		nvalues := int(binary.LittleEndian.Uint16(b[off+2:]))
		off += 4
		if off+pad8(nameLen) > len(b) {
			return nil, fmt.Errorf("filter %d truncated", k+1)
		}
		f.name, _, _ = strings.Cut(string(b[off:off+nameLen]), "\x00")
		off += pad8(nameLen)
		if off+4*nvalues > len(b) {
			return nil, fmt.Errorf("filter %d truncated", k+1)
		}
		for v := range nvalues {
			f.client = append(f.client, binary.LittleEndian.Uint32(b[off+4*v:]))
		}
		off += 4 * nvalues
		if version == 1 && nvalues%2 == 1 {
			off += 4
		}
		switch f.id {
		case h5Deflate, h5Shuffle, h5Fletcher32:
		default:
			name := ""
			if f.name != "" {
				name = fmt.Sprintf(" (%q)", f.name)
			}
			return nil, fmt.Errorf("filter %d%s, which skein does not read; only deflate (1), shuffle (2) and Fletcher-32 (3) are read", f.id, name)
		}
		out = append(out, f)
	}
	return out, nil
}

// chunked gathers the data of a chunked dataset of dimensions dims and
// elements of esize bytes from its data layout message (version 3, class
// 2) and filter pipeline: the chunks listed by the version 1 B-tree
// (section III.A.1, node type 1) are decoded, cropped where they run past
// the dimensions, and copied into place. Every element must be in some
// chunk: chunks never written (left to the fill value) are refused.
func (h *h5file) chunked(layout []byte, dims []int, esize int, filters []h5filter) ([]byte, error) {
	if len(layout) < 3 {
		return nil, errors.New("chunked layout truncated")
	}
	rank := int(layout[2]) - 1 // the last "dimension" is the element size
	if rank < 1 || rank != len(dims) {
		return nil, fmt.Errorf("chunked layout of %d dimensions for a dataspace of %d", rank, len(dims))
	}
	if len(layout) < 3+h.offSize+4*(rank+1) {
		return nil, errors.New("chunked layout truncated")
	}
	btree := h5uint(layout[3:], h.offSize)
	cdims := make([]int, rank)
	chunkLen := 1 // elements in a chunk
	total := 1
	for k := range cdims {
		total *= dims[k]
		c := binary.LittleEndian.Uint32(layout[3+h.offSize+4*k:])
		if c == 0 || uint64(c) > math.MaxInt32 || uint64(chunkLen)*uint64(c) > math.MaxInt32 {
			return nil, fmt.Errorf("chunk dimension %d is %d", k+1, c)
		}
		cdims[k] = int(c)
		chunkLen *= int(c)
	}
	if es := binary.LittleEndian.Uint32(layout[3+h.offSize+4*rank:]); int64(es) != int64(esize) {
		return nil, fmt.Errorf("chunked layout element size %d; the datatype's is %d", es, esize)
	}
	// A chunk may be larger than the data (HDF5 allows chunks beyond
	// fixed dimensions only for extendible datasets); bound it so that a
	// malformed file cannot demand an arbitrary allocation.
	if chunkLen > max(total, 1<<20) {
		return nil, fmt.Errorf("chunks of %v elements for a dataset of %v", cdims, dims)
	}
	// Deflate expands data at most about 1032 times, so a file cannot
	// hold more than that many bytes of data per byte; bounding by it
	// keeps a malformed header from demanding an arbitrary allocation.
	if uint64(total)*uint64(esize) > 1100*uint64(len(h.b)) {
		return nil, fmt.Errorf("dimensions %v need %d bytes, more than a file of %d bytes can hold compressed", dims, uint64(total)*uint64(esize), len(h.b))
	}
	raw := make([]byte, total*esize)
	if total == 0 {
		return raw, nil
	}
	// grid counts the chunks along each dimension; seen marks the
	// chunks read.
	grid := make([]int, rank)
	nchunks := 1
	for k := range grid {
		grid[k] = (dims[k] + cdims[k] - 1) / cdims[k]
		nchunks *= grid[k]
	}
	seen := make([]bool, nchunks)
	nseen := 0
	var buf []byte // one chunk, allocated at the first
	keySize := 8 + 8*(rank+1)
	visited := map[uint64]bool{}
	var walk func(addr uint64, depth int) error
	walk = func(addr uint64, depth int) error {
		if visited[addr] || depth > 64 {
			return h.errorf(addr, "chunk B-tree node visited twice or nested too deep")
		}
		visited[addr] = true
		hdr, err := h.at(addr, 8+2*h.offSize)
		if err != nil {
			return err
		}
		if string(hdr[:4]) != "TREE" {
			return h.errorf(addr, "expected a chunk B-tree node (\"TREE\")")
		}
		if hdr[4] != 1 {
			return h.errorf(addr, "B-tree node of type %d; expected type 1 (chunks)", hdr[4])
		}
		level, used := hdr[5], int(binary.LittleEndian.Uint16(hdr[6:]))
		pos := addr + uint64(8+2*h.offSize)
		entries, err := h.at(pos, used*(keySize+h.offSize)+keySize)
		if err != nil {
			return err
		}
		for e := range used {
			key := entries[e*(keySize+h.offSize):]
			child := h5uint(key[keySize:], h.offSize)
			if level > 0 {
				if err := walk(child, depth+1); err != nil {
					return err
				}
				continue
			}
			size := binary.LittleEndian.Uint32(key)
			mask := binary.LittleEndian.Uint32(key[4:])
			index := 0
			offsets := make([]int, rank)
			for k := range offsets {
				o := binary.LittleEndian.Uint64(key[8+8*k:])
				if o >= uint64(dims[k]) || o%uint64(cdims[k]) != 0 {
					return h.errorf(child, "chunk at offset %d along dimension %d of %d with chunks of %d", o, k+1, dims[k], cdims[k])
				}
				offsets[k] = int(o)
				index = index*grid[k] + offsets[k]/cdims[k]
			}
			if seen[index] {
				return h.errorf(child, "chunk at %v listed twice", offsets)
			}
			seen[index] = true
			nseen++
			stored, err := h.at(child, int(min(uint64(size), uint64(len(h.b)))))
			if err != nil {
				return err
			}
			if uint64(len(stored)) != uint64(size) {
				return h.errorf(child, "chunk of %d bytes runs past the end of the file", size)
			}
			if buf == nil {
				buf = make([]byte, chunkLen*esize)
			}
			if err := h5unfilter(buf, stored, filters, mask, esize); err != nil {
				return h.errorf(child, "chunk at %v: %v", offsets, err)
			}
			h5copyChunk(raw, buf, dims, cdims, offsets, esize)
		}
		return nil
	}
	if err := walk(btree, 0); err != nil {
		return nil, err
	}
	if nseen != nchunks {
		return nil, fmt.Errorf("%d of %d chunks are stored; unwritten chunks (left to the fill value) are not read", nseen, nchunks)
	}
	return raw, nil
}

// h5unfilter undoes the filters of a chunk's pipeline in reverse order,
// skipping those whose bit is set in mask, and writes the chunk's bytes
// to out, whose length is the chunk's size unfiltered. A chunk that does
// not decode to exactly that many bytes is an error.
func h5unfilter(out, stored []byte, filters []h5filter, mask uint32, esize int) error {
	b := stored
	for k := len(filters) - 1; k >= 0; k-- {
		if k < 32 && mask&(1<<k) != 0 {
			continue
		}
		switch f := filters[k]; f.id {
		case h5Fletcher32:
			if len(b) < 4 {
				return errors.New("shorter than its Fletcher-32 checksum")
			}
			b = b[:len(b)-4]
		case h5Deflate:
			zr, err := zlib.NewReader(bytes.NewReader(b))
			if err != nil {
				return fmt.Errorf("deflate: %w", err)
			}
			// Read at most one byte more than the chunk holds.
			d, err := io.ReadAll(io.LimitReader(zr, int64(len(out))+1))
			if err != nil {
				return fmt.Errorf("deflate: %w", err)
			}
			if len(d) > len(out) {
				return fmt.Errorf("deflate: decompresses to more than the chunk's %d bytes", len(out))
			}
			b = d
		case h5Shuffle:
			size := esize
			if len(f.client) > 0 {
				size = int(f.client[0])
			}
			if size > 1 && size <= len(b) {
				b = h5unshuffle(b, size)
			}
		}
	}
	if len(b) != len(out) {
		return fmt.Errorf("decodes to %d bytes; a chunk holds %d", len(b), len(out))
	}
	copy(out, b)
	return nil
}

// h5unshuffle undoes the shuffle filter on b, elements of size bytes:
// the shuffled data holds the first byte of every element, then the
// second, and so on; bytes past the last whole element stay in place.
func h5unshuffle(b []byte, size int) []byte {
	n := len(b) / size
	out := make([]byte, len(b))
	for j := range size {
		for i := range n {
			out[i*size+j] = b[j*n+i]
		}
	}
	copy(out[n*size:], b[n*size:])
	return out
}

// h5copyChunk copies the chunk chunk (row-major, dimensions cdims) whose
// first element is at offsets into raw (row-major, dimensions dims),
// leaving out the parts that run past dims.
func h5copyChunk(raw, chunk []byte, dims, cdims, offsets []int, esize int) {
	rank := len(dims)
	// Along the last dimension, whole runs of elements are copied.
	last := rank - 1
	run := min(cdims[last], dims[last]-offsets[last]) * esize
	idx := make([]int, rank) // position within the chunk, last dimension fixed at 0
	for {
		src, dst := 0, 0
		for k := range rank {
			src = src*cdims[k] + idx[k]
			dst = dst*dims[k] + offsets[k] + idx[k]
		}
		copy(raw[dst*esize:dst*esize+run], chunk[src*esize:])
		k := last - 1
		for ; k >= 0; k-- {
			idx[k]++
			if idx[k] < cdims[k] && offsets[k]+idx[k] < dims[k] {
				break
			}
			idx[k] = 0
		}
		if k < 0 {
			return
		}
	}
}
