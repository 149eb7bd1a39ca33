package linear

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// compactDataset returns d's participants with their matrices kept as
// cohort.storage = "float32" keeps them (data.Compact), and d's
// participants with whole matrices rounded to float32 the same way.
func compactDataset(d model.Dataset) (compact, rounded model.Dataset) {
	compact, rounded = model.Dataset{Y: d.Y}, model.Dataset{Y: d.Y}
	for _, q := range d.Participants {
		p, _ := q.Functional.Dims()
		c := &data.Compact{P: p, Functional: make([]float32, data.PackedLen(p)), Structural: make([]float32, data.PackedLen(p))}
		data.Pack(c.Functional, q.Functional)
		data.Pack(c.Structural, q.Structural)
		compact.Participants = append(compact.Participants, &data.Participant{ID: q.ID, Group: q.Group, Compact: c})
		rounded.Participants = append(rounded.Participants, &data.Participant{ID: q.ID, Group: q.Group,
			Functional: data.Unpack(p, c.Functional), Structural: data.Unpack(p, c.Structural)})
	}
	return compact, rounded
}

// TestCompactStorage checks every baseline on compact participants: its
// predictions equal, bit for bit, those of the same model on whole
// matrices holding the same float32 values (the edges read are the
// same), and agree with those on the float64 matrices to 1e-5 relative
// (float32 keeps about 7 significant digits; common practice, no source,
// for a tolerance a few hundred times its rounding).
func TestCompactStorage(t *testing.T) {
	d := randomCohort(19, 60, 9, 2)
	train, test := subset2(d, 0, 45), subset2(d, 45, 60)
	ctrain, rtrain := compactDataset(train)
	ctest, rtest := compactDataset(test)
	for name, cfg := range baselines() {
		t.Run(name, func(t *testing.T) {
			got := fitPredict(t, cfg, ctrain, ctest.Participants)
			same := fitPredict(t, cfg, rtrain, rtest.Participants)
			whole := fitPredict(t, cfg, train, test.Participants)
			if !mat.Equal(got, same) {
				t.Errorf("compact predictions differ from those on the same values stored whole:\n%v\n%v", mat.Formatted(got), mat.Formatted(same))
			}
			r, c := got.Dims()
			for i := range r {
				for j := range c {
					g, w := got.At(i, j), whole.At(i, j)
					if math.Abs(g-w) > 1e-5*math.Max(math.Abs(w), 1) {
						t.Errorf("prediction (%d, %d) = %v with float32 storage, %v with float64", i, j, g, w)
					}
				}
			}
		})
	}
}

// subset2 returns the participants lo ≤ i < hi of d with all their scores.
func subset2(d model.Dataset, lo, hi int) model.Dataset {
	_, t := d.Y.Dims()
	return model.Dataset{Participants: d.Participants[lo:hi], Y: mat.DenseCopyOf(d.Y.Slice(lo, hi, 0, t))}
}

// TestPredictRowsBlocked: predicting a block of rows at a time gives the
// product of the whole edge matrix with the weights, entry for entry
// (each entry is the same dot product; in the pure-Go build bit for bit,
// in the OpenBLAS build to rounding).
func TestPredictRowsBlocked(t *testing.T) {
	d := randomCohort(3, 23, 8, 1)
	x, _, err := newEdgeRows(d.Participants, InputBoth, 0)
	if err != nil {
		t.Fatal(err)
	}
	w := mat.NewDense(x.width(), 3, nil)
	for i := range w.RawMatrix().Data {
		w.RawMatrix().Data[i] = math.Sin(float64(i))
	}
	var whole mat.Dense
	whole.Mul(x.matrix(), w)
	for _, limit := range []int{0, 8 * x.width() * 5, 1 << 30} {
		var got mat.Dense
		predictRows(&got, x, w, limit)
		if !mat.EqualApprox(&got, &whole, 1e-12) {
			t.Errorf("limit %d bytes: predictions differ from the whole product", limit)
		}
	}
}
