package train

import (
	"context"
	"errors"
	"fmt"
	"hash/fnv"
	"log/slog"
	"math"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/model"
)

// Unit identifies one model trained on one fold of one repeat: the
// smallest piece of a run, independent of every other.
type Unit struct {
	Model  int // index into Design.Models
	Split  int // index into the run's splits
	Repeat int
	Fold   int
}

// EventKind says what an Event reports.
type EventKind int

// The kinds of Event.
const (
	UnitStarted EventKind = iota
	EpochDone
	UnitFinished
	// PermutationDone reports one permutation of one model finished by
	// RunPermutations; Finished and Total then count (model,
	// permutation) pairs, and Elapsed is the time since RunPermutations
	// started.
	PermutationDone
)

// Event reports progress of a run to a display or a log.
type Event struct {
	Kind  EventKind
	Model string
	Unit  Unit
	// Epoch is set for EpochDone.
	Epoch model.Epoch
	// Finished and Total count units of the whole run (permutations for
	// PermutationDone).
	Finished, Total int
	// Elapsed is the time since the run started.
	Elapsed time.Duration
	// Resumed is set on UnitFinished when the unit was read from its
	// checkpoint instead of trained.
	Resumed bool
}

// Result is what a run produces.
type Result struct {
	Splits []Split
	// Predictions are ordered by model (experiment order), repeat, fold,
	// participant (cohort order) and target (cohort order).
	Predictions []model.Prediction
	// ClassPredictions are the class probabilities of every model fitted
	// to the cohort's labels (model.Kind.NewClassifier), ordered as
	// Predictions: by model, repeat, fold, participant and label (cohort
	// order). A participant whose label is missing has none for it.
	ClassPredictions []model.ClassPrediction
	// Histories holds, per unit of an iteratively trained model, its
	// epochs.
	Histories map[Unit][]model.Epoch
	// Importance holds, per unit of a model.Interpreter, one p × p edge
	// importance map per target, computed on the unit's test fold.
	Importance map[Unit][]*mat.Dense
	// LabelImportance holds, per unit of a model whose classifiers are
	// model.ClassInterpreters, their edge importance maps on the unit's
	// test participants whose label is known: label by label (cohort
	// order), then as each classifier gives them, view after view and
	// decision value after decision value. A label whose test
	// participants are too few for the importance measure has none.
	LabelImportance map[Unit][]LabelMap
	// Choices holds, per unit of a model.Tuned, the settings the model
	// chose on its training fold from grids: one list per target (cohort
	// order), as model.Tuned.Choices returns them.
	Choices map[Unit][][]model.Choice
	// InnerLoss holds, per unit of a baseline (a model that is not a
	// network), the baseline's error on the fold's inner validation part,
	// by which a run may choose the reference of its comparison without
	// looking at the test folds. A fresh instance of the model, seeded as
	// the unit's, is fitted on the training part without the inner
	// validation part; InnerLoss[u][t] is its mean squared error
	//
	//	(1/nₜ) Σᵢ (ŷᵢₜ − zᵢₜ)²
	//
	// over the nₜ validation participants i with a score zᵢₜ for target
	// t, in standardized score units (the units the models learn), and
	// NaN when nₜ = 0. It is only computed when Design.InnerLoss is set
	// (the experiment names no comparison.reference that learns scores
	// and has at least two baselines that do), and only for folds with an
	// inner validation part (cv.inner_validation > 0).
	InnerLoss map[Unit][]float64
	// LabelLoss holds, per unit of a baseline fitted to the labels, as
	// InnerLoss does for the scores, the mean log loss on the fold's inner
	// validation part for the label (stratified by its classes,
	// InnerValidationByClass) of a fresh classifier fitted without it, per
	// label (cohort order):
	//
	//	−(1/n) Σᵢ log max(pᵢ,yᵢ, 10⁻¹⁵)
	//
	// over the n validation participants i with a class yᵢ; NaN when
	// n = 0. It is recorded when Design.LabelLoss is set.
	LabelLoss map[Unit][]float64
	// Units lists every unit of the run in order.
	Units []Unit
}

// Runner cross-validates every model of an experiment on a cohort. All
// models see the same splits, inner validation parts and target
// preparation, so their results are paired.
type Runner struct {
	Design *Design
	Cohort *data.Cohort
	// Jobs is how many units run at once; 0 means the number of CPUs.
	// Results do not depend on it.
	Jobs int
	// Logger receives structured log records; nil discards them.
	Logger *slog.Logger
	// OnEvent, when set, is called for every Event, never concurrently.
	OnEvent func(Event)
	// Checkpoints, when set, keeps one file per finished unit in this
	// folder; a unit whose checkpoint exists is read instead of retrained,
	// which is how an interrupted run resumes.
	Checkpoints *Checkpoints
	// Models, when set, is the folder where every fold's trained model is
	// saved (when the experiment asks for it and the model is a
	// model.Saver), as Models/NAME/rR-fF/, with its classifiers of class
	// labels in labels/LABEL/ below it (see Fitted).
	Models string

	newModel func(cfg ModelConfig, p, targets int, seed int64) (model.Regressor, error)
	// newClassifier, when set, builds every model's classifiers instead
	// of its kind's NewClassifier (tests), and makes every model learn
	// the labels.
	newClassifier func(cfg ModelConfig, p, classes int, seed int64) (model.Classifier, error)
	splits        []Split // when set, used instead of the experiment's folds
	// scoresOnly leaves out what only the report of a full run
	// needs: edge importance, grid choices and inner validation errors
	// (permuted and sample-size runs need none).
	scoresOnly bool
	// prepBlocks, when above 1, is the number of blocks of a permuted
	// cohort's scores and confounds (FitTargetPrepBlocks).
	prepBlocks int

	// Select, when not nil, restricts the run to these units: indices
	// into the list Units returns. The Result then holds only theirs.
	// This is how one unit of a batch job runs.
	Select []int
	// FromCheckpoints never trains: every unit must already be in
	// Checkpoints, and a missing one is a *MissingUnitsError. This is how
	// the units of a batch job are merged.
	FromCheckpoints bool
}

