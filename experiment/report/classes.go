package report

import (
	"cmp"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
)

// classPredictionsFile is the file of class probabilities that a run with
// categorical targets (labels) writes: one row per participant × model ×
// label × repeat × class, with the columns of classColumns.
const classPredictionsFile = "class_predictions.csv"

// classColumns are the columns of class_predictions.csv. repeat and fold
// count from 1; observed and class are class names, observed empty for a
// participant whose label is missing.
var classColumns = []string{"participant_id", "model", "target", "repeat", "fold", "observed", "class", "probability"}

// A LabelTarget is a categorical target (a label such as a diagnosis) of
// a run, with its classes in the order of their indices: for two classes,
// Classes[1] is the positive class.
type LabelTarget struct {
	Name    string
	Classes []string
}

// A ClassPrediction is the class probabilities a model predicted for one
// participant's label in one repeat: the rows of class_predictions.csv of
// that participant, model, label and repeat.
type ClassPrediction struct {
	ParticipantID, Model, Target string
	// Repeat and Fold count from 0.
	Repeat, Fold int
	// Observed is the participant's class, an index into the label's
	// Classes; −1 when the label is missing.
	Observed int
	// Proba holds the probability of each class, in the label's order.
	Proba []float64
}

// Threshold returns the probability of class 1 of a binary label at or
// above which a participant is predicted class 1: the [cv] threshold of
// the run's resolved experiment (train.CV.Threshold, whose default
// ParseExperiment fills).
func (r *Run) Threshold() float64 { return *r.Experiment.CV.Threshold }

// readClassPredictions reads the run's class_predictions.csv into
// r.ClassRows and r.Labels, the labels in the order of the experiment's
// [cohort] labels (data.Source.Labels); a run without the file has no
// labels.
func (r *Run) readClassPredictions() error {
	order := r.Experiment.Cohort.Labels
	raw, ok, err := optional(r.Dir, classPredictionsFile)
	if err != nil || !ok {
		return err
	}
	r.ClassRows, r.Labels, err = parseClassPredictions(raw, filepath.Join(r.Dir, classPredictionsFile))
	if err != nil {
		return err
	}
	rank := func(label string) int {
		if i := slices.Index(order, label); i >= 0 {
			return i
		}
		return len(order)
	}
	slices.SortStableFunc(r.Labels, func(a, b LabelTarget) int {
		return cmp.Or(cmp.Compare(rank(a.Name), rank(b.Name)), cmp.Compare(a.Name, b.Name))
	})
	slices.SortStableFunc(r.ClassRows, func(a, b ClassPrediction) int { return r.compareUnits(a.Model, "", b.Model, "") })
	return nil
}

// parseClassPredictions reads class_predictions.csv: the rows of one
// participant, model, label and repeat form one ClassPrediction, their
// classes in index order. Every prediction of a label must list the same
// classes in the same order, and its observed class must be one of them
// (or empty). The labels are returned in the order they first appear.
func parseClassPredictions(raw []byte, name string) ([]ClassPrediction, []LabelTarget, error) {
	t, err := readCSV(raw, name, classColumns...)
	if err != nil {
		return nil, nil, err
	}
	type key struct {
		id, model, target string
		repeat            int
	}
	type group struct {
		key
		fold, firstRow int
		observed       string
		classes        []string
		proba          []float64
	}
	var groups []*group
	index := make(map[key]*group)
	for i := range t.rows {
		repeat, err := t.number(i, "repeat")
		if err != nil {
			return nil, nil, err
		}
		fold, err := t.number(i, "fold")
		if err != nil {
			return nil, nil, err
		}
		p, err := t.float(i, "probability", false)
		if err != nil {
			return nil, nil, err
		}
		if !math.IsNaN(p) && (p < 0 || p > 1) {
			return nil, nil, t.cellError(i, "probability", "a probability between 0 and 1")
		}
		k := key{t.str(i, "participant_id"), t.str(i, "model"), t.str(i, "target"), repeat}
		if k.id == "" {
			return nil, nil, t.cellError(i, "participant_id", "a participant id")
		}
		g := index[k]
		if g == nil {
			g = &group{key: k, fold: fold, firstRow: i, observed: t.str(i, "observed")}
			index[k] = g
			groups = append(groups, g)
		}
		if fold != g.fold {
			return nil, nil, t.cellError(i, "fold", fmt.Sprintf("fold %d, as on line %d for the same participant, model, target and repeat", g.fold+1, g.firstRow+2))
		}
		if obs := t.str(i, "observed"); obs != g.observed {
			return nil, nil, t.cellError(i, "observed", fmt.Sprintf("%q, as on line %d for the same participant, model, target and repeat", g.observed, g.firstRow+2))
		}
		class := t.str(i, "class")
		if class == "" || slices.Contains(g.classes, class) {
			return nil, nil, t.cellError(i, "class", "a class name not yet listed for this participant, model, target and repeat")
		}
		g.classes = append(g.classes, class)
		g.proba = append(g.proba, p)
	}

	var labels []LabelTarget
	classesOf := make(map[string][]string)
	rows := make([]ClassPrediction, 0, len(groups))
	for _, g := range groups {
		classes, ok := classesOf[g.target]
		if !ok {
			if len(g.classes) < 2 {
				return nil, nil, &data.FileError{Path: name, Line: g.firstRow + 2,
					Err: fmt.Errorf("target %q has the single class %q, want the probabilities of at least 2 classes", g.target, g.classes[0])}
			}
			classes = g.classes
			classesOf[g.target] = classes
			labels = append(labels, LabelTarget{Name: g.target, Classes: classes})
		}
		if !slices.Equal(g.classes, classes) {
			return nil, nil, &data.FileError{Path: name, Line: g.firstRow + 2,
				Err: fmt.Errorf("participant %q, model %q, target %q, repeat %d lists the classes %s, want %s as the target's first rows",
					g.id, g.model, g.target, g.repeat+1, strings.Join(g.classes, ","), strings.Join(classes, ","))}
		}
		observed := -1
		if g.observed != "" {
			if observed = slices.Index(classes, g.observed); observed < 0 {
				return nil, nil, &data.FileError{Path: name, Line: g.firstRow + 2, ColumnName: "observed", Column: t.header["observed"] + 1,
					Err: fmt.Errorf("observed class %q is not a class of target %q (%s)", g.observed, g.target, strings.Join(classes, ", "))}
			}
		}
		rows = append(rows, ClassPrediction{ParticipantID: g.id, Model: g.model, Target: g.target,
			Repeat: g.repeat, Fold: g.fold, Observed: observed, Proba: g.proba})
	}
	return rows, labels, nil
}

