package data

import (
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

// readExpected reads a shape line and C-order values written as text by
// testdata/npy/make_npy.py (NumPy).
func readExpected(t *testing.T, name string) ([]int, []float64) {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "npy", name))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Fields(string(raw))
	var shape []int
	dims := strings.Fields(strings.SplitN(string(raw), "\n", 2)[0])
	for _, d := range dims {
		n, err := strconv.Atoi(d)
		if err != nil {
			t.Fatal(err)
		}
		shape = append(shape, n)
	}
	var vals []float64
	for _, s := range lines[len(dims):] {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatal(err)
		}
		vals = append(vals, v)
	}
	return shape, vals
}

// TestDecodeNPYNumPyFixtures reads arrays NumPy wrote (testdata/npy,
// made by make_npy.py with Debian's python3-numpy) in every dtype, order
// and byte order skein supports, and compares them with the values NumPy
// wrote as text.
func TestDecodeNPYNumPyFixtures(t *testing.T) {
	shape2, want2 := readExpected(t, "expected_2d.txt")
	shape3, want3 := readExpected(t, "expected_3d.txt")
	files, err := filepath.Glob(filepath.Join("..", "testdata", "npy", "m*.npy"))
	if err != nil || len(files) != 17 {
		t.Fatalf("found %d fixtures (%v), want 17", len(files), err)
	}
	for _, path := range files {
		t.Run(filepath.Base(path), func(t *testing.T) {
			raw, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			arr, err := decodeNPY(path, raw)
			if err != nil {
				t.Fatal(err)
			}
			shape, want := shape2, want2
			if strings.HasPrefix(filepath.Base(path), "m3") {
				shape, want = shape3, want3
			}
			if !reflect.DeepEqual(arr.shape, shape) {
				t.Fatalf("shape %v, want %v", arr.shape, shape)
			}
			if !reflect.DeepEqual(arr.data, want) {
				t.Errorf("values %v, want %v", arr.data, want)
			}
			if len(shape) == 2 {
				m, err := arr.matrix(path)
				if err != nil {
					t.Fatal(err)
				}
				if got := m.At(2, 1); got != want[2*4+1] {
					t.Errorf("At(2, 1) = %v, want %v", got, want[9])
				}
			} else {
				if err := arr.checkStack(path); err != nil {
					t.Fatal(err)
				}
				if got := arr.stack(1).At(2, 3); got != want[1*12+2*4+3] {
					t.Errorf("stack(1).At(2, 3) = %v, want %v", got, want[23])
				}
			}
		})
	}
}

func TestDecodeNPYRefuses(t *testing.T) {
	npyFile := func(name string) []byte {
		raw, err := os.ReadFile(filepath.Join("..", "testdata", "npy", name))
		if err != nil {
			t.Fatal(err)
		}
		return raw
	}
	good := npyFile("m2_f8_C_le.npy")
	for _, tc := range []struct {
		name string
		raw  []byte
		want string // in the error of decodeNPY, or of matrix when 2-D is needed
	}{
		{"int32", npyFile("bad_int32.npy"), `dtype "<i4" is not supported; expected float32 or float64`},
		{"float16", npyFile("bad_float16.npy"), `dtype "<f2" is not supported`},
		{"complex", npyFile("bad_complex.npy"), `dtype "<c16" is not supported`},
		{"1-D", npyFile("bad_1d.npy"), "array has 1 dimensions (shape [4]); expected a 2-D p × p matrix"},
		{"4-D", npyFile("bad_4d.npy"), "array has 4 dimensions"},
		{"not npy", []byte("participant_id\tage\n"), "not a readable .npy file"},
		{"empty", nil, "not a readable .npy file"},
		{"truncated data", good[:len(good)-8], "shape [3 4] of float64 needs 96 data bytes, found 88"},
		{"extra data", append(append([]byte(nil), good...), 0, 0, 0, 0, 0, 0, 0, 0), "needs 96 data bytes, found 104"},
		{"truncated header", good[:40], "not a readable .npy file"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			arr, err := decodeNPY("x.npy", tc.raw)
			if err == nil {
				_, err = arr.matrix("x.npy")
			}
			if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "x.npy: ") {
				t.Errorf("error %v, want one starting with x.npy and holding %q", err, tc.want)
			}
		})
	}
}

// FuzzDecodeNPY checks that no input makes the .npy wrapper panic and that
// what it accepts is consistent. Seeds: the NumPy fixtures.
func FuzzDecodeNPY(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("..", "testdata", "npy", "*.npy"))
	for _, path := range files {
		raw, err := os.ReadFile(path)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(raw)
	}
	f.Add([]byte("\x93NUMPY\x01\x00\x10\x00{'descr': '<f8'\n"))
	f.Fuzz(func(t *testing.T, raw []byte) {
		arr, err := decodeNPY("fuzz.npy", raw)
		if err != nil {
			return
		}
		n := 1
		for _, d := range arr.shape {
			n *= d
		}
		if n != len(arr.data) {
			t.Fatalf("shape %v but %d values", arr.shape, len(arr.data))
		}
	})
}