// MissingUnitsError lists the units FromCheckpoints did not find.
type MissingUnitsError struct {
	Units []int // indices into the list Units returns
	Names []string
}

func (e *MissingUnitsError) Error() string {
	return fmt.Sprintf("%d units have no checkpoint: %s", len(e.Units), strings.Join(e.Names, ", "))
}

// Units returns every unit of the run, in the order Run trains them and
// Select indexes them: model by model, then split by split.
func (r *Runner) Units() ([]Unit, error) {
	splits, err := r.planSplits()
	if err != nil {
		return nil, err
	}
	return unitsOf(len(r.Design.Models), splits), nil
}

func unitsOf(models int, splits []Split) []Unit {
	var units []Unit
	for m := 0; m < models; m++ {
		for s, split := range splits {
			units = append(units, Unit{Model: m, Split: s, Repeat: split.Repeat, Fold: split.Fold})
		}
	}
	return units
}

// planSplits returns the run's splits.
func (r *Runner) planSplits() ([]Split, error) {
	if r.splits != nil {
		return r.splits, nil
	}
	exp := r.Design
	if err := exp.CV.checkAgainst(r.Cohort); err != nil {
		return nil, err
	}
	return exp.CV.folds(exp.Seed, r.Cohort).Splits(len(r.Cohort.Participants))
}

// Run trains and tests every unit and returns the predictions. A failing
// unit stops the run; its error names the model, repeat and fold. When ctx
// is cancelled, finished units are kept in the checkpoints and Run returns
// an error wrapping ctx.Err().
func (r *Runner) Run(ctx context.Context) (*Result, error) {
	exp, cohort := withSiteConfound(r.Design, r.Cohort)
	logger := r.Logger
	if logger == nil {
		logger = slog.New(slog.DiscardHandler)
	}
	newModel := r.newModel
	if newModel == nil {
		newModel = buildModel
	}
	splits, err := r.planSplits()
	if err != nil {
		return nil, err
	}
	if _, _, err = scoresAndConfounds(exp.CV, cohort); err != nil {
		return nil, err
	}
	for _, cfg := range exp.Models {
		if _, _, err := r.learns(cfg); err != nil {
			return nil, err
		}
	}

	res := &Result{Splits: splits, Histories: make(map[Unit][]model.Epoch), Importance: make(map[Unit][]*mat.Dense), LabelImportance: make(map[Unit][]LabelMap),
		Choices: make(map[Unit][][]model.Choice), InnerLoss: make(map[Unit][]float64), LabelLoss: make(map[Unit][]float64)}
	all := unitsOf(len(exp.Models), splits)
	res.Units = all
	if r.Select != nil {
		res.Units = nil
		for _, u := range r.Select {
			if u < 0 || u >= len(all) {
				return nil, fmt.Errorf("unit %d: the run has units 0 to %d", u, len(all)-1)
			}
			res.Units = append(res.Units, all[u])
		}
	}
	if r.FromCheckpoints {
		if err := r.checkCheckpoints(all, res.Units); err != nil {
			return nil, err
		}
	}
	// Each split's preparation is made when its first unit starts and
	// dropped when its last unit ends, so that a run holds the prepared
	// folds of the units in progress (their scores, a permutation test's
	// thousands of columns among them), not those of every split.
	if err := checkSplits(exp, cohort, splits, res.Units, max(1, r.prepBlocks)); err != nil {
		return nil, err
	}
	folds := make([]lazyFold, len(splits))
	for _, unit := range res.Units {
		folds[unit.Split].pending.Add(1)
	}
	jobs := r.Jobs
	if jobs <= 0 {
		jobs = runtime.NumCPU()
	}
	start := time.Now()
	outputs := make([]unitOutput, len(res.Units))
	var (
		mu       sync.Mutex // guards finished, firstErr and OnEvent calls
		finished int
		firstErr error
	)
	emit := func(e Event) {
		mu.Lock()
		defer mu.Unlock()
		if e.Kind == UnitFinished {
			finished++
		}
		if r.OnEvent != nil {
			e.Finished, e.Total, e.Elapsed = finished, len(res.Units), time.Since(start)
			r.OnEvent(e)
		}
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	work := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < jobs; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for u := range work {
				unit := res.Units[u]
				cfg := exp.Models[unit.Model]
				fd, err := folds[unit.Split].get(exp, cohort, splits[unit.Split], max(1, r.prepBlocks))
				if err != nil {
					mu.Lock()
					if firstErr == nil {
						firstErr = fmt.Errorf("repeat %d, fold %d: %w", unit.Repeat+1, unit.Fold+1, err)
						cancel()
					}
					mu.Unlock()
					continue
				}
				out, resumed, err := r.runUnit(ctx, unit, cfg, fd, newModel, emit)
				folds[unit.Split].done()
				if err != nil {
					mu.Lock()
					if firstErr == nil {
						firstErr = fmt.Errorf("model %q, repeat %d, fold %d: %w", cfg.Name, unit.Repeat+1, unit.Fold+1, err)
						cancel()
					}
					mu.Unlock()
					continue
				}
				outputs[u] = out
				logger.Info("unit finished", "model", cfg.Name, "repeat", unit.Repeat+1, "fold", unit.Fold+1, "resumed", resumed)
				emit(Event{Kind: UnitFinished, Model: cfg.Name, Unit: unit, Resumed: resumed})
			}
		}()
	}
	for u := range res.Units {
		if ctx.Err() != nil {
			break
		}
		work <- u
	}
	close(work)
	wg.Wait()
	if firstErr != nil {
		return nil, firstErr
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("run stopped after %d of %d units: %w", finished, len(res.Units), err)
	}
	for u, unit := range res.Units {
		res.Predictions = append(res.Predictions, outputs[u].predictions...)
		res.ClassPredictions = append(res.ClassPredictions, outputs[u].classes...)
		if outputs[u].history != nil {
			res.Histories[unit] = outputs[u].history
		}
		if outputs[u].importance != nil {
			res.Importance[unit] = outputs[u].importance
		}
		if outputs[u].labelImportance != nil {
			res.LabelImportance[unit] = outputs[u].labelImportance
		}
		if outputs[u].choices != nil {
			res.Choices[unit] = outputs[u].choices
		}
		if outputs[u].innerLoss != nil {
			res.InnerLoss[unit] = outputs[u].innerLoss
		}
		if outputs[u].labelLoss != nil {
			res.LabelLoss[unit] = outputs[u].labelLoss
		}
	}
	return res, nil
}

