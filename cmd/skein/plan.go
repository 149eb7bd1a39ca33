package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io/fs"
	"log/slog"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/pelletier/go-toml/v2"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/train"
)

// Files of a batch plan, written by skein plan into the work folder of the
// run (DIR.partial) and kept in the merged run folder.
const (
	planFile  = "plan.json" // what units and merge read back: planRecord
	unitsFile = "units.tsv" // the units, for people and scripts
	jobFile   = "job.sh"    // the SLURM job-array script
	logsDir   = "logs"      // one log per unit, and SLURM's output
	nullsDir  = "nulls"     // null scores of each permutation block
	failedDir = "failed"    // failed/K.txt holds the error of a failed unit
	unitsTSV  = "index\tkind\tmodel\trepeat\tfold\tpermutations\tcommand\n"
)

// planRecord is plan.json: everything a unit and merge need besides the
// resolved experiment file, which plan writes beside it.
type planRecord struct {
	// Experiment and ExperimentDir are the absolute paths of the
	// experiment file and of the folder its relative paths start from.
	Experiment    string `json:"experiment"`
	ExperimentDir string `json:"experiment_dir"`
	// Out is the absolute path of the run folder merge will create.
	Out string `json:"out"`
	// Block is the permutations-per-unit request (train.BatchUnits).
	Block int `json:"block"`
	// Bins is the number of NMI bins of the null scores and the report.
	Bins int `json:"bins"`
	// Replace is set when plan was given --force: merge replaces an
	// existing run folder at Out.
	Replace bool `json:"replace"`
	// Units is the number of units.
	Units int `json:"units"`
}

// slurmOptions are the resources every array task asks for.
type slurmOptions struct {
	time, mem, partition, account string
	cpus, maxRunning              int
	extra                         []string
}

