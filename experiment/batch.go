package experiment

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"log/slog"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/train"
)

// A run spread over a batch cluster has three steps: Plan splits it into
// independent units and writes them, with a SLURM job-array script, into
// the work folder of the run folder; RunUnit runs one unit (an array task)
// and writes only that unit's files; Merge combines the finished units into
// the run folder, which equals a single-machine Run of the experiment byte
// for byte.

// PlanOptions are the settings of a plan that the experiment file does not
// hold: skein plan's flags.
type PlanOptions struct {
	// Out is the run folder Merge will create; the plan goes into its work
	// folder, Out + ".partial".
	Out string
	// Block is how many permutations a unit runs (0: DefaultBlock for
	// networks, one permutation.chunk for baselines; baselines' blocks are
	// rounded up to whole chunks).
	Block int
	// Bins is the number of equal-frequency bins of NMI and AMI.
	Bins int
	// Force starts the plan over, deleting an earlier plan's finished
	// units, and lets Merge replace an existing run folder.
	Force bool
	// Skein is the absolute path of the skein program the job script runs.
	Skein string
	// Slurm are the resources every array task asks for.
	Slurm SlurmOptions
}

// SlurmOptions are the resources of one array task of the job script.
type SlurmOptions struct {
	Time, Mem, Partition, Account string
	// CPUs is the task's CPUs, which is also its number of jobs.
	CPUs int
	// MaxRunning caps the tasks running at once; 0 is no cap.
	MaxRunning int
	// Extra are further #SBATCH option lines, such as --qos=short.
	Extra []string
}

// planRecord is PlanFile: everything a unit and Merge need besides the
// resolved experiment file, which Plan writes beside it.
type planRecord struct {
	// Experiment and ExperimentDir are the absolute paths of the
	// experiment file and of the folder its relative paths start from.
	Experiment    string `json:"experiment"`
	ExperimentDir string `json:"experiment_dir"`
	// Out is the absolute path of the run folder merge will create.
	Out string `json:"out"`
	// Block is the permutations-per-unit request (BatchUnits).
	Block int `json:"block"`
	// Bins is the number of NMI bins of the null scores and the report.
	Bins int `json:"bins"`
	// Replace is set when plan was given --force: merge replaces an
	// existing run folder at Out.
	Replace bool `json:"replace"`
	// Units is the number of units.
	Units int `json:"units"`
}

// unitsTSV is the header of UnitsFile.
const unitsTSV = "index\tkind\tmodel\trepeat\tfold\tpermutations\tfraction\tcommand\n"

// A PlanSummary says what Plan wrote.
type PlanSummary struct {
	// Dir is the work folder holding the plan.
	Dir string
	// Units, ModelUnits, PermutationUnits and SampleSizeUnits count the
	// units.
	Units, ModelUnits, PermutationUnits, SampleSizeUnits int
	// Resumed is set when the work folder held this plan already: its
	// finished units are kept.
	Resumed bool
	// Job, UnitsTable are the job script and units table; Experiment and
	// Out the absolute paths units and merge use.
	Job, UnitsTable, Experiment, Out string
}