// labelPredictions returns, for label target, the models with predictions
// in report order and each model's predictions.
func (r *Run) labelPredictions(target string) (models []string, byModel map[string][]ClassPrediction) {
	byModel = make(map[string][]ClassPrediction)
	for _, c := range r.ClassRows {
		if c.Target != target {
			continue
		}
		if _, ok := byModel[c.Model]; !ok {
			models = append(models, c.Model)
		}
		byModel[c.Model] = append(byModel[c.Model], c)
	}
	return models, byModel
}

// classArrays returns the observed classes and the n × K probabilities of
// rows of one label of K classes, nil when rows is empty.
func classArrays(rows []ClassPrediction, k int) ([]int, *mat.Dense) {
	if len(rows) == 0 {
		return nil, nil
	}
	labels := make([]int, len(rows))
	proba := mat.NewDense(len(rows), k, nil)
	for i, c := range rows {
		labels[i] = c.Observed
		proba.SetRow(i, c.Proba)
	}
	return labels, proba
}

// A ConfusionTable is the confusion matrix of one model's test predictions
// of one label, pooled over folds and repeats.
type ConfusionTable struct {
	Model  string
	Target LabelTarget
	// Counts[k][j] counts the test predictions of participants of class k
	// that predicted class j; a participant counts once per repeat.
	Counts [][]int
	// Repeats is the number of repeats pooled.
	Repeats int
	// Threshold is the probability of class 1 at or above which a
	// participant is predicted class 1; NaN for more than two classes,
	// which are predicted by the highest probability.
	Threshold float64
}

// ConfusionTables returns, for every label of the run (in the order of the
// experiment's labels) and every model (in report order), the confusion
// matrix of its pooled test predictions at the run's threshold
// (eval.PredictedClasses, eval.Confusion). Participants whose label is
// missing are left out.
func (r *Run) ConfusionTables() []ConfusionTable {
	var out []ConfusionTable
	for _, lt := range r.Labels {
		models, byModel := r.labelPredictions(lt.Name)
		for _, m := range models {
			rows := byModel[m]
			labels, proba := classArrays(rows, len(lt.Classes))
			repeats := make(map[int]bool)
			for _, c := range rows {
				repeats[c.Repeat] = true
			}
			tab := ConfusionTable{Model: m, Target: lt, Repeats: len(repeats), Threshold: math.NaN(),
				Counts: eval.Confusion(labels, eval.PredictedClasses(proba, r.Threshold()), len(lt.Classes))}
			if len(lt.Classes) == 2 {
				tab.Threshold = r.Threshold()
			}
			out = append(out, tab)
		}
	}
	return out
}

// RowTotal returns the number of predictions of participants of class k.
func (t ConfusionTable) RowTotal(k int) int {
	var n int
	for _, c := range t.Counts[k] {
		n += c
	}
	return n
}

// RowPercent returns the percentage of the predictions of class k that
// predicted class j, NaN when class k has none.
func (t ConfusionTable) RowPercent(k, j int) float64 {
	n := t.RowTotal(k)
	if n == 0 {
		return math.NaN()
	}
	return 100 * float64(t.Counts[k][j]) / float64(n)
}

// Recalls returns the fraction of each class's predictions that are
// correct (the diagonal's row fractions): for two classes, specificity and
// sensitivity; NaN for a class without predictions.
func (t ConfusionTable) Recalls() []float64 {
	out := make([]float64, len(t.Counts))
	for k := range t.Counts {
		out[k] = t.RowPercent(k, k) / 100
	}
	return out
}
