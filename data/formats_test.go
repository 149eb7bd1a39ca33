package data

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// formatsDir holds the fixtures of the file formats, each written by the
// script beside it (gen_cifti.py: nibabel; gen_mat.py: scipy.io.savemat
// and h5py; gen_npz.py: numpy), with the arrays as those libraries read
// them back in .json files.
var formatsDir = filepath.Join("testdata", "formats")

// wantArray is an array as the generating library sees it.
type wantArray struct {
	Shape []int     `json:"shape"`
	Data  []float64 `json:"data"`
	Names []string  `json:"names"`
}

// readWant reads the array key of a fixture's .json file ("" for a file
// holding one array).
func readWant(t *testing.T, file, key string) wantArray {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join(formatsDir, file))
	if err != nil {
		t.Fatal(err)
	}
	var w wantArray
	if key == "" {
		err = json.Unmarshal(raw, &w)
	} else {
		var all map[string]json.RawMessage
		if err = json.Unmarshal(raw, &all); err == nil {
			err = json.Unmarshal(all[key], &w)
		}
	}
	if err != nil {
		t.Fatal(err)
	}
	return w
}

func fixtureBytes(t testing.TB, name string) []byte {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join(formatsDir, name))
	if err != nil {
		t.Fatal(err)
	}
	return raw
}

// TestReadArrayFixtures reads each fixture and compares it with the array
// the library that wrote it reads back: same shape, same values in C
// order (exactly: float32 values widen to float64 without rounding), and
// the parcel names of a CIFTI-2 file.
func TestReadArrayFixtures(t *testing.T) {
	for _, tc := range []struct {
		file, variable string
		json, key      string
	}{
		// nibabel 5 (python3-nibabel): Cifti2Image.to_filename, read back with nib.load.
		{"conn.pconn.nii", "", "conn.json", ""},
		{"sym.pconn.nii", "", "sym.json", ""},
		{"series.ptseries.nii", "", "series.json", ""},
		// scipy.io.savemat(do_compression=False), level 5.
		{"v5.mat", "conn", "mat.json", "conn"},
		{"v5.mat", "series", "mat.json", "series"},
		{"v5.mat", "stack", "mat.json", "stack"},
		{"v5.mat", "counts", "mat.json", "counts"},
		// scipy.io.savemat(do_compression=True): miCOMPRESSED elements.
		{"v5z.mat", "conn", "mat.json", "conn"},
		{"v5z.mat", "series", "mat.json", "series"},
		{"v5z.mat", "stack", "mat.json", "stack"},
		{"v5z.mat", "fcstack", "mat.json", "fcstack"},
		// h5py, MATLAB's v7.3 layout (gen_mat.py).
		{"v73.mat", "conn", "mat.json", "conn"},
		{"v73.mat", "series", "mat.json", "series"},
		{"v73.mat", "stack", "mat.json", "stack"},
		{"v73.mat", "counts", "mat.json", "counts"},
		{"v73.mat", "fcstack", "mat.json", "fcstack"},
		// h5py, chunked v7.3 variables (version 1 B-tree chunk index) with
		// edge chunks, compared with h5py's own read-back (gen_mat.py):
		// gzip after shuffle, no filter, gzip with Fletcher-32.
		{"v73.mat", "bigstack", "mat73.json", "bigstack"},
		{"v73.mat", "bigseries", "mat73.json", "bigseries"},
		{"v73.mat", "checked", "mat73.json", "checked"},
		// numpy.savez and numpy.savez_compressed.
		{"arrays.npz", "conn", "npz.json", "conn"},
		{"arrays.npz", "fortran", "npz.json", "fortran"},
		{"stack.npz", "fc", "npz.json", "fc"},
	} {
		t.Run(tc.file+"/"+tc.variable, func(t *testing.T) {
			want := readWant(t, tc.json, tc.key)
			got, err := readArray(filepath.Join(formatsDir, tc.file), readOptions{variable: tc.variable})
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(got.shape, want.Shape) || len(got.data) != len(want.Data) {
				t.Fatalf("shape %v with %d values, want %v with %d", got.shape, len(got.data), want.Shape, len(want.Data))
			}
			for k := range want.Data {
				if math.Float64bits(got.data[k]) != math.Float64bits(want.Data[k]) {
					t.Fatalf("value %d is %v, want %v", k, got.data[k], want.Data[k])
				}
			}
			if !reflect.DeepEqual(got.names, want.Names) {
				t.Errorf("names %q, want %q", got.names, want.Names)
			}
		})
	}
}