func (r *Runner) checkCheckpoints(all, units []Unit) error {
	if r.Checkpoints == nil {
		return errors.New("train: FromCheckpoints without Checkpoints")
	}
	missing := &MissingUnitsError{}
	for _, unit := range units {
		name := r.Design.Models[unit.Model].Name
		if !r.Checkpoints.has(name, unit) {
			missing.Units = append(missing.Units, slices.Index(all, unit))
			missing.Names = append(missing.Names, fmt.Sprintf("%s repeat %d fold %d", name, unit.Repeat+1, unit.Fold+1))
		}
	}
	if len(missing.Units) > 0 {
		return missing
	}
	return nil
}

// foldData is what every model of one split shares. Its participants are
// as the fold's preparation leaves them.
type foldData struct {
	split      Split
	prep       *Pipeline
	train      model.Dataset // training part minus inner validation
	valid      model.Dataset // inner validation part
	test       []*data.Participant
	testCohort *data.Cohort // test with the cohort's names, as the preparation maps predictions
	observed   *mat.Dense   // test scores as scored (Pipeline.Observed): score units, confounds removed
	innerSeed  uint64
	targetName []string
	labelName  []string   // the cohort's labels (data.Cohort.Labels)
	classes    [][]string // their classes (data.Cohort.Classes)
	// labelTrain and labelValid hold, per label, the training part and
	// the inner validation part of the fold as its classifiers learn
	// from them: the same participants as train and valid together, as
	// the preparation leaves them, split by InnerValidationByClass on the
	// label's classes. Both are nil without an inner validation part.
	labelTrain, labelValid [][]*data.Participant
	// edges is the per-edge standardization fitted on the fold's training
	// participants, for every modality some model of the run wants
	// standardized; nil when none does. scaler is the part of it a model
	// learns from, set in the foldData forModel returns.
	edges, scaler *EdgeScaler
}

// lazyFold is one split's foldData, prepared by the first of its units
// to ask for it (get) and dropped when the last has finished (done).
type lazyFold struct {
	once    sync.Once
	fd      *foldData
	err     error
	pending atomic.Int32 // units of the split not yet finished
}

// get returns the split's prepared fold, preparing it on the first call.
func (f *lazyFold) get(exp *Design, cohort *data.Cohort, split Split, blocks int) (*foldData, error) {
	f.once.Do(func() { f.fd, f.err = prepareFold(exp, cohort, split, blocks) })
	return f.fd, f.err
}

// done records that one unit of the split has finished with the fold; the
// last drops it.
func (f *lazyFold) done() {
	if f.pending.Add(-1) == 0 {
		f.fd = nil
	}
}

// newTargetPrep returns the unfitted preparation of the cohort's scores
// (confound regression and standardization) in blocks blocks, or nil for
// a cohort without scores.
func newTargetPrep(exp *Design, cohort *data.Cohort, blocks int) *TargetPrep {
	if len(cohort.Targets) == 0 {
		return nil
	}
	tp := &TargetPrep{Covariates: exp.CV.Confounds, Blocks: blocks}
	if slices.ContainsFunc(exp.CV.Confounds, func(name string) bool { return strings.HasPrefix(name, siteDummyPrefix) }) {
		tp.SiteLevels = slices.Sorted(slices.Values(uniq(siteLabels(cohort))))
	}
	return tp
}

// checkSplits runs, for the split of every unit, the parts of its
// preparation that are quick to check: its sites and the fit of its
// scores on the training participants. Folds are prepared only when their
// first unit starts (lazyFold), so without this a training fold whose
// scores cannot be fitted would stop the run after other units had
// trained.
func checkSplits(exp *Design, cohort *data.Cohort, splits []Split, units []Unit, blocks int) error {
	checked := make(map[int]bool)
	for _, u := range units {
		if checked[u.Split] {
			continue
		}
		checked[u.Split] = true
		split := splits[u.Split]
		err := checkFoldSites(exp.CV, cohort, split)
		if tp := newTargetPrep(exp, cohort, blocks); err == nil && tp != nil {
			err = tp.Fit(subCohort(cohort, split.Train))
		}
		if err != nil {
			return fmt.Errorf("repeat %d, fold %d: %w", split.Repeat+1, split.Fold+1, err)
		}
	}
	return nil
}

