package eval

import (
	"bytes"
	"fmt"

	"github.com/skein-neuro/skein/train"
)

// The files WriteRun adds to a run folder.
const (
	PredictionsFile = "predictions.csv"
	MetricsFile     = "metrics.json"
	SummaryFile     = "summary.md"
)

// WriteRun writes a finished run's predictions.csv, metrics.json and
// summary.md into the work folder of d (they appear in the run folder when
// d is committed) and returns the summary. bins ≤ 0 means DefaultBins.
func WriteRun(d *train.RunDir, exp *train.Experiment, res *train.Result, bins int) (*Summary, error) {
	rows := make([]Prediction, len(res.Predictions))
	for i, p := range res.Predictions {
		rows[i] = Prediction(p)
	}
	var buf bytes.Buffer
	if err := WritePredictions(&buf, rows); err != nil {
		return nil, err
	}
	if err := d.WriteFile(PredictionsFile, buf.Bytes()); err != nil {
		return nil, err
	}
	sum := Summarize(rows, bins, true)
	buf.Reset()
	if err := sum.WriteJSON(&buf); err != nil {
		return nil, err
	}
	if err := d.WriteFile(MetricsFile, buf.Bytes()); err != nil {
		return nil, err
	}
	buf.Reset()
	fmt.Fprintf(&buf, "# Results: %d models, %d-fold cross-validation × %d repeats, seed %d\n\n",
		len(exp.Models), exp.CV.Folds, exp.CV.Repeats, exp.Seed)
	if err := sum.WriteMarkdown(&buf); err != nil {
		return nil, err
	}
	if err := d.WriteFile(SummaryFile, buf.Bytes()); err != nil {
		return nil, err
	}
	return sum, nil
}