// TestReadArrayStackIDs reads an .npz stack's id arrays: strings ('<U6')
// and integers ('<i8'), as numpy wrote them (gen_npz.py).
func TestReadArrayStackIDs(t *testing.T) {
	var want struct{ IDs []string }
	if err := json.Unmarshal(fixtureBytes(t, "npz.json"), &want); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		ids  string
		want []string
	}{
		{"ids", want.IDs},
		{"numbers", []string{"101", "102", "103"}}, // np.array([101, 102, 103]) in gen_npz.py
	} {
		a, err := readArray(filepath.Join(formatsDir, "stack.npz"), readOptions{variable: "fc", idsVariable: tc.ids})
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(a.ids, tc.want) {
			t.Errorf("%s: ids %q, want %q", tc.ids, a.ids, tc.want)
		}
	}
}

// TestReadArrayErrors: every malformed or unreadable input is a
// *FileError naming the file and the place.
func TestReadArrayErrors(t *testing.T) {
	conn := fixtureBytes(t, "conn.pconn.nii")
	withHeader := func(off int, v uint64, size int) []byte {
		b := append([]byte(nil), conn...)
		switch size {
		case 2:
			binary.LittleEndian.PutUint16(b[off:], uint16(v))
		default:
			binary.LittleEndian.PutUint64(b[off:], v)
		}
		return b
	}
	// v73.mat with the B-tree key of bigstack's first chunk changed: its
	// stored size cut by 20 bytes (a truncated deflate stream) or its
	// filter mask saying deflate (the second filter) was skipped.
	var chunk0 struct {
		Key  int `json:"key"`
		Size uint32
	}
	if err := json.Unmarshal([]byte(mustField(t, "mat73.json", "bigstack_chunk0")), &chunk0); err != nil {
		t.Fatal(err)
	}
	v73Key := func(off int, v uint32) []byte {
		b := append([]byte(nil), fixtureBytes(t, "v73.mat")...)
		binary.LittleEndian.PutUint32(b[chunk0.Key+off:], v)
		return b
	}
	// v73.mat with bigseries's data layout message (version 3, chunked,
	// 3 dimensions, B-tree address, then chunk dimensions 2, 4 and the
	// element size 4) given version 4, whose chunk indexes are not read.
	layout4 := append([]byte(nil), fixtureBytes(t, "v73.mat")...)
	if at := bytes.Index(layout4, []byte{2, 0, 0, 0, 4, 0, 0, 0, 4, 0, 0, 0}) - 11; at < 0 || !bytes.Equal(layout4[at:at+3], []byte{3, 2, 3}) {
		t.Fatal("v73.mat: bigseries's data layout message not found")
	} else {
		layout4[at] = 4
	}
	noExt := append([]byte(nil), conn...)
	noExt[540] = 0
	for _, tc := range []struct {
		name, file string
		raw        []byte // nil: the fixture file itself
		variable   string
		want       string
	}{
		{"truncated NIfTI-2 header", "a.pconn.nii", conn[:300], "", "a.pconn.nii: NIfTI-2 header truncated: file has 300 bytes, the header needs 540"},
		{"NIfTI-1 header", "a.pconn.nii", withHeader(0, 348, 2), "", "header offset 0 (sizeof_hdr): found 348, expected 540"},
		{"bad magic", "a.pconn.nii", append([]byte("\x1c\x02\x00\x00n+1\x00"), conn[8:]...), "", "header offset 4 (magic)"},
		{"complex datatype", "a.pconn.nii", withHeader(12, 32, 2), "", "header offset 12 (datatype): code 32 is not read"},
		{"three dimensions", "a.pconn.nii", withHeader(16, 3, 8), "", "header offset 16 (dim[0]): 3 dimensions, expected 6"},
		{"vox_offset past the end", "a.pconn.nii", withHeader(168, 1<<40, 8), "", "header offset 168 (vox_offset)"},
		{"no extension", "a.pconn.nii", noExt, "", "byte 540 (extension flag) is 0"},
		{"data truncated", "a.pconn.nii", conn[:len(conn)-4], "", "data truncated: 4 × 4 values of 4 bytes"},
		// nibabel: a dense series (BrainModelAxis) saved under a .ptseries.nii name.
		{"CIFTI XML without a parcels map", "dense.ptseries.nii", nil, "", "CIFTI XML: no parcels map (CIFTI_INDEX_TYPE_PARCELS) for matrix dimension 1, the columns (found CIFTI_INDEX_TYPE_BRAIN_MODELS)"},
		{"dense CIFTI", "a.dconn.nii", conn, "", "a .nii file is read only as CIFTI-2 parcellated data"},
		// scipy.io.savemat wrote these files with the variables conn, series, stack, counts, fcstack, label, cells.
		{".mat without the named variable", "v5.mat", nil, "fc", `v5.mat: no variable "fc" (named by variable); the file holds "cells", "conn", "counts", "fcstack", "label", "series", "stack"`},
		{".mat compressed without the named variable", "v5z.mat", nil, "fc", `v5z.mat: no variable "fc"`},
		{".mat with several variables and no key", "v5.mat", nil, "", "file holds 7 variables"},
		{".mat char variable", "v5.mat", nil, "label", `variable "label" (element at byte`},
		{".mat cell variable", "v5z.mat", nil, "cells", `variable "cells" (compressed element at byte`},
		{".mat truncated", "v5.mat", fixtureBytes(t, "v5.mat")[:200], "conn", "v5.mat: byte 128: element of type 14 declares"},
		{".mat header", "v5.mat", fixtureBytes(t, "v5.mat")[:100], "conn", "MAT-file header truncated"},
		// h5py wrote v73.mat in MATLAB's v7.3 layout.
		{".mat v7.3 without the named variable", "v73.mat", nil, "fc", `v73.mat: no variable "fc" (named by variable); the file holds "bigseries", "bigstack", "checked", "conn", "counts", "fcstack", "info", "label", "lzf", "series", "stack"`},
		{".mat v7.3 unknown filter", "v73.mat", nil, "lzf", `v73.mat: variable "lzf": filter pipeline: filter 32000 ("lzf"), which skein does not read`},
		{".mat v7.3 truncated chunk", "v73.mat", v73Key(0, chunk0.Size-20), "bigstack", `v73.mat: variable "bigstack": HDF5 at byte`},
		{".mat v7.3 truncated chunk says so", "v73.mat", v73Key(0, chunk0.Size-20), "bigstack", `chunk at [0 0 0]: deflate: unexpected EOF`},
		{".mat v7.3 layout version 4", "v73.mat", layout4, "bigseries", `v73.mat: variable "bigseries": is stored in chunks indexed by a structure of data layout message version 4`},
		{".mat v7.3 filter mask", "v73.mat", v73Key(4, 2), "bigstack", fmt.Sprintf("chunk at [0 0 0]: decodes to %d bytes; a chunk holds 192", chunk0.Size)},
		{".mat v7.3 char variable", "v73.mat", nil, "label", `v73.mat: variable "label": is of MATLAB class "char"`},
		{".mat v7.3 struct", "v73.mat", nil, "info", `v73.mat: variable "info": is of MATLAB class "struct"`},
		{".mat v7.3 truncated", "v73.mat", fixtureBytes(t, "v73.mat")[:1200], "conn", "v73.mat: HDF5 at byte"},
		// numpy.savez of a dtype=object array.
		{"object .npz", "object.npz", nil, "conn", `object.npz (array "conn"): array holds Python objects (dtype 'O', pickled data)`},
		{".npz without the named array", "arrays.npz", nil, "fc", `arrays.npz: no array "fc" (named by variable); the archive holds "conn", "fortran"`},
		{".npz with two arrays and no key", "arrays.npz", nil, "", `archive holds 2 arrays ("conn", "fortran"); set variable`},
		{".npz not a zip", "a.npz", []byte("PK\x03\x04 not really"), "", "a.npz: not a readable .npz file"},
		{"variable on a .npy", "a.npy", []byte{}, "x", `variable "x" names an array, but a .npy file holds one unnamed array`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			raw := tc.raw
			if raw == nil {
				raw = fixtureBytes(t, tc.file)
			}
			_, err := decodeArray(tc.file, raw, readOptions{variable: tc.variable})
			var fe *FileError
			if !errors.As(err, &fe) || fe.Path == "" || !strings.HasPrefix(fe.Path, tc.file) {
				t.Fatalf("error %v (%T), want a *FileError naming %s", err, err, tc.file)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q, want one holding %q", err, tc.want)
			}
		})
	}
}

