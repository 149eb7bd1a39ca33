package eval

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// A ClassPrediction is one row group of class_predictions.csv: the class
// probabilities a model gave one participant for one label when that
// participant was in the test fold (see model.ClassPrediction).
type ClassPrediction = model.ClassPrediction

// The columns of class_predictions.csv beyond those it shares with
// predictions.csv (participant_id, model, target, repeat, fold, observed).
const (
	ColumnClass       = "class"
	ColumnProbability = "probability"
)

// WriteClassPredictions writes class predictions as CSV with the header
//
//	participant_id,model,target,repeat,fold,observed,class,probability
//
// and one row per prediction of rows and class, in the order of rows and
// then of the class index: target is the label, observed and class are
// class names (classes maps each label to its class names, as
// data.Cohort.Classes holds them), repeat and fold count from 1, and the
// probability is written by strconv.FormatFloat with 'g' and precision −1,
// so that it reads back exactly. A label missing from classes, or a class
// index outside its names, is an error.
func WriteClassPredictions(out io.Writer, rows []ClassPrediction, classes map[string][]string) error {
	w := csv.NewWriter(out)
	w.Write([]string{ColumnParticipant, ColumnModel, ColumnTarget, ColumnRepeat, ColumnFold, ColumnObserved, ColumnClass, ColumnProbability})
	for _, r := range rows {
		names, ok := classes[r.Label]
		if !ok {
			return fmt.Errorf("class predictions: label %q has no class names", r.Label)
		}
		if r.Observed < 0 || r.Observed >= len(names) || len(r.Probabilities) != len(names) {
			return fmt.Errorf("class predictions: participant %s, label %s: class %d and %d probabilities for %d classes",
				r.ParticipantID, r.Label, r.Observed, len(r.Probabilities), len(names))
		}
		for k, p := range r.Probabilities {
			w.Write([]string{r.ParticipantID, r.Model, r.Label, strconv.Itoa(r.Repeat + 1), strconv.Itoa(r.Fold + 1),
				names[r.Observed], names[k], strconv.FormatFloat(p, 'g', -1, 64)})
		}
	}
	w.Flush()
	return w.Error()
}

// A ClassMetric names one classification metric, as metrics.json keys it.
type ClassMetric string

// The classification metrics (ScoreClasses).
const (
	// MetricAUCWithin is the headline AUC: over one fold it is the AUC;
	// pooled over the folds of a run it is AUCWithinFolds, which is free
	// of the bias that the training folds' class frequencies give pooled
	// AUC.
	MetricAUCWithin ClassMetric = "auc_within"
	// MetricAUC is the AUC; pooled over the folds of a run it carries the
	// bias AUCWithinFolds describes.
	MetricAUC              ClassMetric = "auc"
	MetricBalancedAccuracy ClassMetric = "balanced_accuracy"
	MetricAccuracy         ClassMetric = "accuracy"
	MetricLogLoss          ClassMetric = "log_loss"
	MetricBrier            ClassMetric = "brier"
	MetricSensitivity      ClassMetric = "sensitivity"
	MetricSpecificity      ClassMetric = "specificity"
)

// ClassMetrics returns every ClassMetric in the order of ClassScores.
func ClassMetrics() []ClassMetric {
	return []ClassMetric{MetricAUCWithin, MetricAUC, MetricBalancedAccuracy, MetricAccuracy, MetricLogLoss, MetricBrier, MetricSensitivity, MetricSpecificity}
}

// Label returns the metric's name in tables.
func (m ClassMetric) Label() string {
	switch m {
	case MetricAUCWithin:
		return "AUC within folds"
	case MetricAUC:
		return "pooled AUC"
	case MetricBrier:
		return "Brier"
	}
	return strings.ReplaceAll(string(m), "_", " ")
}

// LowerIsBetter reports whether a smaller value of m is better (log loss,
// Brier).
func (m ClassMetric) LowerIsBetter() bool { return m == MetricLogLoss || m == MetricBrier }

// Get returns the value of metric m; it panics for an unknown metric.
func (s ClassScores) Get(m ClassMetric) float64 { return *s.field(m) }