func cmdPlan(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("plan", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "run folder merge will create; the plan goes into its work folder OUT.partial (required)")
	block := fs.Int("block", 0, "permutations per unit (default 10 for networks, permutation.chunk for baselines, whose blocks are rounded up to a multiple of it)")
	bins := fs.Int("bins", eval.DefaultBins, "equal-frequency bins for NMI")
	force := fs.Bool("force", false, "start the plan over, deleting finished units of an earlier plan, and let merge replace an existing run folder")
	skein := fs.String("skein", "", "the skein program the job script runs (default this one)")
	var so slurmOptions
	fs.StringVar(&so.time, "time", "01:00:00", "SLURM time limit of one unit")
	fs.StringVar(&so.mem, "mem", "4G", "SLURM memory of one unit")
	fs.IntVar(&so.cpus, "cpus", 1, "SLURM CPUs of one unit (also its --jobs)")
	fs.StringVar(&so.partition, "partition", "", "SLURM partition (default the cluster's)")
	fs.StringVar(&so.account, "account", "", "SLURM account (default yours)")
	fs.IntVar(&so.maxRunning, "max-running", 0, "at most this many units at once (0: no limit)")
	fs.Func("sbatch", "an extra `OPTION` line for the job script, e.g. --qos=short (repeatable)", func(s string) error {
		if strings.ContainsAny(s, "\n\r") {
			return errors.New("one option per --sbatch, without line breaks")
		}
		so.extra = append(so.extra, s)
		return nil
	})
	fs.Usage = func() {
		fmt.Fprintln(cio.stderr, "usage: skein plan EXPERIMENT.toml --out DIR [--block N] [--time T] [--mem M] [--cpus C] [--partition P] [--force]")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one experiment file")
	if err != nil {
		return err
	}
	if *out == "" {
		return badInput(errors.New("--out is required: the plan's units and merge find each other through it"))
	}
	if so.cpus < 1 {
		return badInput(fmt.Errorf("--cpus: need at least 1, found %d", so.cpus))
	}
	if so.maxRunning < 0 {
		return badInput(fmt.Errorf("--max-running: must not be negative, found %d", so.maxRunning))
	}
	expPath, err := filepath.Abs(positional[0])
	if err != nil {
		return err
	}
	outAbs, err := filepath.Abs(*out)
	if err != nil {
		return err
	}
	if *skein == "" {
		if *skein, err = os.Executable(); err != nil {
			return fmt.Errorf("finding this program for the job script (pass --skein): %w", err)
		}
	}
	if *skein, err = filepath.Abs(*skein); err != nil {
		return err
	}
	b, err := openBatch(expPath)
	if err != nil {
		return err
	}

	partial := outAbs + ".partial"
	_, statErr := os.Stat(partial)
	resume := statErr == nil && !*force
	rd, err := experiment.OpenRunDir(outAbs, *force, resume)
	if err != nil {
		return badInput(err)
	}
	if err := rd.CheckResume(resolvedFile, b.resolved); err != nil {
		return badInput(fmt.Errorf("%w (its finished units would not belong to this plan)", err))
	}
	if old, err := os.ReadFile(rd.WorkPath(cohortFile)); resume && err == nil && !bytes.Equal(old, b.cohortJSON) {
		return badInput(fmt.Errorf("%s: the cohort's files changed since its units ran (%s differs); pass --force to start over",
			rd.Partial, cohortFile))
	}
	units, err := experiment.BatchUnits(b.runner, b.exp.Permutation, *block)
	if err != nil {
		return badInput(err)
	}
	if old, err := readPlan(outAbs); resume && err == nil && old.Bins != *bins {
		// Null scores of the earlier plan used other NMI bins.
		if err := os.RemoveAll(rd.WorkPath(nullsDir)); err != nil {
			return err
		}
		fmt.Fprintf(cio.stdout, "skein plan: --bins changed from %d to %d: the permutation blocks will run again\n", old.Bins, *bins)
	}
	rec := planRecord{Experiment: expPath, ExperimentDir: b.exp.Dir, Out: outAbs, Block: *block, Bins: *bins, Replace: *force, Units: len(units)}
	recJSON, err := json.MarshalIndent(rec, "", "  ")
	if err != nil {
		return err
	}
	if err := os.MkdirAll(rd.WorkPath(logsDir), 0o755); err != nil {
		return err
	}
	files := []struct {
		name    string
		content []byte
	}{
		{resolvedFile, b.resolved},
		{cohortFile, b.cohortJSON},
		{unitsFile, unitsTable(units, *skein, rec)},
		{jobFile, jobScript(len(units), *skein, rec, rd, so)},
		{planFile, recJSON}, // last: a folder with a plan.json is a complete plan
	}
	for _, f := range files {
		if err := rd.WriteFile(f.name, f.content); err != nil {
			return err
		}
	}
	if err := os.Chmod(rd.WorkPath(jobFile), 0o755); err != nil {
		return err
	}
	models, perms := 0, 0
	for _, u := range units {
		if u.Kind == experiment.BatchModel {
			models++
		} else {
			perms++
		}
	}
	fmt.Fprintf(cio.stdout, "skein plan: %d units (%d model × fold units, %d permutation blocks) in %s\n", len(units), models, perms, rd.Partial)
	if resume {
		fmt.Fprintf(cio.stdout, "The work folder held this experiment already: its finished units are kept and will be skipped.\n")
	}
	fmt.Fprintf(cio.stdout, "\nOn a SLURM cluster:    sbatch %s\n", shellQuote(rd.WorkPath(jobFile)))
	if len(units) > 1000 {
		fmt.Fprintf(cio.stdout, "                       (clusters often cap an array at 1001 tasks, MaxArraySize: submit it in parts with --array=0-999, --array=1000-1999, ...)\n")
	}
	fmt.Fprintf(cio.stdout, "Without a scheduler:   tail -n +2 %s | cut -f1 | xargs -P 2 -I{} %s run %s --out %s --jobs 1 --unit {}\n",
		shellQuote(rd.WorkPath(unitsFile)), shellQuote(*skein), shellQuote(expPath), shellQuote(outAbs))
	fmt.Fprintf(cio.stdout, "Then:                  %s merge %s\n", shellQuote(*skein), shellQuote(outAbs))
	return nil
}

// batch is an experiment opened for planning, running a unit or merging.
type batch struct {
	exp        *experiment.Experiment // sweeps expanded
	variants   []experiment.Variant   // the sweeps' variants
	cohort     *data.Cohort
	resolved   []byte // the resolved experiment file
	cohortJSON []byte // cohort.json
	runner     *train.Runner
}

// openBatch reads and checks the experiment at expPath.
func openBatch(expPath string) (*batch, error) {
	exp, err := experiment.ReadExperiment(expPath)
	if err != nil {
		return nil, badInput(err)
	}
	return openBatchExperiment(expPath, exp)
}

func openBatchExperiment(expPath string, exp *experiment.Experiment) (*batch, error) {
	if len(exp.Models) == 0 {
		return nil, badInput(fmt.Errorf("%s: no [[model]] to run", expPath))
	}
	cohort, report, err := data.Check(exp.Cohort, exp.Preprocess, exp.Dir)
	if err != nil {
		return nil, badInput(err)
	}
	b := &batch{cohort: cohort}
	if b.exp, b.variants, err = exp.Expand(); err != nil {
		return nil, badInput(fmt.Errorf("%s: %w", expPath, err))
	}
	if b.resolved, err = toml.Marshal(b.exp); err != nil {
		return nil, err
	}
	if b.cohortJSON, err = json.MarshalIndent(report, "", "  "); err != nil {
		return nil, err
	}
	b.runner = &train.Runner{Design: b.exp.Design(), Cohort: cohort}
	return b, nil
}

// readPlan reads plan.json of the work folder of out.
func readPlan(out string) (*planRecord, error) {
	partial := filepath.Clean(out) + ".partial"
	raw, err := os.ReadFile(filepath.Join(partial, planFile))
	if errors.Is(err, fs.ErrNotExist) {
		if _, err := os.Stat(filepath.Join(out, planFile)); err == nil {
			return nil, badInput(fmt.Errorf("%s is merged already: its plan is finished", out))
		}
		return nil, badInput(fmt.Errorf("%s holds no plan: run skein plan EXPERIMENT.toml --out %s first", partial, out))
	}
	if err != nil {
		return nil, err
	}
	var rec planRecord
	if err := json.Unmarshal(raw, &rec); err != nil {
		return nil, fmt.Errorf("%s: %w", filepath.Join(partial, planFile), err)
	}
	return &rec, nil
}

// hasPlan reports whether the work folder of out holds a plan.
func hasPlan(out string) bool {
	_, err := os.Stat(filepath.Join(filepath.Clean(out)+".partial", planFile))
	return err == nil
}

// checkPlanned makes sure the work folder holds the plan of this very
// experiment and cohort.
func (b *batch) checkPlanned(rd *experiment.RunDir, rec *planRecord) error {
	if err := rd.CheckResume(resolvedFile, b.resolved); err != nil {
		return badInput(fmt.Errorf("the experiment differs from the one planned: %w", err))
	}
	old, err := os.ReadFile(rd.WorkPath(cohortFile))
	if err != nil {
		return err
	}
	if !bytes.Equal(old, b.cohortJSON) {
		return badInput(fmt.Errorf("the cohort's files changed since %s was planned (%s differs); plan again with --force",
			rd.Final, rd.WorkPath(cohortFile)))
	}
	units, err := experiment.BatchUnits(b.runner, b.exp.Permutation, rec.Block)
	if err != nil {
		return err
	}
	if len(units) != rec.Units {
		return fmt.Errorf("%s: the plan has %d units, the experiment %d", rd.WorkPath(planFile), rec.Units, len(units))
	}
	return nil
}

// nullFile names the null scores of a permutation block.
func nullFile(u experiment.BatchUnit) string {
	return filepath.Join(nullsDir, safeName(u.Model), fmt.Sprintf("p%d-%d.csv", u.First+1, u.End))
}

func failedFile(k int) string { return filepath.Join(failedDir, strconv.Itoa(k)+".txt") }

func unitLog(k int) string { return filepath.Join(logsDir, "unit-"+strconv.Itoa(k)+".log") }

// safeName makes a model name safe as a file name.
func safeName(name string) string {
	return strings.Map(func(r rune) rune {
		if r == '/' || r == '\\' || r == ':' || r < ' ' {
			return '_'
		}
		return r
	}, name)
}

// unitIndex returns the unit a run was asked for: --unit, else
// SLURM_ARRAY_TASK_ID when the run folder holds a plan (so that a plain
// skein run inside some other job array is not mistaken for a unit).
func unitIndex(fs *flag.FlagSet, unit int, out string) (int, bool, error) {
	set := false
	fs.Visit(func(f *flag.Flag) { set = set || f.Name == "unit" })
	if set {
		if out == "" {
			return 0, false, badInput(errors.New("--unit needs the --out folder of a plan"))
		}
		if unit < 0 {
			return 0, false, badInput(fmt.Errorf("--unit: must not be negative, found %d", unit))
		}
		return unit, true, nil
	}
	task, ok := os.LookupEnv("SLURM_ARRAY_TASK_ID")
	if !ok || out == "" || !hasPlan(out) {
		return 0, false, nil
	}
	k, err := strconv.Atoi(task)
	if err != nil || k < 0 {
		return 0, false, badInput(fmt.Errorf("SLURM_ARRAY_TASK_ID: want a unit index ≥ 0, found %q", task))
	}
	return k, true, nil
}

// runUnit runs unit k of the plan in the work folder of out and writes only
// that unit's files: its checkpoint (and saved models) or its block's null
// scores. A finished unit is not run again. A failure is kept in
// failed/K.txt for merge to report; success removes it.
func runUnit(ctx context.Context, cio commandIO, expPath, out string, k, jobs int) error {
	rec, err := readPlan(out)
	if err != nil {
		return err
	}
	// The cohort report names files as found from the experiment's path:
	// make it the same as plan's.
	if expPath, err = filepath.Abs(expPath); err != nil {
		return err
	}
	b, err := openBatch(expPath)
	if err != nil {
		return err
	}
	rd, err := experiment.OpenRunDir(out, rec.Replace, true)
	if err != nil {
		return badInput(err)
	}
	if err := b.checkPlanned(rd, rec); err != nil {
		return err
	}
	if k >= rec.Units {
		return badInput(fmt.Errorf("--unit %d: the plan in %s has units 0 to %d", k, rd.Partial, rec.Units-1))
	}
	units, err := experiment.BatchUnits(b.runner, b.exp.Permutation, rec.Block)
	if err != nil {
		return err
	}
	u := units[k]
	logOut, err := os.OpenFile(rd.WorkPath(unitLog(k)), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return err
	}
	defer logOut.Close()
	log := slog.New(slog.NewJSONHandler(logOut, nil)).With("unit", k)
	log.Info("unit started", "kind", u.Kind, "model", u.Model, "experiment", expPath, "jobs", jobs)
	r := b.runner
	r.Jobs, r.Logger = jobs, log
	resumed, err := runPlannedUnit(ctx, rd, r, b.exp.Permutation, u, rec.Bins)
	if err != nil {
		log.Error("unit failed", "error", err.Error())
		if werr := rd.WriteFile(failedFile(k), []byte(err.Error()+"\n")); werr != nil {
			return errors.Join(err, werr)
		}
		return fmt.Errorf("unit %d (%s): %w", k, describeUnit(u), err)
	}
	if err := os.Remove(rd.WorkPath(failedFile(k))); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	log.Info("unit finished", "resumed", resumed)
	state := "finished"
	if resumed {
		state = "had finished already"
	}
	fmt.Fprintf(cio.stderr, "skein run: unit %d (%s) %s\n", k, describeUnit(u), state)
	return nil
}

// runPlannedUnit runs u, unless it has finished already (then it reports
// true).
func runPlannedUnit(ctx context.Context, rd *experiment.RunDir, r *train.Runner, pc experiment.Permutation, u experiment.BatchUnit, bins int) (bool, error) {
	if u.Kind == experiment.BatchModel {
		resumed := false
		r.Select = []int{u.Select}
		r.Checkpoints = rd.Checkpoints()
		r.Models = rd.ModelsDir()
		r.OnEvent = func(e train.Event) { resumed = resumed || e.Resumed }
		_, err := r.Run(ctx)
		return resumed, err
	}
	name := nullFile(u)
	if _, err := os.Stat(rd.WorkPath(name)); err == nil {
		return true, nil
	}
	rows, err := experiment.PermutationBlock(ctx, r, pc, []string{u.Model}, u.First, u.End, bins)
	if err != nil {
		return false, err
	}
	raw, err := eval.WriteNullScores(rows)
	if err != nil {
		return false, err
	}
	return false, rd.WriteFile(name, raw)
}

func describeUnit(u experiment.BatchUnit) string {
	if u.Kind == experiment.BatchModel {
		return fmt.Sprintf("model %q, repeat %d, fold %d", u.Model, u.Unit.Repeat+1, u.Unit.Fold+1)
	}
	return fmt.Sprintf("model %q, permutations %d to %d", u.Model, u.First+1, u.End)
}

// unitsTable writes units.tsv: one line per unit with its index, kind,
// model, repeat and fold (from 1; empty for a permutation block), the
// permutations of a block (FIRST-LAST, from 1) and the command that runs
// the unit.
func unitsTable(units []experiment.BatchUnit, skein string, rec planRecord) []byte {
	var b strings.Builder
	b.WriteString(unitsTSV)
	for _, u := range units {
		repeat, fold, perms := "", "", ""
		if u.Kind == experiment.BatchModel {
			repeat, fold = strconv.Itoa(u.Unit.Repeat+1), strconv.Itoa(u.Unit.Fold+1)
		} else {
			perms = fmt.Sprintf("%d-%d", u.First+1, u.End)
		}
		cmd := fmt.Sprintf("%s run %s --out %s --unit %d", shellQuote(skein), shellQuote(rec.Experiment), shellQuote(rec.Out), u.Index)
		fmt.Fprintf(&b, "%d\t%s\t%s\t%s\t%s\t%s\t%s\n", u.Index, u.Kind, tsvCell(u.Model), repeat, fold, perms, cmd)
	}
	return []byte(b.String())
}

func tsvCell(s string) string {
	return strings.NewReplacer("\t", " ", "\n", " ", "\r", " ").Replace(s)
}

// jobScript writes the SLURM job-array script: one array task per unit,
// each running skein run --unit with SLURM_ARRAY_TASK_ID.
func jobScript(units int, skein string, rec planRecord, rd *experiment.RunDir, so slurmOptions) []byte {
	var b strings.Builder
	b.WriteString("#!/bin/bash\n")
	name := strings.TrimSuffix(filepath.Base(rec.Out), filepath.Ext(rec.Out))
	fmt.Fprintf(&b, "#SBATCH --job-name=%s\n", sbatchValue("skein-"+name))
	array := fmt.Sprintf("0-%d", units-1)
	if so.maxRunning > 0 {
		array += "%" + strconv.Itoa(so.maxRunning)
	}
	fmt.Fprintf(&b, "#SBATCH --array=%s\n", array)
	fmt.Fprintf(&b, "#SBATCH --output=%s\n", sbatchValue(filepath.Join(rd.Partial, logsDir, "slurm-%A_%a.out")))
	fmt.Fprintf(&b, "#SBATCH --cpus-per-task=%d\n", so.cpus)
	if so.time != "" {
		fmt.Fprintf(&b, "#SBATCH --time=%s\n", sbatchValue(so.time))
	}
	if so.mem != "" {
		fmt.Fprintf(&b, "#SBATCH --mem=%s\n", sbatchValue(so.mem))
	}
	if so.partition != "" {
		fmt.Fprintf(&b, "#SBATCH --partition=%s\n", sbatchValue(so.partition))
	}
	if so.account != "" {
		fmt.Fprintf(&b, "#SBATCH --account=%s\n", sbatchValue(so.account))
	}
	for _, x := range so.extra {
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
`, units, rec.Experiment, rd.WorkPath(jobFile), rd.WorkPath(jobFile), skein, rec.Out,
		shellQuote(skein), shellQuote(rec.Experiment), shellQuote(rec.Out))
	return []byte(b.String())
}

// sbatchValue quotes a value of an #SBATCH line when it holds a space.
func sbatchValue(s string) string {
	if strings.ContainsAny(s, " \t\"") {
		return strconv.Quote(s)
	}
	return s
}

// shellQuote quotes s for a POSIX shell when it needs quoting.
func shellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789_./=:@%+,-") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// Files of a run with sweeps.
const sweepFile = "sweep.csv"

// writeSweep writes the ranking of the sweeps' variants by inner
// validation loss (experiment.RankSweep) as sweep.csv and as a section of
// summary.md. It writes nothing without sweeps.
func writeSweep(rd *experiment.RunDir, exp *experiment.Experiment, variants []experiment.Variant, res *train.Result) error {
	if len(variants) == 0 {
		return nil
	}
	ranks := experiment.RankSweep(variants, exp, res)
	var csvBuf bytes.Buffer
	w := csv.NewWriter(&csvBuf)
	w.Write([]string{"model", "variant", "rank", "inner_valid_loss", "units", "settings"})
	md := &strings.Builder{}
	md.WriteString("\n## Sweep\n\nVariants ranked by inner validation loss alone: the mean, over repeats × folds, of the validation loss " +
		"(standardized scores) of the epoch each network kept. The outer test folds never choose a setting; the variants' " +
		"test scores are in the tables above. Baselines have no inner validation loss and are not ranked.\n\n")
	md.WriteString("| model | rank | variant | inner validation loss | units |\n| --- | --- | --- | --- | --- |\n")
	for _, r := range ranks {
		rank, loss := "", ""
		mdRank, mdLoss := "not ranked", "n/a"
		if r.Rank > 0 {
			rank, loss = strconv.Itoa(r.Rank), strconv.FormatFloat(r.InnerLoss, 'g', -1, 64)
			mdRank, mdLoss = rank, strconv.FormatFloat(r.InnerLoss, 'g', 4, 64)
		}
		settings := make([]string, len(r.Keys))
		for i, k := range r.Keys {
			settings[i] = fmt.Sprintf("%s=%v", k, r.Values[i])
		}
		w.Write([]string{r.Base, r.Name, rank, loss, strconv.Itoa(r.Units), strings.Join(settings, ";")})
		cell := strings.NewReplacer("|", "\\|", "\n", " ").Replace
		fmt.Fprintf(md, "| %s | %s | %s | %s | %d |\n", cell(r.Base), mdRank, cell(r.Name), mdLoss, r.Units)
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	if err := rd.WriteFile(sweepFile, csvBuf.Bytes()); err != nil {
		return err
	}
	summary, err := os.ReadFile(rd.WorkPath(experiment.SummaryFile))
	if err != nil {
		return err
	}
	return rd.WriteFile(experiment.SummaryFile, append(summary, md.String()...))
}