// Plan splits the run of the experiment at path into units and writes the
// plan into the work folder of opt.Out: the resolved experiment, the
// cohort report, UnitsFile, JobFile and, last, PlanFile (a folder with a
// plan file is a complete plan). Planning again without Force keeps the
// finished units of the same experiment and cohort and refuses another.
func Plan(path string, opt PlanOptions, msgs io.Writer) (*PlanSummary, error) {
	if opt.Out == "" {
		return nil, badInput(errors.New("--out is required: the plan's units and merge find each other through it"))
	}
	expPath, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	out, err := filepath.Abs(opt.Out)
	if err != nil {
		return nil, err
	}
	b, err := openBatch(expPath)
	if err != nil {
		return nil, err
	}
	_, statErr := os.Stat(out + ".partial")
	resume := statErr == nil && !opt.Force
	rd, err := OpenRunDir(out, opt.Force, resume)
	if err != nil {
		return nil, badInput(err)
	}
	defer rd.Close()
	if err := rd.CheckResume(ExperimentFile, b.resolved); err != nil {
		return nil, badInputf("%w (its finished units would not belong to this plan)", err)
	}
	if resume {
		if err := checkInputsUnchanged(rd, b.in, "units", "pass --force to start over"); err != nil {
			return nil, err
		}
	}
	units, err := BatchUnits(b.runner, b.exp, opt.Block)
	if err != nil {
		return nil, badInput(err)
	}
	if old, err := readPlan(out); resume && err == nil && old.Bins != opt.Bins {
		// Null scores of the earlier plan used other NMI bins.
		if err := os.RemoveAll(rd.WorkPath(NullsDir)); err != nil {
			return nil, err
		}
		messages(msgs, "skein plan")("--bins changed from %d to %d: the permutation blocks will run again", old.Bins, opt.Bins)
	}
	rec := planRecord{Experiment: expPath, ExperimentDir: b.exp.Dir, Out: out, Block: opt.Block, Bins: opt.Bins, Replace: opt.Force, Units: len(units)}
	recJSON, err := json.MarshalIndent(rec, "", "  ")
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(rd.WorkPath(LogsDir), 0o755); err != nil {
		return nil, err
	}
	files := []struct {
		name    string
		content []byte
	}{
		{ExperimentFile, b.resolved},
		{CohortFile, b.cohortJSON},
		{InputsFile, b.in.InputsJSON},
		{UnitsFile, unitsTable(units, opt.Skein, rec)},
		{JobFile, jobScript(len(units), opt.Skein, rec, rd, opt.Slurm)},
		{PlanFile, recJSON}, // last: a folder with a plan file is a complete plan
	}
	for _, f := range files {
		if err := rd.WriteFile(f.name, f.content); err != nil {
			return nil, err
		}
	}
	if err := os.Chmod(rd.WorkPath(JobFile), 0o755); err != nil {
		return nil, err
	}
	s := &PlanSummary{Dir: rd.Partial, Units: len(units), Resumed: resume, Job: rd.WorkPath(JobFile),
		UnitsTable: rd.WorkPath(UnitsFile), Experiment: expPath, Out: out}
	for _, u := range units {
		switch u.Kind {
		case BatchModel:
			s.ModelUnits++
		case BatchPermutations:
			s.PermutationUnits++
		case BatchSampleSize:
			s.SampleSizeUnits++
		}
	}
	return s, nil
}

// batch is an experiment opened for planning, running a unit or merging.
type batch struct {
	in         *Inputs
	exp        *Experiment // sweeps expanded
	variants   []Variant   // the sweeps' variants
	cohort     *data.Cohort
	resolved   []byte // the resolved experiment file
	cohortJSON []byte // cohort.json
	runner     *train.Runner
}

// openBatch reads and checks the experiment at expPath.
func openBatch(expPath string) (*batch, error) {
	exp, err := ReadExperiment(expPath)
	if err != nil {
		return nil, badInput(err)
	}
	return openBatchExperiment(expPath, exp)
}

func openBatchExperiment(expPath string, exp *Experiment) (*batch, error) {
	if len(exp.Models) == 0 {
		return nil, badInputf("%s: no [[model]] to run", expPath)
	}
	in, err := CheckInputs(expPath, exp)
	if err != nil {
		return nil, err
	}
	b := &batch{in: in, exp: in.Experiment, variants: in.Variants, cohort: in.Cohort, resolved: in.Resolved, cohortJSON: in.CohortJSON}
	b.runner = &train.Runner{Design: b.exp.Design(), Cohort: in.Cohort}
	return b, nil
}

// readPlan reads the plan file of the work folder of out.
func readPlan(out string) (*planRecord, error) {
	partial := filepath.Clean(out) + ".partial"
	raw, err := os.ReadFile(filepath.Join(partial, PlanFile))
	if errors.Is(err, fs.ErrNotExist) {
		if _, err := os.Stat(filepath.Join(out, PlanFile)); err == nil {
			return nil, badInputf("%s is merged already: its plan is finished", out)
		}
		return nil, badInputf("%s holds no plan: run skein plan EXPERIMENT.toml --out %s first", partial, out)
	}
	if err != nil {
		return nil, err
	}
	var rec planRecord
	if err := json.Unmarshal(raw, &rec); err != nil {
		return nil, fmt.Errorf("%s: %w", filepath.Join(partial, PlanFile), err)
	}
	return &rec, nil
}