func (s *ClassScores) set(m ClassMetric, v float64) { *s.field(m) = v }

func (s *ClassScores) field(m ClassMetric) *float64 {
	switch m {
	case MetricAUCWithin:
		return &s.AUCWithin
	case MetricAUC:
		return &s.AUC
	case MetricBalancedAccuracy:
		return &s.BalancedAccuracy
	case MetricAccuracy:
		return &s.Accuracy
	case MetricLogLoss:
		return &s.LogLoss
	case MetricBrier:
		return &s.Brier
	case MetricSensitivity:
		return &s.Sensitivity
	case MetricSpecificity:
		return &s.Specificity
	}
	panic("eval: unknown classification metric " + string(m))
}

// A ClassFold holds the classification metrics of one test fold of one
// repeat, over its N participants.
type ClassFold struct {
	Repeat, Fold int // from 0
	N            int
	ClassScores
}

// A ClassGroup holds the figures of one model on one label: the
// counterpart of Group for a categorical target.
type ClassGroup struct {
	Model, Label string
	// Classes names the label's classes; for two, Classes[1] is the
	// positive class of AUC, sensitivity and the threshold.
	Classes []string
	// Threshold is the probability of the positive class from which a
	// participant of a binary label is predicted positive.
	Threshold float64
	// N counts the pooled rows: a participant once per repeat.
	N int
	// Pooled scores all test predictions of all repeats at once, as
	// Group.Pooled pools the scores' predictions; its AUCWithin is
	// AUCWithinFolds of the rows, the headline AUC.
	Pooled ClassScores
	// Folds scores each repeat × fold alone, sorted by repeat then fold.
	Folds []ClassFold
	// FoldMean and FoldSD are the mean and sample SD (denominator J − 1)
	// of each metric over the folds that define it; NaN when none (mean)
	// or fewer than two (SD) do.
	FoldMean, FoldSD ClassScores
	// Intervals holds the percentile bootstrap interval of each pooled
	// metric (ClassIntervals); nil before it is computed.
	Intervals map[ClassMetric]Interval
	// PAUC is the permutation p-value of the AUC within folds
	// (Pooled.AUCWithin, AssembleClassNulls); NaN without a permutation
	// test. NullAUC holds the AUC within folds of each permutation, in
	// permutation order.
	PAUC    float64
	NullAUC []float64
	// Reference names the reference baseline of the label this model is
	// compared with ("" for the reference itself, or without one);
	// IsReference marks the reference itself.
	Reference   string
	IsReference bool
	// DiffAUC compares the fold AUC of this model with Reference's over
	// the same distinct folds by the corrected resampled t-test (this
	// model minus Reference, CorrectedTTest); RepeatedFolds counts the
	// folds left out because their test participants repeat an earlier
	// fold's.
	DiffAUC       TTest
	RepeatedFolds int
}

func nanClassScores() ClassScores {
	var s ClassScores
	for _, m := range ClassMetrics() {
		s.set(m, math.NaN())
	}
	return s
}

// classRows returns the observed classes of rows and their probabilities
// as an n × K matrix; rows must not be empty.
func classRows(rows []ClassPrediction, idx []int) ([]int, *mat.Dense) {
	K := len(rows[idx[0]].Probabilities)
	y := make([]int, len(idx))
	p := mat.NewDense(len(idx), K, nil)
	for j, i := range idx {
		y[j] = rows[i].Observed
		p.SetRow(j, rows[i].Probabilities)
	}
	return y, p
}

