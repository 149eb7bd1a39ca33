package data

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestPackUnpack compares Pack with NumPy's packing of a 5 × 5 matrix:
// m[numpy.triu_indices(5, 1)] then numpy.diag(m), cast to float32
// (testdata/compact/packed.json, by make_packed.py), and checks that
// Unpack gives back the symmetric matrix of those float32 values.
func TestPackUnpack(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("testdata", "compact", "packed.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx struct {
		Matrix [][]float64 `json:"matrix"`
		Packed []float64   `json:"packed"`
	}
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	p := len(fx.Matrix)
	m := mat.NewDense(p, p, slices.Concat(fx.Matrix...))
	got := make([]float32, PackedLen(p))
	Pack(got, m)
	for k, want := range fx.Packed {
		if float64(got[k]) != want { // NumPy's float32 cast: exact
			t.Errorf("packed[%d] = %v, numpy gives %v", k, got[k], want)
		}
	}
	u := Unpack(p, got)
	for i := range p {
		for j := range p {
			if want := float64(float32(fx.Matrix[i][j])); u.At(i, j) != want {
				t.Errorf("Unpack(%d, %d) = %v, want %v", i, j, u.At(i, j), want)
			}
		}
	}
}

// TestCheckStorageFloat32 checks the NumPy fixture cohort with
// storage = "float32" and "float64": the same participants, the compact
// matrices equal to the float64 ones rounded to float32 (a relative error
// of at most 2⁻²⁴, IEEE 754 round to nearest), and the report alike.
func TestCheckStorageFloat32(t *testing.T) {
	src := fixtureSource(t, "good-npy")
	whole, rep64, err := Check(src, Preprocess{}, fixtureDir("good-npy"))
	if err != nil {
		t.Fatal(err)
	}
	src = fixtureSource(t, "good-npy")
	src.Storage = StorageFloat32
	compact, rep32, err := Check(src, Preprocess{}, fixtureDir("good-npy"))
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(ids(whole.Participants), ids(compact.Participants)) {
		t.Fatalf("participants %v, want %v", ids(compact.Participants), ids(whole.Participants))
	}
	if rep32.Functional.MeanConnectivity != rep64.Functional.MeanConnectivity {
		t.Errorf("mean connectivity %+v, want %+v as with float64", rep32.Functional.MeanConnectivity, rep64.Functional.MeanConnectivity)
	}
	for i, q := range compact.Participants {
		w := whole.Participants[i]
		if q.Functional != nil || q.Structural != nil || q.Compact == nil {
			t.Fatalf("%s: float32 storage kept whole matrices", q.ID)
		}
		for _, pair := range []struct {
			name      string
			got, want *mat.Dense
			has       bool
		}{
			{"functional", q.FunctionalMatrix(), w.Functional, q.HasFunctional()},
			{"structural", q.StructuralMatrix(), w.Structural, q.HasStructural()},
		} {
			if (pair.want != nil) != pair.has || (pair.got == nil) != (pair.want == nil) {
				t.Fatalf("%s: %s matrix present %v, want %v", q.ID, pair.name, pair.got != nil, pair.want != nil)
			}
			if pair.want == nil {
				continue
			}
			p, _ := pair.want.Dims()
			for a := range p {
				for b := a; b < p; b++ {
					g, v := pair.got.At(a, b), pair.want.At(a, b)
					if math.Abs(g-v) > math.Abs(v)*0x1p-24 || pair.got.At(b, a) != g {
						t.Fatalf("%s: %s (%d, %d) = %v, want %v to float32 rounding", q.ID, pair.name, a, b, g, v)
					}
				}
			}
		}
	}
}

// TestStorageKey checks the word cohort.storage accepts.
func TestStorageKey(t *testing.T) {
	src := fixtureSource(t, "good-npy")
	src.SetDefaults()
	if src.Storage != StorageFloat64 {
		t.Errorf("default storage %q, want %q", src.Storage, StorageFloat64)
	}
	src.Storage = "half"
	if err := src.Validate(); err == nil || !containsAll(err.Error(), "cohort.storage", "half", "float32") {
		t.Errorf("storage = \"half\": error %v, want one naming the key, the word and the choices", err)
	}
}

func containsAll(s string, subs ...string) bool {
	for _, sub := range subs {
		if !strings.Contains(s, sub) {
			return false
		}
	}
	return true
}