// prepareFold fits the fold's preparation on the training participants
// of split, in blocks blocks (FitTargetPrepBlocks), applies it to the
// training part, its inner validation part and the test fold, and
// gathers what every model of the split shares. Every step of the
// preparation is in the Pipeline made here.
//
// With cv.harmonize, the first step is a Harmonizer of every modality the
// cohort has, so that every model, baseline or network, learns from
// harmonised edges; a test-fold site that a fold-fitted site step cannot
// meet (checkFoldSites) is an error naming it.
func prepareFold(exp *Design, cohort *data.Cohort, split Split, blocks int) (*foldData, error) {
	if err := checkFoldSites(exp.CV, cohort, split); err != nil {
		return nil, err
	}
	prep := &Pipeline{}
	if h := exp.CV.Harmonize; h != nil {
		first := cohort.Participants[0]
		prep.Steps = append(prep.Steps, &Harmonizer{Functional: first.HasFunctional(), Structural: first.HasStructural(),
			Covariates: h.Preserve, Method: h.Method, Unseen: h.UnseenSite, SiteColumn: cohort.SiteColumn})
	}
	// The scores' preparation (confound regression, standardization) is
	// for the scores alone: labels are learnt as they are, and a cohort
	// with labels only has no such step.
	if tp := newTargetPrep(exp, cohort, blocks); tp != nil {
		prep.Steps = append(prep.Steps, tp)
	}
	if tangent := newTangentSpace(cohort.Series); tangent != nil {
		prep.Steps = append(prep.Steps, tangent)
	}
	if err := prep.Fit(subCohort(cohort, split.Train)); err != nil {
		return nil, err
	}
	seed := unitSeed(exp.Seed, "inner", split.Repeat, split.Fold)
	fitIdx, validIdx := InnerValidation(split.Train, Groups(cohort), exp.CV.innerCount(), exp.CV.innerFraction(), seed)
	fit, err := prep.Apply(subCohort(cohort, fitIdx))
	if err != nil {
		return nil, err
	}
	valid, err := prep.Apply(subCohort(cohort, validIdx))
	if err != nil {
		return nil, err
	}
	var edges *EdgeScaler
	if f, s := exp.edgeScaling(); f || s {
		edges = &EdgeScaler{Functional: f, Structural: s}
		if err := edges.Fit(preparedTrain(cohort, split.Train, fitIdx, fit, validIdx, valid)); err != nil {
			return nil, fmt.Errorf("%s: %w", edges.Name(), err)
		}
	}
	test, err := prep.Apply(subCohort(cohort, split.Test))
	if err != nil {
		return nil, err
	}
	var labelTrain, labelValid [][]*data.Participant
	if len(validIdx) > 0 && len(cohort.Labels) > 0 {
		labelTrain, labelValid = labelInnerSplits(exp.CV, cohort, split, preparedTrain(cohort, split.Train, fitIdx, fit, validIdx, valid), seed)
	}
	fd := &foldData{
		split:      split,
		prep:       prep,
		train:      model.Dataset{Participants: fit.Participants},
		valid:      model.Dataset{Participants: valid.Participants},
		test:       test.Participants,
		testCohort: test,
		innerSeed:  seed,
		targetName: cohort.Targets,
		labelName:  cohort.Labels,
		classes:    cohort.Classes,
		labelTrain: labelTrain,
		labelValid: labelValid,
		edges:      edges,
	}
	if len(cohort.Targets) == 0 {
		return fd, nil
	}
	if fd.train.Y, err = scoreMatrix(fit, len(cohort.Targets)); err != nil {
		return nil, err
	}
	if len(validIdx) > 0 {
		if fd.valid.Y, err = scoreMatrix(valid, len(cohort.Targets)); err != nil {
			return nil, err
		}
	}
	if len(split.Test) > 0 {
		if fd.observed, err = prep.Observed(subCohort(cohort, split.Test)); err != nil {
			return nil, err
		}
	}
	return fd, nil
}

// labelInnerSplits returns, per label of cohort, the training part and
// the inner validation part of split's training fold stratified by the
// label's classes (InnerValidationByClass, groups whole), as participants
// of prepared, the prepared training fold in the order of split.Train.
// The scores keep the split of InnerValidation, so that a run's scores do
// not depend on the labels beside them.
func labelInnerSplits(cv CV, cohort *data.Cohort, split Split, prepared *data.Cohort, seed uint64) (train, valid [][]*data.Participant) {
	at := make(map[int]*data.Participant, len(split.Train))
	for k, i := range split.Train {
		at[i] = prepared.Participants[k]
	}
	groups := Groups(cohort)
	classes := make([]int, len(cohort.Participants))
	for l := range cohort.Labels {
		for i, p := range cohort.Participants {
			classes[i] = p.Labels[l]
		}
		fitIdx, validIdx := InnerValidationByClass(split.Train, groups, classes, cv.innerCount(), cv.innerFraction(), seed)
		fit, val := make([]*data.Participant, len(fitIdx)), make([]*data.Participant, len(validIdx))
		for k, i := range fitIdx {
			fit[k] = at[i]
		}
		for k, i := range validIdx {
			val[k] = at[i]
		}
		train, valid = append(train, fit), append(valid, val)
	}
	return train, valid
}

// labelSets returns the training part and the inner validation part of
// the fold for the classifiers of label l, of K classes: the
// participants whose label is known, of labelTrain and labelValid, or of
// train and valid when the fold has no label splits.
func (fd *foldData) labelSets(l, K int) (train, valid model.LabelledSet) {
	if fd.labelTrain == nil {
		return labelled(fd.train.Participants, l, K), labelled(fd.valid.Participants, l, K)
	}
	return labelled(fd.labelTrain[l], l, K), labelled(fd.labelValid[l], l, K)
}

// edgeScaling returns the modalities some model of d learns from
// standardized per edge (model.Kind.EdgeScaling).
func (d *Design) edgeScaling() (functional, structural bool) {
	for _, cfg := range d.Models {
		f, s := cfg.edgeScaling()
		functional, structural = functional || f, structural || s
	}
	return functional, structural
}

// edgeScaling returns the modalities model m learns from standardized per
// edge: what its kind's EdgeScaling says of its settings.
func (m ModelConfig) edgeScaling() (functional, structural bool) {
	k, err := m.Spec()
	if err != nil || k.EdgeScaling == nil {
		return false, false
	}
	return k.EdgeScaling(m.Settings())
}