// SummarizeClasses scores the class predictions rows grouped by model and
// label (ScoreClasses at threshold): pooled over all rows of a group, and
// per repeat × fold with the folds' mean and SD; the pooled AUCWithin is
// AUCWithinFolds of the group's rows. classes maps each label to its
// class names. Groups come in the order of their first row, models
// first: rows ordered as train.Result orders them give the experiment's
// models, then the cohort's labels. PAUC is NaN.
func SummarizeClasses(rows []ClassPrediction, classes map[string][]string, threshold float64) []ClassGroup {
	type key struct{ model, label string }
	var models, labels []string
	members := make(map[key][]int)
	for i, r := range rows {
		if !slices.Contains(models, r.Model) {
			models = append(models, r.Model)
		}
		if !slices.Contains(labels, r.Label) {
			labels = append(labels, r.Label)
		}
		k := key{r.Model, r.Label}
		members[k] = append(members[k], i)
	}
	var out []ClassGroup
	for _, m := range models {
		for _, l := range labels {
			idx := members[key{m, l}]
			if len(idx) == 0 {
				continue
			}
			y, p := classRows(rows, idx)
			g := ClassGroup{Model: m, Label: l, Classes: classes[l], Threshold: threshold, N: len(idx),
				Pooled: ScoreClasses(y, p, threshold), PAUC: math.NaN()}
			g.Pooled.AUCWithin = AUCWithinFolds(pick(rows, idx))
			byFold := make(map[[2]int][]int)
			var folds [][2]int
			for _, i := range idx {
				f := [2]int{rows[i].Repeat, rows[i].Fold}
				if _, ok := byFold[f]; !ok {
					folds = append(folds, f)
				}
				byFold[f] = append(byFold[f], i)
			}
			slices.SortFunc(folds, func(a, b [2]int) int {
				if a[0] != b[0] {
					return a[0] - b[0]
				}
				return a[1] - b[1]
			})
			for _, f := range folds {
				y, p := classRows(rows, byFold[f])
				g.Folds = append(g.Folds, ClassFold{Repeat: f[0], Fold: f[1], N: len(byFold[f]), ClassScores: ScoreClasses(y, p, threshold)})
			}
			g.FoldMean, g.FoldSD = classFoldSpread(g.Folds)
			out = append(out, g)
		}
	}
	return out
}

// pick returns the rows of rows at idx, in the order of idx.
func pick(rows []ClassPrediction, idx []int) []ClassPrediction {
	out := make([]ClassPrediction, len(idx))
	for j, i := range idx {
		out[j] = rows[i]
	}
	return out
}

// classFoldSpread returns the mean and sample SD of each metric over the
// folds that define it.
func classFoldSpread(folds []ClassFold) (mean, sd ClassScores) {
	mean, sd = nanClassScores(), nanClassScores()
	for _, m := range ClassMetrics() {
		var x []float64
		for _, f := range folds {
			if v := f.Get(m); !math.IsNaN(v) {
				x = append(x, v)
			}
		}
		if len(x) == 0 {
			continue
		}
		mu, s := meanSD(x)
		mean.set(m, mu)
		if len(x) > 1 {
			sd.set(m, s)
		}
	}
	return mean, sd
}

// ClassIntervals sets g.Intervals: for each metric, the percentile
// bootstrap interval at level of its pooled value over rows, the class
// predictions of g's model and label (BootstrapClassCI: participants
// resampled with all their repeats), with resamples resamples drawn from
// rng, metric after metric in ClassMetrics order. For MetricAUCWithin
// each drawn row keeps its repeat and fold, and a resample is scored by
// AUCWithinFolds (a participant drawn twice forms pairs in its folds
// twice, as in the pooled metrics).
func ClassIntervals(g *ClassGroup, rows []ClassPrediction, resamples int, level float64, rng *rand.Rand) {
	var idx []int
	for i, r := range rows {
		if r.Model == g.Model && r.Label == g.Label {
			idx = append(idx, i)
		}
	}
	if len(idx) == 0 {
		return
	}
	y, p := classRows(rows, idx)
	ids := make([]string, len(idx))
	for j, i := range idx {
		ids[j] = rows[i].ParticipantID
	}
	g.Intervals = make(map[ClassMetric]Interval)
	for _, m := range ClassMetrics() {
		if m == MetricAUCWithin {
			group := pick(rows, idx)
			resample := make([]ClassPrediction, 0, len(group))
			g.Intervals[m] = bootstrapParticipants(ids, resamples, level, rng, func(drawn []int) float64 {
				if drawn == nil {
					return AUCWithinFolds(group)
				}
				resample = resample[:0]
				for _, i := range drawn {
					resample = append(resample, group[i])
				}
				return AUCWithinFolds(resample)
			})
			continue
		}
		metric := func(y []int, p *mat.Dense) float64 { return ScoreClasses(y, p, g.Threshold).Get(m) }
		if m == MetricAUC {
			metric = func(y []int, p *mat.Dense) float64 { return OneVsRestAUC(y, p) }
		}
		g.Intervals[m] = BootstrapClassCI(ids, y, p, metric, resamples, level, rng)
	}
}