// HasPlan reports whether the work folder of the run folder out holds a
// plan.
func HasPlan(out string) bool {
	_, err := os.Stat(filepath.Join(filepath.Clean(out)+".partial", PlanFile))
	return err == nil
}

// checkPlanned makes sure the work folder holds the plan of this very
// experiment and cohort.
func (b *batch) checkPlanned(rd *RunDir, rec *planRecord) error {
	if err := rd.CheckResume(ExperimentFile, b.resolved); err != nil {
		return badInputf("the experiment differs from the one planned: %w", err)
	}
	if _, err := os.Stat(rd.WorkPath(CohortFile)); err != nil {
		return err
	}
	if err := checkInputsUnchanged(rd, b.in, "planned units", "plan again with skein plan --force"); err != nil {
		return err
	}
	units, err := BatchUnits(b.runner, b.exp, rec.Block)
	if err != nil {
		return err
	}
	if len(units) != rec.Units {
		return fmt.Errorf("%s: the plan has %d units, the experiment %d", rd.WorkPath(PlanFile), rec.Units, len(units))
	}
	return nil
}

// nullFile names the null scores of a permutation block.
func nullFile(u BatchUnit) string {
	return filepath.Join(NullsDir, train.FolderName(u.Model), fmt.Sprintf("p%d-%d.csv", u.First+1, u.End))
}

// classNullFile names the null AUC within folds of the class labels of a permutation
// block, beside its null scores.
func classNullFile(u BatchUnit) string {
	return filepath.Join(NullsDir, train.FolderName(u.Model), fmt.Sprintf("p%d-%d.labels.csv", u.First+1, u.End))
}

// sampleSizeUnitFile names the sample-size rows of a curve unit.
func sampleSizeUnitFile(u BatchUnit) string {
	return filepath.Join(SampleSizeDir, train.FolderName(u.Model), "f"+strconv.FormatFloat(u.Fraction, 'g', -1, 64)+".csv")
}

func failedFile(k int) string { return filepath.Join(FailedDir, strconv.Itoa(k)+".txt") }

func unitLog(k int) string { return filepath.Join(LogsDir, "unit-"+strconv.Itoa(k)+".log") }

// RunUnit runs unit k of the plan in the work folder of out, for the
// experiment at expPath, with jobs units of training at once, and writes
// only that unit's files: its checkpoint (and saved models) or its block's
// null scores. A finished unit is not run again (resumed reports it). A
// failure is kept in FailedDir/K.txt for Merge to report; success removes
// it.
func RunUnit(ctx context.Context, expPath, out string, k, jobs int) (u BatchUnit, resumed bool, err error) {
	rec, err := readPlan(out)
	if err != nil {
		return u, false, err
	}
	// The cohort report names files as found from the experiment's path:
	// make it the same as the plan's.
	if expPath, err = filepath.Abs(expPath); err != nil {
		return u, false, err
	}
	b, err := openBatch(expPath)
	if err != nil {
		return u, false, err
	}
	rd, err := openRunDir(out, rec.Replace, true, true) // units run side by side
	if err != nil {
		return u, false, badInput(err)
	}
	defer rd.Close()
	if err := b.checkPlanned(rd, rec); err != nil {
		return u, false, err
	}
	if k >= rec.Units {
		return u, false, badInputf("--unit %d: the plan in %s has units 0 to %d", k, rd.Partial, rec.Units-1)
	}
	units, err := BatchUnits(b.runner, b.exp, rec.Block)
	if err != nil {
		return u, false, err
	}
	u = units[k]
	logOut, err := os.OpenFile(rd.WorkPath(unitLog(k)), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return u, false, err
	}
	defer logOut.Close()
	log := slog.New(slog.NewJSONHandler(logOut, nil)).With("unit", k)
	log.Info("unit started", "kind", u.Kind, "model", u.Model, "experiment", expPath, "jobs", jobs)
	r := b.runner
	r.Jobs, r.Logger = jobs, log
	resumed, err = runPlannedUnit(ctx, rd, r, b.exp.Permutation, u, rec.Bins)
	if err != nil {
		log.Error("unit failed", "error", err.Error())
		if werr := rd.WriteFile(failedFile(k), []byte(err.Error()+"\n")); werr != nil {
			return u, false, errors.Join(err, werr)
		}
		return u, false, fmt.Errorf("unit %d (%s): %w", k, u, err)
	}
	if err := os.Remove(rd.WorkPath(failedFile(k))); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return u, false, err
	}
	log.Info("unit finished", "resumed", resumed)
	return u, resumed, nil
}