// forModel returns the fold as model cfg learns from it: fd itself, or,
// when cfg standardizes edges (model.Kind.EdgeScaling), a copy whose
// training, validation and test participants are standardized by the
// fold's EdgeScaler (restricted to cfg's modalities) and whose Pipeline,
// saved with the model, is the fold's steps followed by that scaler. Every
// model of a fold thus shares the target steps, and a model's own input
// steps come after them.
func (fd *foldData) forModel(cfg ModelConfig) (*foldData, error) {
	if fd.edges == nil {
		return fd, nil
	}
	sc := fd.edges.only(cfg.edgeScaling())
	if sc == nil {
		return fd, nil
	}
	out := *fd
	out.scaler = sc
	out.prep = &Pipeline{Steps: append(slices.Clone(fd.prep.Steps), sc)}
	scale := func(ps []*data.Participant) ([]*data.Participant, error) {
		c, err := sc.Apply(&data.Cohort{Participants: ps})
		if err != nil {
			return nil, fmt.Errorf("%s: %w", sc.Name(), err)
		}
		return c.Participants, nil
	}
	var err error
	if out.train.Participants, err = scale(fd.train.Participants); err != nil {
		return nil, err
	}
	if out.valid.Participants, err = scale(fd.valid.Participants); err != nil {
		return nil, err
	}
	if out.testCohort, err = sc.Apply(fd.testCohort); err != nil {
		return nil, fmt.Errorf("%s: %w", sc.Name(), err)
	}
	out.test = out.testCohort.Participants
	if fd.labelTrain != nil {
		// The label splits hold the participants of train and valid:
		// give them their scaled copies.
		scaled := make(map[*data.Participant]*data.Participant, fd.train.Len()+fd.valid.Len())
		for _, pair := range [][2][]*data.Participant{{fd.train.Participants, out.train.Participants}, {fd.valid.Participants, out.valid.Participants}} {
			for k, p := range pair[0] {
				scaled[p] = pair[1][k]
			}
		}
		swap := func(ps []*data.Participant) []*data.Participant {
			moved := make([]*data.Participant, len(ps))
			for k, p := range ps {
				moved[k] = scaled[p]
			}
			return moved
		}
		out.labelTrain, out.labelValid = nil, nil
		for l := range fd.labelTrain {
			out.labelTrain = append(out.labelTrain, swap(fd.labelTrain[l]))
			out.labelValid = append(out.labelValid, swap(fd.labelValid[l]))
		}
	}
	return &out, nil
}

// edgeImportance returns in's edge importance on the fold's test
// participants. For a model that learns from standardized edges it is
// measured from the standardized zero matrix (EdgeScaler.Reference), so
// that it is gradient × input of the raw matrices, as for every other
// model (model.ReferenceInterpreter).
func (fd *foldData) edgeImportance(in model.Interpreter) ([]*mat.Dense, error) {
	if fd.scaler == nil {
		return in.EdgeImportance(fd.test)
	}
	ri, ok := in.(model.ReferenceInterpreter)
	if !ok {
		return nil, fmt.Errorf("%T learns from standardized edges but is not a model.ReferenceInterpreter", in)
	}
	ref, err := fd.scaler.Reference(fd.testCohort)
	if err != nil {
		return nil, err
	}
	return ri.EdgeImportanceFrom(fd.test, ref.Participants)
}

type unitOutput struct {
	predictions []model.Prediction
	classes     []model.ClassPrediction
	history     []model.Epoch
	importance  []*mat.Dense
	choices     [][]model.Choice
	innerLoss   []float64
	// labelLoss holds a baseline's inner validation log loss per label
	// (Result.LabelLoss).
	labelLoss []float64
	// labelImportance holds the classifiers' edge importance maps
	// (Result.LabelImportance).
	labelImportance []LabelMap
	// regressor and classifiers (one per label) are the unit's fitted
	// models, kept until runUnit saves them; never checkpointed.
	regressor   model.Regressor
	classifiers []model.Classifier
}

// learns reports whether model cfg is fitted to the cohort's scores (its
// kind has New and the cohort has targets) and to its labels (its kind
// has NewClassifier and the cohort has labels). A model that learns
// neither is an error naming it and what its kind can learn.
func (r *Runner) learns(cfg ModelConfig) (scores, labels bool, err error) {
	k, err := cfg.Spec()
	if err != nil {
		return false, false, fmt.Errorf("model %q: %w", cfg.Name, err)
	}
	scores = (k.New != nil || r.newModel != nil) && len(r.Cohort.Targets) > 0
	labels = (k.NewClassifier != nil || r.newClassifier != nil) && len(r.Cohort.Labels) > 0
	if scores || labels {
		return scores, labels, nil
	}
	return false, false, fmt.Errorf("model %q: %w", cfg.Name, cannotLearn(k, r.Cohort))
}

// cannotLearn explains why a model of kind k learns nothing of cohort c.
func cannotLearn(k model.Kind, c *data.Cohort) error {
	switch {
	case k.New == nil && len(c.Labels) == 0:
		return fmt.Errorf("kind %q learns class labels only, and the cohort has no labels (targets: %s)", k.Name, wordList(c.Targets))
	case k.NewClassifier == nil && len(c.Targets) == 0:
		return fmt.Errorf("kind %q learns scores only, and the cohort has no score targets (labels: %s)", k.Name, wordList(c.Labels))
	default:
		return fmt.Errorf("kind %q learns nothing the cohort holds", k.Name)
	}
}