// CompareClassOptions are the settings of CompareClasses.
type CompareClassOptions struct {
	// Reference names, per label, the baseline every other model is
	// compared with (ChooseLabelReference); a label without one gets no
	// differences.
	Reference map[string]string
	// NTrain and NTest are the mean numbers of participants in a training
	// and a test fold, for the corrected t-test.
	NTrain, NTest float64
	// Resamples and Level set the bootstrap: 1000 and 0.95 when zero.
	Resamples int
	Level     float64
	// Seed seeds the bootstrap.
	Seed uint64
}

// CompareClasses computes, for every group of groups (SummarizeClasses of
// rows), the bootstrap intervals of its pooled metrics (ClassIntervals,
// each group with its own generator seeded by opt.Seed and the group's
// index) and, against its label's reference baseline, the corrected
// resampled t-test of the fold AUC (Nadeau & Bengio 2003, as Compare does
// for r), leaving out folds whose test participants repeat an earlier
// fold's (DuplicateFolds).
func CompareClasses(groups []ClassGroup, rows []ClassPrediction, opt CompareClassOptions) {
	if opt.Resamples == 0 {
		opt.Resamples = 1000
	}
	if opt.Level == 0 {
		opt.Level = 0.95
	}
	for i := range groups {
		g := &groups[i]
		ClassIntervals(g, rows, opt.Resamples, opt.Level, rand.New(rand.NewPCG(opt.Seed, 1<<32+uint64(i))))
		ref := opt.Reference[g.Label]
		g.IsReference = ref == g.Model
		j := slices.IndexFunc(groups, func(r ClassGroup) bool { return r.Model == ref && r.Label == g.Label })
		if j < 0 || j == i || len(g.Folds) == 0 || opt.NTrain <= 0 || opt.NTest <= 0 {
			continue
		}
		g.Reference = ref
		repeated := DuplicateFolds(foldMembers(rows, g.Model, g.Label))
		g.RepeatedFolds = len(repeated)
		refAUC := make(map[[2]int]float64)
		for _, f := range groups[j].Folds {
			refAUC[[2]int{f.Repeat, f.Fold}] = f.AUC
		}
		var diff []float64
		for _, f := range g.Folds {
			k := [2]int{f.Repeat, f.Fold}
			if r, ok := refAUC[k]; ok && !repeated[k] {
				diff = append(diff, f.AUC-r)
			}
		}
		g.DiffAUC = CorrectedTTest(diff, opt.NTrain, opt.NTest)
	}
}

// foldMembers returns the rows of one model and label as predictions
// carrying only their participant and fold, for DuplicateFolds.
func foldMembers(rows []ClassPrediction, model, label string) []Prediction {
	var out []Prediction
	for _, r := range rows {
		if r.Model == model && r.Label == label {
			out = append(out, Prediction{ParticipantID: r.ParticipantID, Repeat: r.Repeat, Fold: r.Fold})
		}
	}
	return out
}

// ChooseLabelReference returns the reference baseline of each label and a
// sentence saying how it was chosen, as ChooseReference does for scores:
// named when not ""; else the baseline with the lowest inner-validation
// log loss on the label (innerLoss holds, per model, one mean log loss
// per label, NaN where undefined); else the first of baselines that
// learns labels. classifiers lists the baselines that learn labels, in
// the experiment's order; a label gets no reference without one.
func ChooseLabelReference(labels, classifiers []string, named string, innerLoss map[string][]float64) (map[string]string, string) {
	ref, rule := ChooseReference(labels, classifiers, named, innerLoss)
	if named == "" && len(classifiers) > 1 && strings.Contains(rule, "lowest inner-validation error") {
		rule = "the reference baseline of each label is the baseline with the lowest inner-validation log loss " +
			"(on each training fold's inner validation part, fitted on the rest of the training fold): the test " +
			"folds played no part in the choice"
	}
	return ref, rule
}

