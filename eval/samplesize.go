package eval

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/skein-neuro/skein/data"
)

// A SampleSizeRow is one model's accuracy on one target and one test fold
// after training on a subset of the training fold.
type SampleSizeRow struct {
	Model, Target string
	Fraction      float64 // of the training fold
	NTrain        int     // participants in the training subset
	Repeat, Fold  int
	Pearson, MAE  float64 // on the test fold; NaN when undefined
}

var sampleSizeColumns = []string{"model", "target", "fraction", "n_train", "repeat", "fold", "pearson_r", "mae"}

// WriteSampleSizeCSV writes rows as sample_size.csv.
func WriteSampleSizeCSV(w io.Writer, rows []SampleSizeRow) error {
	cw := csv.NewWriter(w)
	cw.Write(sampleSizeColumns)
	for _, r := range rows {
		cw.Write([]string{r.Model, r.Target, strconv.FormatFloat(r.Fraction, 'g', -1, 64), strconv.Itoa(r.NTrain),
			strconv.Itoa(r.Repeat + 1), strconv.Itoa(r.Fold + 1), formatCell(r.Pearson), formatCell(r.MAE)})
	}
	cw.Flush()
	return cw.Error()
}

func formatCell(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// ReadSampleSizeCSV reads a file WriteSampleSizeCSV wrote; name is used in
// errors, which are *data.FileError values naming the line and column.
func ReadSampleSizeCSV(r io.Reader, name string) ([]SampleSizeRow, error) {
	cr := csv.NewReader(r)
	header, err := cr.Read()
	if err != nil {
		return nil, csvError(name, err)
	}
	for c, want := range sampleSizeColumns {
		if c >= len(header) || header[c] != want {
			found := "nothing"
			if c < len(header) {
				found = strconv.Quote(header[c])
			}
			return nil, &data.FileError{Path: name, Line: 1, Column: c + 1, Err: fmt.Errorf("want column %q, found %s", want, found)}
		}
	}
	var rows []SampleSizeRow
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return rows, nil
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		bad := func(c int, err error) error {
			return &data.FileError{Path: name, Line: line, Column: c + 1, ColumnName: sampleSizeColumns[c], Err: err}
		}
		row := SampleSizeRow{Model: rec[0], Target: rec[1]}
		if row.Fraction, err = strconv.ParseFloat(rec[2], 64); err != nil || !(row.Fraction > 0 && row.Fraction <= 1) {
			return nil, bad(2, fmt.Errorf("want a fraction in (0, 1], found %q", rec[2]))
		}
		for c, dst := range []*int{3: &row.NTrain, 4: &row.Repeat, 5: &row.Fold} {
			if dst == nil {
				continue
			}
			min := 0
			if c > 3 {
				min = 1 // repeats and folds are numbered from 1
			}
			if *dst, err = strconv.Atoi(rec[c]); err != nil || *dst < min {
				return nil, bad(c, fmt.Errorf("want a whole number ≥ %d, found %q", min, rec[c]))
			}
			if c > 3 {
				*dst--
			}
		}
		for c, dst := range []*float64{6: &row.Pearson, 7: &row.MAE} {
			if dst == nil {
				continue
			}
			if *dst, err = parseValue(rec[c]); err != nil {
				return nil, bad(c, err)
			}
		}
		rows = append(rows, row)
	}
}