func (r *Runner) runUnit(ctx context.Context, unit Unit, cfg ModelConfig, fd *foldData,
	newModel func(ModelConfig, int, int, int64) (model.Regressor, error), emit func(Event)) (unitOutput, bool, error) {
	if r.Checkpoints != nil {
		if out, ok, err := r.Checkpoints.load(cfg.Name, unit); err != nil || ok {
			return out, ok, err
		}
	}
	if err := ctx.Err(); err != nil {
		return unitOutput{}, false, err
	}
	emit(Event{Kind: UnitStarted, Model: cfg.Name, Unit: unit})
	fd, err := fd.forModel(cfg)
	if err != nil {
		return unitOutput{}, false, err
	}
	scores, labels, err := r.learns(cfg)
	if err != nil {
		return unitOutput{}, false, err
	}
	var out unitOutput
	if scores {
		if out, err = r.fitScores(ctx, unit, cfg, fd, newModel, emit); err != nil {
			return unitOutput{}, false, err
		}
	}
	if labels {
		if err := r.fitLabels(ctx, unit, cfg, fd, emit, &out); err != nil {
			return unitOutput{}, false, err
		}
	}
	if r.Models != "" && r.Design.SaveModels {
		if err := saveModel(filepath.Join(r.Models, unitPath(cfg.Name, unit)), out.regressor, out.classifiers, fd, r.Cohort, r.Design, cfg); err != nil {
			return unitOutput{}, false, fmt.Errorf("saving the model: %w", err)
		}
	}
	out.regressor, out.classifiers = nil, nil
	if r.Checkpoints != nil {
		if err := r.Checkpoints.save(cfg.Name, unit, out); err != nil {
			return unitOutput{}, false, err
		}
	}
	return out, false, nil
}

// fitScores fits model cfg to the scores of fold fd and predicts its test
// participants.
func (r *Runner) fitScores(ctx context.Context, unit Unit, cfg ModelConfig, fd *foldData,
	newModel func(ModelConfig, int, int, int64) (model.Regressor, error), emit func(Event)) (unitOutput, error) {
	seed := modelSeed(r.Design.Seed, unit.Repeat, unit.Fold)
	reg, err := newModel(cfg, r.Cohort.P(), len(r.Cohort.Targets), seed)
	if err != nil {
		return unitOutput{}, err
	}
	if it, ok := reg.(model.Iterative); ok {
		it.OnEpoch(func(e model.Epoch) { emit(Event{Kind: EpochDone, Model: cfg.Name, Unit: unit, Epoch: e}) })
	}
	if err := reg.Fit(ctx, fd.train, fd.valid); err != nil {
		return unitOutput{}, err
	}
	pred, err := reg.Predict(fd.test)
	if err != nil {
		return unitOutput{}, err
	}
	if rows, cols := pred.Dims(); rows != len(fd.test) || cols != len(fd.targetName) {
		return unitOutput{}, fmt.Errorf("predictions are %d × %d, want %d × %d", rows, cols, len(fd.test), len(fd.targetName))
	}
	if err := fd.prep.Unscale(fd.testCohort, pred); err != nil {
		return unitOutput{}, err
	}
	var out unitOutput
	for i, p := range fd.test {
		for t, target := range fd.targetName {
			obs := fd.observed.At(i, t)
			if math.IsNaN(obs) {
				continue
			}
			v := pred.At(i, t)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return unitOutput{}, fmt.Errorf("participant %s, target %s: prediction is %v: %w", p.ID, target, v, model.ErrDiverged)
			}
			out.predictions = append(out.predictions, model.Prediction{
				ParticipantID: p.ID, Model: cfg.Name, Target: target,
				Repeat: unit.Repeat, Fold: unit.Fold, Observed: obs, Predicted: v,
			})
		}
	}
	if it, ok := reg.(model.Iterative); ok {
		out.history = it.History()
	}
	if tuned, ok := reg.(model.Tuned); ok && !r.scoresOnly {
		if out.choices = tuned.Choices(); len(out.choices) != len(fd.targetName) {
			return unitOutput{}, fmt.Errorf("choices for %d targets, want %d", len(out.choices), len(fd.targetName))
		}
	}
	if wantsInnerLoss(r.Design, cfg) && fd.valid.Len() > 0 && !r.scoresOnly {
		fresh, err := newModel(cfg, r.Cohort.P(), len(r.Cohort.Targets), seed)
		if err != nil {
			return unitOutput{}, err
		}
		if out.innerLoss, err = innerLoss(ctx, fresh, fd); err != nil {
			return unitOutput{}, fmt.Errorf("inner validation error of the baseline (name comparison.reference to skip it): %w", err)
		}
	}
	if in, ok := reg.(model.Interpreter); ok && !r.scoresOnly {
		switch out.importance, err = fd.edgeImportance(in); {
		case errors.Is(err, model.ErrTooFewToExplain):
			// A test fold of one (leave-one-out) has no covariance:
			// this fold adds no map, the others still do.
			out.importance = nil
			if r.Logger != nil {
				r.Logger.Info("no edge importance for this fold", "model", cfg.Name, "repeat", unit.Repeat+1, "fold", unit.Fold+1, "reason", err.Error())
			}
		case err != nil:
			return unitOutput{}, fmt.Errorf("edge importance: %w", err)
		}
	}
	out.regressor = reg
	return out, nil
}

// labelled returns the participants of ps whose label l is known, with
// their classes, as a classifier of K classes learns from them.
func labelled(ps []*data.Participant, l, K int) model.LabelledSet {
	set := model.LabelledSet{Classes: K}
	for _, p := range ps {
		if c := p.Labels[l]; c >= 0 {
			set.Participants = append(set.Participants, p)
			set.Labels = append(set.Labels, c)
		}
	}
	return set
}

// buildClassifier makes the untrained classifier of a unit with its
// kind's NewClassifier, or r.newClassifier when set.
func (r *Runner) buildClassifier(cfg ModelConfig, classes int, seed int64) (model.Classifier, error) {
	if r.newClassifier != nil {
		return r.newClassifier(cfg, r.Cohort.P(), classes, seed)
	}
	k, err := cfg.Spec()
	if err != nil {
		return nil, err
	}
	return k.NewClassifier(cfg.Settings(), r.Cohort.P(), classes, seed)
}