// A ClassNull is the AUC within folds of one model on one label in one
// permuted run of a permutation test: one row of the null distribution of
// the headline AUC.
type ClassNull struct {
	Model, Label string
	Permutation  int // index into the permutations, from 0
	AUCWithin    float64
}

// ScoreClassNull returns the AUC within folds (AUCWithinFolds of all test
// predictions of all repeats, as SummarizeClasses pools them) of every
// model × label of rows, the class predictions of permutation k, in order
// of first appearance.
func ScoreClassNull(rows []ClassPrediction, k int) []ClassNull {
	type key struct{ model, label string }
	var keys []key
	members := make(map[key][]int)
	for i, r := range rows {
		kk := key{r.Model, r.Label}
		if _, ok := members[kk]; !ok {
			keys = append(keys, kk)
		}
		members[kk] = append(members[kk], i)
	}
	out := make([]ClassNull, len(keys))
	for j, kk := range keys {
		out[j] = ClassNull{Model: kk.model, Label: kk.label, Permutation: k, AUCWithin: AUCWithinFolds(pick(rows, members[kk]))}
	}
	return out
}

// AssembleClassNulls sets, for every group of groups whose model has rows
// in nulls, NullAUC to the AUC within folds of permutations 0 to count−1
// and PAUC to the permutation p-value of its own (Pooled.AUCWithin;
// PermutationPValue, higher is better). Every such group must have every permutation exactly once; the
// result does not depend on the order of nulls, so a test run in blocks
// gives what one run gives.
func AssembleClassNulls(groups []ClassGroup, nulls []ClassNull, count int) error {
	type key struct{ model, label string }
	byKey := make(map[key][]float64)
	seen := make(map[key][]bool)
	tested := make(map[string]bool)
	for _, r := range nulls {
		k := key{r.Model, r.Label}
		if r.Permutation < 0 || r.Permutation >= count {
			return fmt.Errorf("model %q, label %q: permutation %d is outside 0 to %d", r.Model, r.Label, r.Permutation, count-1)
		}
		if byKey[k] == nil {
			byKey[k], seen[k] = make([]float64, count), make([]bool, count)
		}
		if seen[k][r.Permutation] {
			return fmt.Errorf("model %q, label %q: permutation %d appears twice", r.Model, r.Label, r.Permutation)
		}
		byKey[k][r.Permutation], seen[k][r.Permutation] = r.AUCWithin, true
		tested[r.Model] = true
	}
	for i := range groups {
		g := &groups[i]
		if !tested[g.Model] {
			continue
		}
		k := key{g.Model, g.Label}
		for p := range count {
			if seen[k] == nil || !seen[k][p] {
				return fmt.Errorf("model %q, label %q: no AUC for permutation %d", g.Model, g.Label, p)
			}
		}
		g.NullAUC = byKey[k]
		g.PAUC = PermutationPValue(g.Pooled.AUCWithin, g.NullAUC, false)
	}
	return nil
}

// classNullColumns are the columns of WriteClassNulls.
func classNullColumns() []string {
	return []string{"model", "label", "permutation", string(MetricAUCWithin)}
}

// WriteClassNulls writes rows as CSV with the header
// model,label,permutation,auc_within (permutation from 0, the AUC within
// folds in the shortest form that reads back to the same float64, NaN
// when undefined).
func WriteClassNulls(out io.Writer, rows []ClassNull) error {
	w := csv.NewWriter(out)
	w.Write(classNullColumns())
	for _, r := range rows {
		w.Write([]string{r.Model, r.Label, strconv.Itoa(r.Permutation), strconv.FormatFloat(r.AUCWithin, 'g', -1, 64)})
	}
	w.Flush()
	return w.Error()
}