// TestReadSeries reads T × p series in each format that holds them, with
// the region names where the file gives them.
func TestReadSeries(t *testing.T) {
	dir := t.TempDir()
	text := filepath.Join(dir, "index.tsv")
	// Made up: a header with a corner cell, an index column counting from 0.
	if err := os.WriteFile(text, []byte("Node\tA\tB\n0\t0.5\t-1\n1\t1.5\t2\n2\t2.5\t0\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	plain := filepath.Join(dir, "plain.csv")
	if err := os.WriteFile(plain, []byte("A,B\n0.5,-1\n1.5,2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	ptseries := readWant(t, "series.json", "")   // nibabel
	mseries := readWant(t, "mat.json", "series") // scipy.io.savemat
	for _, tc := range []struct {
		path, variable string
		want           wantArray
	}{
		{text, "", wantArray{Shape: []int{3, 2}, Data: []float64{0.5, -1, 1.5, 2, 2.5, 0}, Names: []string{"A", "B"}}},
		{plain, "", wantArray{Shape: []int{2, 2}, Data: []float64{0.5, -1, 1.5, 2}, Names: []string{"A", "B"}}},
		{filepath.Join(formatsDir, "series.ptseries.nii"), "", ptseries},
		{filepath.Join(formatsDir, "v5z.mat"), "series", wantArray{Shape: mseries.Shape, Data: mseries.Data}},
	} {
		t.Run(filepath.Base(tc.path), func(t *testing.T) {
			m, names, err := ReadSeries(tc.path, tc.variable)
			if err != nil {
				t.Fatal(err)
			}
			r, c := m.Dims()
			if r != tc.want.Shape[0] || c != tc.want.Shape[1] {
				t.Fatalf("%d × %d, want %v", r, c, tc.want.Shape)
			}
			for i := range r {
				for j := range c {
					if v, w := m.At(i, j), tc.want.Data[i*c+j]; v != w && !(math.IsNaN(v) && math.IsNaN(w)) {
						t.Fatalf("(%d, %d) is %v, want %v", i, j, v, w)
					}
				}
			}
			if !reflect.DeepEqual(names, tc.want.Names) {
				t.Errorf("names %q, want %q", names, tc.want.Names)
			}
		})
	}
	if _, _, err := ReadSeries(filepath.Join(formatsDir, "conn.pconn.nii"), ""); err == nil || !strings.Contains(err.Error(), "not time series; expected .ptseries.nii") {
		t.Errorf("a .pconn.nii as series: error %v", err)
	}
	if _, _, err := ReadSeries(filepath.Join(formatsDir, "v5.mat"), "stack"); err == nil || !strings.Contains(err.Error(), "expected a 2-D T × p series") {
		t.Errorf("a stack as series: error %v", err)
	}
}

// mustField returns the raw JSON of key in a fixture's .json file.
func mustField(t *testing.T, file, key string) json.RawMessage {
	t.Helper()
	var all map[string]json.RawMessage
	if err := json.Unmarshal(fixtureBytes(t, file), &all); err != nil {
		t.Fatal(err)
	}
	if all[key] == nil {
		t.Fatalf("%s: no %q", file, key)
	}
	return all[key]
}

// fuzzSeeds adds each fixture to f.
func fuzzSeeds(f *testing.F, names ...string) {
	for _, n := range names {
		f.Add(fixtureBytes(f, n))
	}
}

// FuzzDecodeCIFTI: no input makes the CIFTI-2 reader panic, and what it
// accepts is a consistent 2-D array with a name for every column.
func FuzzDecodeCIFTI(f *testing.F) {
	fuzzSeeds(f, "conn.pconn.nii", "sym.pconn.nii", "series.ptseries.nii", "dense.ptseries.nii")
	f.Fuzz(func(t *testing.T, raw []byte) {
		a, err := decodeCIFTI("f.pconn.nii", raw)
		if err != nil {
			return
		}
		if len(a.shape) != 2 || a.shape[0]*a.shape[1] != len(a.data) || len(a.names) != a.shape[1] {
			t.Fatalf("shape %v, %d values, %d names", a.shape, len(a.data), len(a.names))
		}
	})
}

// FuzzDecodeMAT: no input makes the MAT-file reader panic, and what it
// accepts has as many values as its shape says.
func FuzzDecodeMAT(f *testing.F) {
	fuzzSeeds(f, "v5.mat", "v5z.mat", "v73.mat")
	f.Fuzz(func(t *testing.T, raw []byte) {
		for _, v := range []string{"", "conn", "stack", "bigstack", "bigseries", "checked"} {
			a, err := decodeMAT("f.mat", raw, readOptions{variable: v})
			if err != nil {
				continue
			}
			n := 1
			for _, d := range a.shape {
				n *= d
			}
			if n != len(a.data) {
				t.Fatalf("shape %v, %d values", a.shape, len(a.data))
			}
		}
	})
}

// FuzzDecodeNPZ: no input makes the .npz reader panic.
func FuzzDecodeNPZ(f *testing.F) {
	fuzzSeeds(f, "arrays.npz", "stack.npz", "object.npz")
	f.Fuzz(func(t *testing.T, raw []byte) {
		for _, o := range []readOptions{{}, {variable: "conn"}, {variable: "fc", idsVariable: "ids"}} {
			a, err := decodeNPZ("f.npz", raw, o)
			if err != nil {
				continue
			}
			if o.idsVariable != "" && a.ids == nil && len(a.shape) > 0 && a.shape[0] > 0 {
				t.Fatalf("no ids read for shape %v", a.shape)
			}
		}
	})
}

// TestH5Unfilter undoes filter pipelines on hand-made chunks of four
// 2-byte elements. Shuffle stores the first byte of every element, then
// the second (HDF5 File Format Specification, filter pipeline message);
// deflate is a zlib stream (RFC 1950), made here by compress/zlib.
func TestH5Unfilter(t *testing.T) {
	plain := []byte{1, 2, 3, 4, 5, 6, 7, 8}
	shuffled := []byte{1, 3, 5, 7, 2, 4, 6, 8}
	deflate := func(b []byte) []byte {
		var buf bytes.Buffer
		w := zlib.NewWriter(&buf)
		w.Write(b)
		w.Close()
		return buf.Bytes()
	}
	shuffleDeflate := []h5filter{{id: h5Shuffle, client: []uint32{2}}, {id: h5Deflate}}
	for _, tc := range []struct {
		name    string
		stored  []byte
		filters []h5filter
		mask    uint32
		want    string // error text, "" for plain
	}{
		{"none", plain, nil, 0, ""},
		{"shuffle", shuffled, shuffleDeflate[:1], 0, ""},
		{"shuffle then deflate", deflate(shuffled), shuffleDeflate, 0, ""},
		{"deflate skipped by the mask", shuffled, shuffleDeflate, 2, ""},
		{"both skipped", plain, shuffleDeflate, 3, ""},
		{"Fletcher-32 dropped", append(deflate(plain), 9, 9, 9, 9), []h5filter{{id: h5Deflate}, {id: h5Fletcher32}}, 0, ""},
		{"shorter than a checksum", []byte{1, 2}, []h5filter{{id: h5Fletcher32}}, 0, "shorter than its Fletcher-32 checksum"},
		{"too much data", deflate(append(plain, plain...)), shuffleDeflate[1:], 0, "decompresses to more than the chunk's 8 bytes"},
		{"too little data", deflate(plain[:6]), shuffleDeflate[1:], 0, "decodes to 6 bytes; a chunk holds 8"},
		{"not zlib", plain, shuffleDeflate[1:], 0, "deflate: zlib: invalid header"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out := make([]byte, len(plain))
			err := h5unfilter(out, tc.stored, tc.filters, tc.mask, 2)
			switch {
			case tc.want == "" && err != nil:
				t.Fatal(err)
			case tc.want == "" && !bytes.Equal(out, plain):
				t.Errorf("got %v, want %v", out, plain)
			case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
				t.Errorf("error %v, want one holding %q", err, tc.want)
			}
		})
	}
}

// TestH5Filters decodes filter pipeline messages of versions 1 and 2,
// laid out by hand after the HDF5 File Format Specification (filter
// pipeline message): version 1 pads names to 8 bytes and odd counts of
// client values by 4 bytes; version 2 has no name length for ids below
// 256.
func TestH5Filters(t *testing.T) {
	v1 := []byte{1, 2, 0, 0, 0, 0, 0, 0,
		2, 0, 8, 0, 1, 0, 1, 0, 's', 'h', 'u', 'f', 'f', 'l', 'e', 0, 8, 0, 0, 0, 0, 0, 0, 0,
		1, 0, 0, 0, 1, 0, 1, 0, 4, 0, 0, 0, 0, 0, 0, 0}
	v2 := []byte{2, 2, 2, 0, 1, 0, 1, 0, 8, 0, 0, 0, 1, 0, 0, 0, 1, 0, 6, 0, 0, 0}
	want := []h5filter{{id: 2, name: "shuffle", client: []uint32{8}}, {id: 1, client: []uint32{4}}}
	for _, tc := range []struct {
		name string
		b    []byte
		want []h5filter
		err  string
	}{
		{"version 1", v1, want, ""},
		{"version 2", v2, []h5filter{{id: 2, client: []uint32{8}}, {id: 1, client: []uint32{6}}}, ""},
		{"szip", []byte{2, 1, 4, 0, 0, 0, 0, 0}, nil, "filter 4, which skein does not read"},
		{"named unknown", []byte{2, 1, 0, 1, 4, 0, 0, 0, 0, 0, 'a', 'b', 'c', 0}, nil, `filter 256 ("abc")`},
		{"truncated", v1[:40], nil, "filter 2 truncated"},
		{"version 3", []byte{3, 0}, nil, "version 3"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := h5filters(tc.b)
			if tc.err != "" {
				if err == nil || !strings.Contains(err.Error(), tc.err) {
					t.Errorf("error %v, want one holding %q", err, tc.err)
				}
				return
			}
			if err != nil || !reflect.DeepEqual(got, tc.want) {
				t.Errorf("got %+v, %v; want %+v", got, err, tc.want)
			}
		})
	}
}