// fitLabels fits one classifier of model cfg to each label of fold fd,
// on the fold's prepared participants whose label is known, with the
// inner validation part stratified by the label's classes
// (foldData.labelSets), and adds to
// out the class probabilities of the test participants whose label is
// known, ordered by participant and then label, the inner validation log
// loss of a baseline, the edge importance of a model.ClassInterpreter on
// those test participants, and, for a model fitted to no scores, the
// epochs of its first label's classifier. Every classifier of a unit has the seed
// of the unit's regressor. The scores' preparation (TargetPrep: confound
// regression and standardization) does not touch labels: cv.confounds
// are not regressed out of a label, whose classes are learnt as given.
func (r *Runner) fitLabels(ctx context.Context, unit Unit, cfg ModelConfig, fd *foldData, emit func(Event), out *unitOutput) error {
	seed := modelSeed(r.Design.Seed, unit.Repeat, unit.Fold)
	byLabel := make([]map[string][]float64, len(fd.labelName))
	k, err := cfg.Spec()
	wantLoss := err == nil && k.Baseline && r.Design.LabelLoss && fd.valid.Len() > 0 && !r.scoresOnly
	for l, label := range fd.labelName {
		K := len(fd.classes[l])
		trainSet, validSet := fd.labelSets(l, K)
		if trainSet.Len() == 0 {
			return fmt.Errorf("label %s: no training participant has one", label)
		}
		clf, err := r.buildClassifier(cfg, K, seed)
		if err != nil {
			return fmt.Errorf("label %s: %w", label, err)
		}
		it, iterative := clf.(epochReporter)
		if iterative {
			it.OnEpoch(func(e model.Epoch) { emit(Event{Kind: EpochDone, Model: cfg.Name, Unit: unit, Epoch: e}) })
		}
		if err := clf.Fit(ctx, trainSet, validSet); err != nil {
			return fmt.Errorf("label %s: %w", label, err)
		}
		if iterative && l == 0 && len(fd.targetName) == 0 {
			out.history = it.History()
		}
		out.classifiers = append(out.classifiers, clf)
		test := labelled(fd.test, l, K)
		byLabel[l] = make(map[string][]float64, test.Len())
		if test.Len() > 0 {
			proba, err := predictProba(clf, test.Participants, K)
			if err != nil {
				return fmt.Errorf("label %s: %w", label, err)
			}
			for i, p := range test.Participants {
				byLabel[l][p.ID] = proba.RawRowView(i)
			}
			if ci, ok := clf.(model.ClassInterpreter); ok && !r.scoresOnly {
				maps, err := fd.classImportance(ci, l, K, test.Participants)
				if err != nil {
					return fmt.Errorf("label %s: edge importance: %w", label, err)
				}
				out.labelImportance = append(out.labelImportance, maps...)
			}
		}
		if wantLoss {
			fresh, err := r.buildClassifier(cfg, K, seed)
			if err != nil {
				return fmt.Errorf("label %s: %w", label, err)
			}
			loss, err := innerLogLoss(ctx, fresh, trainSet, validSet)
			if err != nil {
				return fmt.Errorf("label %s: inner validation log loss of the baseline (name comparison.reference to skip it): %w", label, err)
			}
			out.labelLoss = append(out.labelLoss, loss)
		}
	}
	for _, p := range fd.test {
		for l, label := range fd.labelName {
			if proba, ok := byLabel[l][p.ID]; ok {
				out.classes = append(out.classes, model.ClassPrediction{
					ParticipantID: p.ID, Model: cfg.Name, Label: label, Repeat: unit.Repeat, Fold: unit.Fold,
					Observed: p.Labels[l], Probabilities: slices.Clone(proba),
				})
			}
		}
	}
	return nil
}

// epochReporter is a classifier trained in epochs, reporting them as a
// model.Iterative regressor does.
type epochReporter interface {
	OnEpoch(func(model.Epoch))
	History() []model.Epoch
}

// predictProba returns clf's class probabilities for ps, checked: len(ps)
// × K, every one finite in [0, 1] and every row summing to 1 within 1e-6;
// a NaN or infinite one wraps model.ErrDiverged.
func predictProba(clf model.Classifier, ps []*data.Participant, K int) (*mat.Dense, error) {
	proba, err := clf.PredictProba(ps)
	if err != nil {
		return nil, err
	}
	if rows, cols := proba.Dims(); rows != len(ps) || cols != K {
		return nil, fmt.Errorf("class probabilities are %d × %d, want %d × %d", rows, cols, len(ps), K)
	}
	for i, p := range ps {
		var sum float64
		for k := range K {
			v := proba.At(i, k)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("participant %s: probability of class %d is %v: %w", p.ID, k, v, model.ErrDiverged)
			}
			if v < 0 || v > 1 {
				return nil, fmt.Errorf("participant %s: probability of class %d is %v, outside [0, 1]", p.ID, k, v)
			}
			sum += v
		}
		if math.Abs(sum-1) > 1e-6 {
			return nil, fmt.Errorf("participant %s: class probabilities sum to %v, not 1", p.ID, sum)
		}
	}
	return proba, nil
}

// innerLogLoss fits clf, a fresh classifier, on train alone and returns
// its mean log loss on valid,
//
//	−(1/n) Σᵢ log max(pᵢ,yᵢ, 10⁻¹⁵)
//
// over the n validation participants i with class yᵢ; NaN when n = 0.
// It is what a reference baseline for a label is chosen on (Result.LabelLoss).
func innerLogLoss(ctx context.Context, clf model.Classifier, train, valid model.LabelledSet) (float64, error) {
	if valid.Len() == 0 {
		return math.NaN(), nil
	}
	if err := clf.Fit(ctx, train, model.LabelledSet{Classes: train.Classes}); err != nil {
		return 0, err
	}
	proba, err := predictProba(clf, valid.Participants, valid.Classes)
	if err != nil {
		return 0, err
	}
	var sum float64
	for i, y := range valid.Labels {
		sum -= math.Log(max(proba.At(i, y), 1e-15))
	}
	return sum / float64(valid.Len()), nil
}