// ReadClassNulls reads what WriteClassNulls wrote. A bad cell is a
// *data.FileError naming name, the line and the column.
func ReadClassNulls(r io.Reader, name string) ([]ClassNull, error) {
	cr := csv.NewReader(r)
	want := classNullColumns()
	if err := readExactHeader(cr, name, want); err != nil {
		return nil, err
	}
	var rows []ClassNull
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if err == io.EOF {
			return rows, nil
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		k, err := strconv.Atoi(rec[2])
		if err != nil || k < 0 {
			return nil, &data.FileError{Path: name, Line: line, Column: 3, ColumnName: want[2], Err: fmt.Errorf("want a whole number ≥ 0, found %q", rec[2])}
		}
		auc, err := strconv.ParseFloat(rec[3], 64)
		if err != nil {
			return nil, &data.FileError{Path: name, Line: line, Column: 4, ColumnName: want[3], Err: fmt.Errorf("want a number or NaN, found %q", rec[3])}
		}
		rows = append(rows, ClassNull{Model: rec[0], Label: rec[1], Permutation: k, AUCWithin: auc})
	}
}

// classScoresJSON is the JSON form of ClassScores, with n when set.
func classScoresJSON(o *jsonObject, n int, s ClassScores) {
	if n >= 0 {
		o.add("n", n)
	}
	for _, m := range ClassMetrics() {
		o.add(string(m), jsonFloat(s.Get(m)))
	}
}

func classScoresFrom(raw map[string]json.RawMessage) (ClassScores, int, error) {
	s := nanClassScores()
	n := 0
	if v, ok := raw["n"]; ok {
		if err := json.Unmarshal(v, &n); err != nil {
			return s, 0, fmt.Errorf("n: %w", err)
		}
	}
	for _, m := range ClassMetrics() {
		if v, ok := raw[string(m)]; ok {
			var f jsonFloat
			if err := json.Unmarshal(v, &f); err != nil {
				return s, 0, fmt.Errorf("%s: %w", m, err)
			}
			s.set(m, float64(f))
		}
	}
	return s, n, nil
}

type classObject struct{ ClassScores }

func (c classObject) MarshalJSON() ([]byte, error) {
	var o jsonObject
	classScoresJSON(&o, -1, c.ClassScores)
	return o.bytes()
}

func (c *classObject) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	s, _, err := classScoresFrom(raw)
	c.ClassScores = s
	return err
}

type classFoldJSON ClassFold

func (f classFoldJSON) MarshalJSON() ([]byte, error) {
	var o jsonObject
	o.add("repeat", f.Repeat+1)
	o.add("fold", f.Fold+1)
	classScoresJSON(&o, f.N, f.ClassScores)
	return o.bytes()
}

func (f *classFoldJSON) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	var pos struct{ Repeat, Fold int }
	if err := json.Unmarshal(b, &pos); err != nil {
		return err
	}
	s, n, err := classScoresFrom(raw)
	*f = classFoldJSON{Repeat: pos.Repeat - 1, Fold: pos.Fold - 1, N: n, ClassScores: s}
	return err
}

type pooledClassJSON struct {
	N int
	ClassScores
}

func (p pooledClassJSON) MarshalJSON() ([]byte, error) {
	var o jsonObject
	classScoresJSON(&o, p.N, p.ClassScores)
	return o.bytes()
}

func (p *pooledClassJSON) UnmarshalJSON(b []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		return err
	}
	s, n, err := classScoresFrom(raw)
	*p = pooledClassJSON{N: n, ClassScores: s}
	return err
}

type intervalJSON struct {
	Estimate  jsonFloat `json:"estimate"`
	Lower     jsonFloat `json:"lower"`
	Upper     jsonFloat `json:"upper"`
	Level     float64   `json:"level"`
	Resamples int       `json:"resamples"`
	Undefined int       `json:"undefined"`
}

type ttestJSON struct {
	J        int       `json:"folds"`
	MeanDiff jsonFloat `json:"mean_diff"`
	T        jsonFloat `json:"t"`
	DF       float64   `json:"df"`
	P        jsonFloat `json:"p"`
}