// runPlannedUnit runs u, unless it has finished already (then it reports
// true).
func runPlannedUnit(ctx context.Context, rd *RunDir, r *train.Runner, pc Permutation, u BatchUnit, bins int) (bool, error) {
	if u.Kind == BatchModel {
		resumed := false
		r.Select = []int{u.Select}
		r.Checkpoints = rd.Checkpoints()
		r.Models = rd.ModelsDir()
		r.OnEvent = func(e train.Event) { resumed = resumed || e.Resumed }
		_, err := r.Run(ctx)
		return resumed, err
	}
	if u.Kind == BatchSampleSize {
		name := sampleSizeUnitFile(u)
		if _, err := os.Stat(rd.WorkPath(name)); err == nil {
			return true, nil
		}
		runs, err := r.RunSampleSizes(ctx, []float64{u.Fraction}, []string{u.Model})
		if err != nil {
			return false, err
		}
		return false, rd.WriteWith(name, func(w io.Writer) error { return eval.WriteSampleSizeCSV(w, SampleSizeCurve(runs)) })
	}
	name := nullFile(u)
	if _, err := os.Stat(rd.WorkPath(name)); err == nil {
		return true, nil
	}
	rows, classRows, err := PermutationBlock(ctx, r, pc, []string{u.Model}, u.First, u.End, bins)
	if err != nil {
		return false, err
	}
	if len(classRows) > 0 {
		// Written first: the scores' file says the unit has finished.
		var raw bytes.Buffer
		if err := eval.WriteClassNulls(&raw, classRows); err != nil {
			return false, err
		}
		if err := rd.WriteFile(classNullFile(u), raw.Bytes()); err != nil {
			return false, err
		}
	}
	var raw bytes.Buffer
	if err := eval.WriteNullScores(&raw, rows); err != nil {
		return false, err
	}
	return false, rd.WriteFile(name, raw.Bytes())
}

// String describes u for messages: its model and repeat and fold, its
// permutations (numbered from 1), or its fraction of the training folds.
func (u BatchUnit) String() string {
	switch u.Kind {
	case BatchModel:
		return fmt.Sprintf("model %q, repeat %d, fold %d", u.Model, u.Unit.Repeat+1, u.Unit.Fold+1)
	case BatchSampleSize:
		return fmt.Sprintf("model %q, sample size %g of each training fold", u.Model, u.Fraction)
	}
	return fmt.Sprintf("model %q, permutations %d to %d", u.Model, u.First+1, u.End)
}

// unitsTable writes UnitsFile: one line per unit with its index, kind,
// model, repeat and fold (from 1; empty unless a model unit), the
// permutations of a block (FIRST-LAST, from 1), the fraction of a
// sample-size unit and the command that runs the unit.
func unitsTable(units []BatchUnit, skein string, rec planRecord) []byte {
	var b strings.Builder
	b.WriteString(unitsTSV)
	for _, u := range units {
		repeat, fold, perms, fraction := "", "", "", ""
		switch u.Kind {
		case BatchModel:
			repeat, fold = strconv.Itoa(u.Unit.Repeat+1), strconv.Itoa(u.Unit.Fold+1)
		case BatchPermutations:
			perms = fmt.Sprintf("%d-%d", u.First+1, u.End)
		case BatchSampleSize:
			fraction = strconv.FormatFloat(u.Fraction, 'g', -1, 64)
		}
		cmd := fmt.Sprintf("%s run %s --out %s --unit %d", ShellQuote(skein), ShellQuote(rec.Experiment), ShellQuote(rec.Out), u.Index)
		fmt.Fprintf(&b, "%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", u.Index, u.Kind, tsvCell(u.Model), repeat, fold, perms, fraction, cmd)
	}
	return []byte(b.String())
}

