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
	// Histories holds, per unit of an iteratively trained model, its
	// epochs.
	Histories map[Unit][]model.Epoch
	// Importance holds, per unit of a model.Interpreter, one p × p edge
	// importance map per target, computed on the unit's test fold.
	Importance map[Unit][]*mat.Dense
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
	// NaN when nₜ = 0. It is only computed when the experiment names no
	// comparison.reference and has at least two baselines, and only for
	// folds with an inner validation part (cv.inner_validation > 0).
	InnerLoss map[Unit][]float64
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
	// model.Saver), as Models/NAME/rR-fF/.
	Models string

	newModel func(cfg ModelConfig, p, targets int, seed int64) (model.Regressor, error)
	splits   []Split // when set, used instead of the experiment's folds
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

	res := &Result{Splits: splits, Histories: make(map[Unit][]model.Epoch), Importance: make(map[Unit][]*mat.Dense),
		Choices: make(map[Unit][][]model.Choice), InnerLoss: make(map[Unit][]float64)}
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
		if outputs[u].history != nil {
			res.Histories[unit] = outputs[u].history
		}
		if outputs[u].importance != nil {
			res.Importance[unit] = outputs[u].importance
		}
		if outputs[u].choices != nil {
			res.Choices[unit] = outputs[u].choices
		}
		if outputs[u].innerLoss != nil {
			res.InnerLoss[unit] = outputs[u].innerLoss
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
	tp := &TargetPrep{Covariates: exp.CV.Confounds, Blocks: blocks}
	if slices.ContainsFunc(exp.CV.Confounds, func(name string) bool { return strings.HasPrefix(name, siteDummyPrefix) }) {
		tp.SiteLevels = slices.Sorted(slices.Values(uniq(siteLabels(cohort))))
	}
	prep.Steps = append(prep.Steps, tp)
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
	fd := &foldData{
		split:      split,
		prep:       prep,
		train:      model.Dataset{Participants: fit.Participants},
		valid:      model.Dataset{Participants: valid.Participants},
		test:       test.Participants,
		testCohort: test,
		innerSeed:  seed,
		targetName: cohort.Targets,
		edges:      edges,
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
	history     []model.Epoch
	importance  []*mat.Dense
	choices     [][]model.Choice
	innerLoss   []float64
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
	seed := modelSeed(r.Design.Seed, unit.Repeat, unit.Fold)
	reg, err := newModel(cfg, r.Cohort.P(), len(r.Cohort.Targets), seed)
	if err != nil {
		return unitOutput{}, false, err
	}
	if it, ok := reg.(model.Iterative); ok {
		it.OnEpoch(func(e model.Epoch) { emit(Event{Kind: EpochDone, Model: cfg.Name, Unit: unit, Epoch: e}) })
	}
	if err := reg.Fit(ctx, fd.train, fd.valid); err != nil {
		return unitOutput{}, false, err
	}
	pred, err := reg.Predict(fd.test)
	if err != nil {
		return unitOutput{}, false, err
	}
	if rows, cols := pred.Dims(); rows != len(fd.test) || cols != len(fd.targetName) {
		return unitOutput{}, false, fmt.Errorf("predictions are %d × %d, want %d × %d", rows, cols, len(fd.test), len(fd.targetName))
	}
	if err := fd.prep.Unscale(fd.testCohort, pred); err != nil {
		return unitOutput{}, false, err
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
				return unitOutput{}, false, fmt.Errorf("participant %s, target %s: prediction is %v: %w", p.ID, target, v, model.ErrDiverged)
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
			return unitOutput{}, false, fmt.Errorf("choices for %d targets, want %d", len(out.choices), len(fd.targetName))
		}
	}
	if wantsInnerLoss(r.Design, cfg) && fd.valid.Len() > 0 && !r.scoresOnly {
		fresh, err := newModel(cfg, r.Cohort.P(), len(r.Cohort.Targets), seed)
		if err != nil {
			return unitOutput{}, false, err
		}
		if out.innerLoss, err = innerLoss(ctx, fresh, fd); err != nil {
			return unitOutput{}, false, fmt.Errorf("inner validation error of the baseline (name comparison.reference to skip it): %w", err)
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
			return unitOutput{}, false, fmt.Errorf("edge importance: %w", err)
		}
	}
	if saver, ok := reg.(model.Saver); ok && r.Models != "" && r.Design.SaveModels {
		if err := saveModel(filepath.Join(r.Models, unitPath(cfg.Name, unit)), saver, fd, r.Cohort, r.Design, cfg); err != nil {
			return unitOutput{}, false, fmt.Errorf("saving the model: %w", err)
		}
	}
	if r.Checkpoints != nil {
		if err := r.Checkpoints.save(cfg.Name, unit, out); err != nil {
			return unitOutput{}, false, err
		}
	}
	return out, false, nil
}

// wantsInnerLoss reports whether a run of exp records the inner
// validation error of model cfg: cfg is a baseline (model.Kind.Baseline),
// and exp names no comparison.reference and has at least two baselines to
// choose from.
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

// scoresAndConfounds gathers the cohort's scores (n × T) and the confound
// columns named by cv.Confounds (n × C, nil when none).
func scoresAndConfounds(cv CV, c *data.Cohort) (y, cov *mat.Dense, err error) {
	n, T := len(c.Participants), len(c.Targets)
	if n == 0 || T == 0 {
		return nil, nil, fmt.Errorf("cohort has %d participants and %d targets", n, T)
	}
	y = mat.NewDense(n, T, nil)
	for i, p := range c.Participants {
		y.SetRow(i, p.Scores)
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