// classGroupJSON is the JSON form of a ClassGroup (see Summary).
type classGroupJSON struct {
	Model         string                       `json:"model"`
	Label         string                       `json:"label"`
	Classes       []string                     `json:"classes"`
	Threshold     float64                      `json:"threshold"`
	Pooled        pooledClassJSON              `json:"pooled"`
	Intervals     map[ClassMetric]intervalJSON `json:"intervals,omitempty"`
	Folds         []classFoldJSON              `json:"folds,omitempty"`
	FoldMean      *classObject                 `json:"fold_mean,omitempty"`
	FoldSD        *classObject                 `json:"fold_sd,omitempty"`
	PAUC          *jsonFloat                   `json:"permutation_p_auc_within,omitempty"`
	Reference     string                       `json:"reference,omitempty"`
	IsReference   bool                         `json:"is_reference,omitempty"`
	DiffAUC       *ttestJSON                   `json:"diff_auc,omitempty"`
	RepeatedFolds int                          `json:"repeated_folds,omitempty"`
}

func (g ClassGroup) toJSON() classGroupJSON {
	out := classGroupJSON{Model: g.Model, Label: g.Label, Classes: g.Classes, Threshold: g.Threshold,
		Pooled: pooledClassJSON{N: g.N, ClassScores: g.Pooled}, Reference: g.Reference, IsReference: g.IsReference,
		RepeatedFolds: g.RepeatedFolds}
	if g.Intervals != nil {
		out.Intervals = make(map[ClassMetric]intervalJSON)
		for m, iv := range g.Intervals {
			out.Intervals[m] = intervalJSON{jsonFloat(iv.Estimate), jsonFloat(iv.Lower), jsonFloat(iv.Upper), iv.Level, iv.Resamples, iv.Undefined}
		}
	}
	for _, f := range g.Folds {
		out.Folds = append(out.Folds, classFoldJSON(f))
	}
	if len(g.Folds) > 0 {
		out.FoldMean, out.FoldSD = &classObject{g.FoldMean}, &classObject{g.FoldSD}
	}
	if g.NullAUC != nil || !math.IsNaN(g.PAUC) {
		p := jsonFloat(g.PAUC)
		out.PAUC = &p
	}
	if g.Reference != "" {
		d := g.DiffAUC
		out.DiffAUC = &ttestJSON{d.J, jsonFloat(d.MeanDiff), jsonFloat(d.T), d.DF, jsonFloat(d.P)}
	}
	return out
}

func (in classGroupJSON) group() ClassGroup {
	g := ClassGroup{Model: in.Model, Label: in.Label, Classes: in.Classes, Threshold: in.Threshold, N: in.Pooled.N,
		Pooled: in.Pooled.ClassScores, PAUC: math.NaN(), Reference: in.Reference, IsReference: in.IsReference,
		RepeatedFolds: in.RepeatedFolds}
	if in.Intervals != nil {
		g.Intervals = make(map[ClassMetric]Interval)
		for m, iv := range in.Intervals {
			g.Intervals[m] = Interval{Estimate: float64(iv.Estimate), Lower: float64(iv.Lower), Upper: float64(iv.Upper),
				Level: iv.Level, Resamples: iv.Resamples, Undefined: iv.Undefined}
		}
	}
	for _, f := range in.Folds {
		g.Folds = append(g.Folds, ClassFold(f))
	}
	g.FoldMean, g.FoldSD = nanClassScores(), nanClassScores()
	if in.FoldMean != nil {
		g.FoldMean = in.FoldMean.ClassScores
	}
	if in.FoldSD != nil {
		g.FoldSD = in.FoldSD.ClassScores
	}
	if in.PAUC != nil {
		g.PAUC = float64(*in.PAUC)
	}
	if d := in.DiffAUC; d != nil {
		g.DiffAUC = TTest{J: d.J, MeanDiff: float64(d.MeanDiff), T: float64(d.T), DF: d.DF, P: float64(d.P)}
	}
	return g
}