func tsvCell(s string) string {
	return strings.NewReplacer("\t", " ", "\n", " ", "\r", " ").Replace(s)
}

// jobScript writes the SLURM job-array script: one array task per unit,
// each running skein run --unit with SLURM_ARRAY_TASK_ID.
func jobScript(units int, skein string, rec planRecord, rd *RunDir, so SlurmOptions) []byte {
	var b strings.Builder
	b.WriteString("#!/bin/bash\n")
	name := strings.TrimSuffix(filepath.Base(rec.Out), filepath.Ext(rec.Out))
	fmt.Fprintf(&b, "#SBATCH --job-name=%s\n", sbatchValue("skein-"+name))
	array := fmt.Sprintf("0-%d", units-1)
	if so.MaxRunning > 0 {
		array += "%" + strconv.Itoa(so.MaxRunning)
	}
	fmt.Fprintf(&b, "#SBATCH --array=%s\n", array)
	fmt.Fprintf(&b, "#SBATCH --output=%s\n", sbatchValue(filepath.Join(rd.Partial, LogsDir, "slurm-%A_%a.out")))
	fmt.Fprintf(&b, "#SBATCH --cpus-per-task=%d\n", so.CPUs)
	if so.Time != "" {
		fmt.Fprintf(&b, "#SBATCH --time=%s\n", sbatchValue(so.Time))
	}
	if so.Mem != "" {
		fmt.Fprintf(&b, "#SBATCH --mem=%s\n", sbatchValue(so.Mem))
	}
	if so.Partition != "" {
		fmt.Fprintf(&b, "#SBATCH --partition=%s\n", sbatchValue(so.Partition))
	}
	if so.Account != "" {
		fmt.Fprintf(&b, "#SBATCH --account=%s\n", sbatchValue(so.Account))
	}
	for _, x := range so.Extra {
		fmt.Fprintf(&b, "#SBATCH %s\n", x)
	}
	fmt.Fprintf(&b, `
# Written by skein plan: %d units of the experiment %s.
# Every unit:         sbatch %s
# Some units again:   sbatch --array=3,7,12 %s
# Once all finished:  %s merge %s
# A finished unit is skipped when it runs again.
set -eu
: "${SLURM_ARRAY_TASK_ID:?submit this script with sbatch, or run one unit with skein run --unit K}"
exec %s run %s --out %s --jobs "${SLURM_CPUS_PER_TASK:-1}" --unit "$SLURM_ARRAY_TASK_ID"
`, units, rec.Experiment, rd.WorkPath(JobFile), rd.WorkPath(JobFile), skein, rec.Out,
		ShellQuote(skein), ShellQuote(rec.Experiment), ShellQuote(rec.Out))
	return []byte(b.String())
}

// sbatchValue quotes a value of an #SBATCH line when it holds a space.
func sbatchValue(s string) string {
	if strings.ContainsAny(s, " \t\"") {
		return strconv.Quote(s)
	}
	return s
}

// ShellQuote quotes s for a POSIX shell when it needs quoting.
func ShellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789_./=:@%+,-") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// MissingUnitsError is Merge's error when some units of the plan have not
// finished. Its message lists them with the error of those that failed and
// the commands that run just those again.
type MissingUnitsError struct {
	Missing, Units int
	// Ranges are the missing units' indices as sbatch --array wants them.
	Ranges string
	// Advice lists the units and the commands, a line each.
	Advice []string
}