// wantsInnerLoss reports whether a run of d records the inner validation
// error of the scores of model cfg: cfg is a baseline (model.Kind.Baseline)
// and d.InnerLoss is set.
func wantsInnerLoss(d *Design, cfg ModelConfig) bool {
	k, err := cfg.Spec()
	return d.InnerLoss && err == nil && k.Baseline
}

// innerLoss fits reg, a fresh model, on the training part of fd alone and
// returns its mean squared error on the inner validation part per target,
// in standardized score units; NaN for a target without a validation
// score (see Result.InnerLoss).
func innerLoss(ctx context.Context, reg model.Regressor, fd *foldData) ([]float64, error) {
	if err := reg.Fit(ctx, fd.train, model.Dataset{}); err != nil {
		return nil, err
	}
	pred, err := reg.Predict(fd.valid.Participants)
	if err != nil {
		return nil, err
	}
	T := len(fd.targetName)
	if rows, cols := pred.Dims(); rows != fd.valid.Len() || cols != T {
		return nil, fmt.Errorf("predictions are %d × %d, want %d × %d", rows, cols, fd.valid.Len(), T)
	}
	loss := make([]float64, T)
	for t, target := range fd.targetName {
		var sum float64
		var n int
		for i, p := range fd.valid.Participants {
			z := fd.valid.Y.At(i, t)
			if math.IsNaN(z) {
				continue
			}
			v := pred.At(i, t)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("participant %s, target %s: prediction is %v: %w", p.ID, target, v, model.ErrDiverged)
			}
			sum += (v - z) * (v - z)
			n++
		}
		loss[t] = math.NaN()
		if n > 0 {
			loss[t] = sum / float64(n)
		}
	}
	return loss, nil
}

func pick(c *data.Cohort, idx []int) []*data.Participant {
	ps := make([]*data.Participant, len(idx))
	for j, i := range idx {
		ps[j] = c.Participants[i]
	}
	return ps
}

// Groups returns the participants' groups, or nil when the cohort has
// none. A participant without a group stands alone.
func Groups(c *data.Cohort) []string {
	grouped := false
	groups := make([]string, len(c.Participants))
	for i, p := range c.Participants {
		groups[i] = p.Group
		if p.Group == "" {
			groups[i] = "\x00" + p.ID // no group label can collide with this
		} else {
			grouped = true
		}
	}
	if !grouped {
		return nil
	}
	return groups
}

// modelSeed returns the seed of every model trained on fold fold of
// repeat repeat (−1, −1 for the refit on all participants): a function of
// the experiment seed, the repeat and the fold alone. It does not depend
// on the model's name or settings, so that two models that differ only by
// name give the same predictions, and models compared on a fold draw
// common random numbers (one source of difference between them fewer).
func modelSeed(seed int64, repeat, fold int) int64 {
	return int64(unitSeed(seed, "model", repeat, fold) >> 1)
}

// unitSeed derives a seed from the experiment seed, a purpose and a
// unit's place (repeat and fold), so that a unit's randomness does not
// depend on which other units ran.
func unitSeed(seed int64, name string, repeat, fold int) uint64 {
	h := fnv.New64a()
	fmt.Fprintf(h, "%d\x00%s\x00%d\x00%d", seed, name, repeat, fold)
	return h.Sum64()
}

// scoresAndConfounds gathers the cohort's scores (n × T; nil for a cohort
// with labels and no score targets) and the confound columns named by
// cv.Confounds (n × C, nil when none).
func scoresAndConfounds(cv CV, c *data.Cohort) (y, cov *mat.Dense, err error) {
	n, T := len(c.Participants), len(c.Targets)
	if n == 0 || T == 0 && len(c.Labels) == 0 {
		return nil, nil, fmt.Errorf("cohort has %d participants, %d targets and %d labels", n, T, len(c.Labels))
	}
	if T > 0 {
		y = mat.NewDense(n, T, nil)
		for i, p := range c.Participants {
			y.SetRow(i, p.Scores)
		}
	}
	if len(cv.Confounds) == 0 {
		return y, nil, nil
	}
	cols := make([]int, len(cv.Confounds))
	for k, name := range cv.Confounds {
		cols[k] = -1
		for j, have := range c.Covariates {
			if have == name {
				cols[k] = j
			}
		}
		if cols[k] < 0 {
			return nil, nil, fmt.Errorf("cv.confounds: %q is not a covariate of the cohort (covariates: %s)", name, wordList(c.Covariates))
		}
	}
	cov = mat.NewDense(n, len(cols), nil)
	for i, p := range c.Participants {
		for k, j := range cols {
			cov.Set(i, k, p.Covariates[j])
		}
	}
	return y, cov, nil
}

// preparedTrain returns the training participants train of cohort, in
// that order, as the fold's preparation left them: the participants of
// fit (cohort indices fitIdx) and of valid (validIdx), which together are
// train, so that no step is applied to them twice.
func preparedTrain(cohort *data.Cohort, train, fitIdx []int, fit *data.Cohort, validIdx []int, valid *data.Cohort) *data.Cohort {
	prepared := make(map[int]*data.Participant, len(train))
	for k, i := range fitIdx {
		prepared[i] = fit.Participants[k]
	}
	for k, i := range validIdx {
		prepared[i] = valid.Participants[k]
	}
	out := subCohort(cohort, train)
	out.Participants = make([]*data.Participant, len(train))
	for k, i := range train {
		out.Participants[k] = prepared[i]
	}
	return out
}
