package experiment

import (
	"bytes"
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

func TestSampleSizeCurveRoundTrip(t *testing.T) {
	split := train.Split{Repeat: 0, Fold: 1, Train: []int{0, 1, 2}, Test: []int{3, 4, 5}}
	run := train.SampleSizeRun{Fraction: 0.5, Splits: []train.Split{split}}
	for _, obs := range []float64{1, 2, 4} {
		run.Predictions = append(run.Predictions,
			model.Prediction{ParticipantID: "p", Model: "ridge", Target: "recall", Fold: 1, Observed: obs, Predicted: obs + 1},
			model.Prediction{ParticipantID: "p", Model: "mean", Target: "recall", Fold: 1, Observed: obs, Predicted: 2})
	}
	rows := SampleSizeCurve([]train.SampleSizeRun{run})
	// Predictions off by exactly 1: r = 1, MAE = 1 (worked by hand); the
	// constant prediction has no correlation (NaN).
	want := []eval.SampleSizeRow{
		{Model: "mean", Target: "recall", Fraction: 0.5, NTrain: 3, Fold: 1, Pearson: math.NaN(), MAE: 1},
		{Model: "ridge", Target: "recall", Fraction: 0.5, NTrain: 3, Fold: 1, Pearson: 1, MAE: 1},
	}
	if len(rows) != 2 || rows[1] != want[1] || rows[0].Model != "mean" || !math.IsNaN(rows[0].Pearson) || rows[0].MAE != 1 {
		t.Fatalf("rows %+v, want %+v", rows, want)
	}
	var buf bytes.Buffer
	if err := eval.WriteSampleSizeCSV(&buf, rows); err != nil {
		t.Fatal(err)
	}
	back, err := eval.ReadSampleSizeCSV(bytes.NewReader(buf.Bytes()), "sample_size.csv")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(back[1], rows[1]) || !math.IsNaN(back[0].Pearson) {
		t.Errorf("read back %+v, want %+v", back, rows)
	}
	bad := strings.Replace(buf.String(), "ridge,recall,0.5,3", "ridge,recall,0.5,three", 1)
	_, err = eval.ReadSampleSizeCSV(strings.NewReader(bad), "s.csv")
	var pe *data.FileError
	if !errors.As(err, &pe) || pe.Line != 3 || pe.Column != 4 || !strings.Contains(err.Error(), `"three"`) {
		t.Errorf("bad n_train: %v", err)
	}
}