func (e *MissingUnitsError) Error() string {
	return fmt.Sprintf("%d units missing (%s); nothing merged", e.Missing, e.Ranges)
}

// Merge combines the finished units of the plan in the work folder of out
// into the run folder out, replacing an existing one when force or the
// plan says so: the same files, byte for byte, as a single-machine Run of
// the experiment, with a log gathered from the units'. Unfinished units
// make a *MissingUnitsError and merge nothing.
func Merge(ctx context.Context, out string, force bool, views func(dir string, regions []string) error) (*Outcome, int, error) {
	out, err := filepath.Abs(out)
	if err != nil {
		return nil, 0, err
	}
	rec, err := readPlan(out)
	if err != nil {
		return nil, 0, err
	}
	// The experiment is the one planned: its resolved copy, whose relative
	// paths start where the original file was.
	resolvedPath := filepath.Join(out+".partial", ExperimentFile)
	raw, err := os.ReadFile(resolvedPath)
	if err != nil {
		return nil, 0, err
	}
	exp, err := ParseExperiment(raw)
	if err != nil {
		return nil, 0, fmt.Errorf("%s: %w", resolvedPath, err)
	}
	exp.Dir = rec.ExperimentDir
	b, err := openBatchExperiment(rec.Experiment, exp)
	if err != nil {
		return nil, 0, err
	}
	rd, err := OpenRunDir(out, rec.Replace || force, true)
	if err != nil {
		return nil, 0, badInput(err)
	}
	defer rd.Close()
	if err := b.checkPlanned(rd, rec); err != nil {
		return nil, 0, err
	}
	units, err := BatchUnits(b.runner, b.exp, rec.Block)
	if err != nil {
		return nil, 0, err
	}
	r := b.runner
	r.Checkpoints = rd.Checkpoints()
	r.FromCheckpoints = true
	res, runErr := r.Run(ctx)
	var missingModels *train.MissingUnitsError
	if runErr != nil && !errors.As(runErr, &missingModels) {
		return nil, 0, runErr
	}
	var missing []BatchUnit
	var nullRows []eval.NullScores
	var classNullRows []eval.ClassNull
	var curveRows []eval.SampleSizeRow
	for _, u := range units {
		switch u.Kind {
		case BatchModel:
			if missingModels != nil && slices.Contains(missingModels.Units, u.Select) {
				missing = append(missing, u)
			}
		case BatchPermutations:
			path := rd.WorkPath(nullFile(u))
			raw, err := os.ReadFile(path)
			if errors.Is(err, fs.ErrNotExist) {
				missing = append(missing, u)
				continue
			}
			if err != nil {
				return nil, 0, err
			}
			rows, err := eval.ReadNullScores(bytes.NewReader(raw), path)
			if err != nil {
				return nil, 0, fmt.Errorf("%w (delete the file and rerun unit %d)", err, u.Index)
			}
			nullRows = append(nullRows, rows...)
			classPath := rd.WorkPath(classNullFile(u))
			raw, err = os.ReadFile(classPath)
			if errors.Is(err, fs.ErrNotExist) {
				continue // a model that learns no label
			}
			if err != nil {
				return nil, 0, err
			}
			classes, err := eval.ReadClassNulls(bytes.NewReader(raw), classPath)
			if err != nil {
				return nil, 0, fmt.Errorf("%w (delete %s and rerun unit %d)", err, path, u.Index)
			}
			classNullRows = append(classNullRows, classes...)
		case BatchSampleSize:
			path := rd.WorkPath(sampleSizeUnitFile(u))
			f, err := os.Open(path)
			if errors.Is(err, fs.ErrNotExist) {
				missing = append(missing, u)
				continue
			}
			if err != nil {
				return nil, 0, err
			}
			rows, err := eval.ReadSampleSizeCSV(f, path)
			f.Close()
			if err != nil {
				return nil, 0, fmt.Errorf("%w (delete the file and rerun unit %d)", err, u.Index)
			}
			curveRows = append(curveRows, rows...)
		}
	}
	if len(missing) > 0 {
		return nil, len(units), missingUnits(rd, rec, units, missing)
	}
	if exp.Output.Refit {
		r.Models = rd.ModelsDir()
		if err := r.Refit(ctx); err != nil {
			return nil, 0, err
		}
	}
	rep, err := EvaluateWith(ctx, b.exp, r, res, rec.Bins, Computed{
		Nulls: func(observed *eval.Summary) ([]eval.NullDistribution, error) {
			return eval.AssembleNulls(observed, nullRows, exp.Permutation.Count)
		},
		ClassNulls: classNullRows,
		SampleSize: sortSampleSize(curveRows),
	})
	if err != nil {
		return nil, 0, err
	}
	if err := rep.Write(rd); err != nil {
		return nil, 0, err
	}
	if err := writeSweep(rd, b.exp, b.variants, res); err != nil {
		return nil, 0, err
	}
	if err := rd.WriteFile(VersionsFile, []byte(Versions(exp.Seed))); err != nil {
		return nil, 0, err
	}
	if err := rd.WriteFile(LogFile, mergedLog(rd, len(units))); err != nil {
		return nil, 0, err
	}
	oc := &Outcome{Dir: rd.Final, Report: rep, ViewsErr: drawViews(views, rd.Partial, r.Cohort.Regions)}
	return oc, len(units), rd.Commit()
}