// writeLabelsMarkdown writes, for each label of groups in order of first
// appearance, a table with one row per model: n, folds, each metric as
// mean ± SD over folds [pooled] (pooled AUC alone: its fold values are
// those of AUC within folds), the bootstrap interval of AUC within folds,
// its permutation p-value and the difference of fold AUC from the
// reference baseline with the corrected t-test's p; then a legend.
func writeLabelsMarkdown(b *strings.Builder, groups []ClassGroup) {
	var labels []string
	for _, g := range groups {
		if !slices.Contains(labels, g.Label) {
			labels = append(labels, g.Label)
		}
	}
	for _, l := range labels {
		var first *ClassGroup
		for i := range groups {
			if groups[i].Label == l {
				first = &groups[i]
				break
			}
		}
		fmt.Fprintf(b, "\n### %s (class label)\n\n", EscapeMarkdown(l))
		if len(first.Classes) == 2 {
			fmt.Fprintf(b, "Classes %s (negative) and %s (positive); threshold %g on the probability of %s.\n\n",
				EscapeMarkdown(first.Classes[0]), EscapeMarkdown(first.Classes[1]), first.Threshold, EscapeMarkdown(first.Classes[1]))
		} else {
			fmt.Fprintf(b, "Classes %s; the predicted class is the most probable.\n\n", EscapeMarkdown(strings.Join(first.Classes, ", ")))
		}
		b.WriteString("| model | n | folds |")
		for _, m := range ClassMetrics() {
			fmt.Fprintf(b, " %s |", m.Label())
		}
		b.WriteString(" AUC within folds 95% CI | p (AUC within folds) | Δ AUC vs reference |\n| --- | ---: | ---: |")
		for range ClassMetrics() {
			b.WriteString(" ---: |")
		}
		b.WriteString(" ---: | ---: | ---: |\n")
		for _, g := range groups {
			if g.Label != l {
				continue
			}
			fmt.Fprintf(b, "| %s | %d | %d |", EscapeMarkdown(g.Model), g.N, len(g.Folds))
			for _, m := range ClassMetrics() {
				fmt.Fprintf(b, " %s |", g.cell(m))
			}
			ci := "–"
			if iv, ok := g.Intervals[MetricAUCWithin]; ok && !math.IsNaN(iv.Lower) {
				ci = fmt.Sprintf("%s to %s", formatNumber(iv.Lower), formatNumber(iv.Upper))
			}
			diff := "–"
			switch {
			case g.IsReference:
				diff = "reference"
			case g.Reference != "":
				diff = fmt.Sprintf("%+.3f (p %s)", g.DiffAUC.MeanDiff, formatNumber(g.DiffAUC.P))
			}
			fmt.Fprintf(b, " %s | %s | %s |\n", ci, formatNumber(g.PAUC), diff)
		}
	}
	b.WriteString("\nClass labels: each cell is the mean ± SD over test folds, then in brackets the value pooled over " +
		"all test predictions (a participant once per repeat); n counts them. The headline AUC is AUC within folds: " +
		"over the pairs of a positive and a negative participant in the same test fold, so that every pair is ranked " +
		"by one trained model (the fold AUCs weighted by their numbers of pairs). Pooled AUC ranks all test " +
		"predictions of all folds together and is biased low when the folds are not stratified on the label, since " +
		"each fold's probabilities carry its training fold's class frequencies; it is shown alone, its fold values " +
		"being those of AUC within folds. AUC is one-vs-rest (macro average) for more than two classes, where " +
		"sensitivity and specificity are undefined (–). The chance level of AUC and balanced accuracy is 0.5 (1/K " +
		"for K classes); the majority-class predictor gives the chance level of AUC within folds, log loss and " +
		"Brier. The 95% interval is a percentile bootstrap over participants; p (AUC within folds) is the " +
		"permutation p-value; Δ AUC is the mean difference of fold AUC from the reference baseline, with the " +
		"corrected resampled t-test (Nadeau & Bengio 2003). Confounds (cv.confounds) are regressed out of the " +
		"scores only, never out of a class label.\n")
}

// cell formats metric m of g as mean ± SD [pooled], the pooled value alone
// without folds and for MetricAUC (whose fold values are those of
// MetricAUCWithin).
func (g *ClassGroup) cell(m ClassMetric) string {
	pooled := formatNumber(g.Pooled.Get(m))
	if len(g.Folds) == 0 || m == MetricAUC {
		return pooled
	}
	return fmt.Sprintf("%s ± %s [%s]", formatNumber(g.FoldMean.Get(m)), formatNumber(g.FoldSD.Get(m)), pooled)
}