// missingUnits describes the units that have not finished, with the error
// of those that failed, and the commands that run just those again.
func missingUnits(rd *RunDir, rec *planRecord, units, missing []BatchUnit) error {
	e := &MissingUnitsError{Missing: len(missing), Units: len(units), Ranges: arrayRanges(missing)}
	e.Advice = append(e.Advice, fmt.Sprintf("%d of %d units have not finished:", len(missing), len(units)))
	indices := make([]string, len(missing))
	for i, u := range missing {
		indices[i] = strconv.Itoa(u.Index)
		state := "not run yet, still running, or stopped before the end"
		if msg, err := os.ReadFile(rd.WorkPath(failedFile(u.Index))); err == nil {
			state = "failed: " + strings.TrimSpace(string(msg))
		}
		e.Advice = append(e.Advice, fmt.Sprintf("  unit %d, %s: %s", u.Index, u, state))
	}
	e.Advice = append(e.Advice,
		fmt.Sprintf("Resubmit just these:  sbatch --array=%s %s", e.Ranges, ShellQuote(rd.WorkPath(JobFile))),
		fmt.Sprintf("or run them here:     for k in %s; do skein run %s --out %s --unit $k; done",
			strings.Join(indices, " "), ShellQuote(rec.Experiment), ShellQuote(rd.Final)),
		fmt.Sprintf("then merge again. Finished units are kept in %s.", rd.Partial))
	return e
}

// mergedLog is LogFile of a merged run: the log of an earlier run in the
// work folder, if any, each unit's log in unit order, and the merge.
func mergedLog(rd *RunDir, units int) []byte {
	var buf bytes.Buffer
	if old, err := os.ReadFile(rd.WorkPath(LogFile)); err == nil {
		buf.Write(old)
	}
	for k := range units {
		if raw, err := os.ReadFile(rd.WorkPath(unitLog(k))); err == nil {
			buf.Write(raw)
		}
	}
	line, _ := json.Marshal(map[string]any{"time": time.Now().Format(time.RFC3339Nano), "level": "INFO", "msg": "units merged", "units": units, "out": rd.Final})
	buf.Write(append(line, '\n'))
	return buf.Bytes()
}

// arrayRanges writes the indices of units as sbatch --array wants them,
// runs of consecutive indices as ranges: 1-4,7,9-10.
func arrayRanges(units []BatchUnit) string {
	var parts []string
	for i := 0; i < len(units); {
		j := i
		for j+1 < len(units) && units[j+1].Index == units[j].Index+1 {
			j++
		}
		if j == i {
			parts = append(parts, strconv.Itoa(units[i].Index))
		} else {
			parts = append(parts, strconv.Itoa(units[i].Index)+"-"+strconv.Itoa(units[j].Index))
		}
		i = j + 1
	}
	return strings.Join(parts, ",")
}
