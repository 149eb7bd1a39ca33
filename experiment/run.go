package experiment

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"strings"
	"time"

	"github.com/skein-neuro/skein/model"
	"github.com/skein-neuro/skein/train"
)

// RunOptions are the settings of one run that the experiment file does
// not hold: skein run's flags.
type RunOptions struct {
	// Out is the run folder to create; "" means DefaultOut.
	Out string
	// Force replaces an existing run folder once the new run has finished;
	// Resume finishes an interrupted run in the same folder.
	Force, Resume bool
	// Jobs is how many units train at once (0: one per CPU); results do
	// not depend on it. BLASThreads is recorded in the run's log.
	Jobs, BLASThreads int
	// Bins is the number of equal-frequency bins of NMI and AMI; 0 means
	// eval.DefaultBins.
	Bins int
	// Against is an earlier run of the experiment (ReadAgainst) that the
	// run is compared with and held to the experiment's drift rule; nil
	// for none.
	Against *Folder
	// OnEvent, when set, receives the training progress, never
	// concurrently.
	OnEvent func(train.Event)
	// Messages receives a line for each step a person follows (the
	// permutation test starting, a refit); nil discards them.
	Messages io.Writer
	// Views, when set, draws the figures and report.html into the work
	// folder before it is committed (package experiment/report). A
	// failure is kept in Outcome.ViewsErr and loses nothing: skein report
	// can draw them again.
	Views func(dir string, regions []string) error
}

// An Outcome is what a finished Run made.
type Outcome struct {
	// Dir is the committed run folder.
	Dir string
	// Report is everything concluded from the run; Report.WriteMarkdown
	// gives summary.md.
	Report *Report
	// Verdict is the drift rule's verdict against RunOptions.Against; nil
	// without it.
	Verdict *DriftReport
	// ViewsErr is the failure of RunOptions.Views, when it failed.
	ViewsErr error
}

// RunName is the name the run folders of the experiment file at path take
// by default: name, the experiment's name key, when set; else the file's
// base name without its extension, or, for a file named experiment.toml,
// the name of the folder holding it (taken from its absolute path, so that
// "skein run experiment.toml" in a cohort's folder names the run after
// that folder). A name that would be empty or hidden (starting with a
// dot) is "experiment" instead, with any leading dots dropped first.
func RunName(path, name string) string {
	if name != "" {
		return name
	}
	stem := strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	if stem == "experiment" {
		if abs, err := filepath.Abs(path); err == nil {
			stem = filepath.Base(filepath.Dir(abs))
		}
	}
	if stem = strings.TrimLeft(stem, "."); stem == "" || stem == string(filepath.Separator) {
		stem = "experiment"
	}
	return stem
}

// DefaultOut is the run folder of a run given none: runs/NAME-TIME under
// the current folder, NAME from RunName and TIME the local time as
// YYYYMMDD-HHMMSS. Two runs started in the same second share it;
// CreateRunDir then gives the second one a suffix.
func DefaultOut(path, name string, now time.Time) string {
	return filepath.Join("runs", RunName(path, name)+"-"+now.Format("20060102-150405"))
}

// Run runs the experiment read from path: it checks the cohort, expands
// sweeps, cross-validates every model into the work folder of the run
// folder (checkpointing each unit), refits when asked, evaluates (the
// permutation test, the sample-size curve, the comparison and cautions),
// writes every result file, the sweep ranking, the versions and the drift
// verdict, draws the views and commits the folder. Nothing outside the
// work folder changes before the commit, so a failed run loses no earlier
// result; an interrupted one resumes with RunOptions.Resume. Errors caused
// by the input match ErrInput; a diverged network's wraps
// model.ErrDiverged.
func Run(ctx context.Context, path string, exp *Experiment, opt RunOptions) (*Outcome, error) {
	say := messages(opt.Messages, "skein run")
	if opt.Out == "" && opt.Resume {
		return nil, badInput(errors.New("--resume needs the --out folder of the interrupted run"))
	}
	if len(exp.Models) == 0 {
		return nil, badInputf("%s: no [[model]] to run", path)
	}
	in, err := CheckInputs(path, exp)
	if err != nil {
		return nil, err
	}
	exp, variants, cohort := in.Experiment, in.Variants, in.Cohort
	var rd *RunDir
	if opt.Out == "" {
		rd, err = CreateRunDir(DefaultOut(path, exp.Name, time.Now()))
	} else {
		rd, err = OpenRunDir(opt.Out, opt.Force, opt.Resume)
	}
	if err != nil {
		return nil, badInput(err)
	}
	defer rd.Close()
	if err := rd.CheckResume(ExperimentFile, in.Resolved); err != nil {
		return nil, badInput(err)
	}
	if err := checkInputsUnchanged(rd, in, "finished units", "pass --force to start over"); err != nil {
		return nil, err
	}
	for _, f := range []struct {
		name    string
		content []byte
	}{{ExperimentFile, in.Resolved}, {CohortFile, in.CohortJSON}, {InputsFile, in.InputsJSON}} {
		if err := rd.WriteFile(f.name, f.content); err != nil {
			return nil, err
		}
	}
	logOut, err := os.OpenFile(rd.WorkPath(LogFile), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return nil, err
	}
	defer logOut.Close()
	log := slog.New(slog.NewJSONHandler(logOut, nil))
	log.Info("run started", "experiment", path, "out", rd.Final, "seed", exp.Seed,
		"participants", len(cohort.Participants), "excluded", len(cohort.Excluded), "jobs", opt.Jobs,
		"blas_threads", opt.BLASThreads, "resume", opt.Resume)
	say("%d participants (%d excluded), %d regions, %d models, %d-fold × %d",
		len(cohort.Participants), len(cohort.Excluded), cohort.P(), len(exp.Models), *exp.CV.Folds, *exp.CV.Repeats)
	for _, x := range cohort.Excluded {
		say("excluded %s: %s", x.ID, x.Reason)
	}

	runner := &train.Runner{
		Design:      exp.Design(),
		Cohort:      cohort,
		Jobs:        opt.Jobs,
		Logger:      log,
		OnEvent:     opt.OnEvent,
		Checkpoints: rd.Checkpoints(),
		Models:      rd.ModelsDir(),
	}
	fail := func(step string, err error) error {
		log.Error(step+" failed", "error", err.Error())
		return err
	}
	interrupted := func(err error) error {
		if !errors.Is(err, context.Canceled) {
			return err
		}
		return &interruptedError{fmt.Sprintf("interrupted; finished units are kept in %s: resume with skein run %s --resume --out %s",
			rd.Partial, ShellQuote(path), ShellQuote(rd.Final)), err}
	}
	res, err := runner.Run(ctx)
	if err != nil {
		fail("run", err)
		if errors.Is(err, model.ErrDiverged) {
			return nil, fmt.Errorf("%w (nothing written to %s; the work folder %s keeps finished units)", err, rd.Final, rd.Partial)
		}
		return nil, interrupted(err)
	}
	if exp.Output.Refit {
		say("refitting on all participants")
		if err := runner.Refit(ctx); err != nil {
			return nil, interrupted(fail("refit", err))
		}
	}
	if exp.Permutation.Count > 0 {
		say("permutation test, %d permutations", exp.Permutation.Count)
	}
	rep, err := Evaluate(ctx, exp, runner, res, opt.Bins)
	if err != nil {
		return nil, interrupted(fail("evaluation", err))
	}
	oc := &Outcome{Dir: rd.Final, Report: rep}
	if oc.Verdict, err = writeResults(rd, exp, variants, rep, opt.Against); err != nil {
		return nil, err
	}
	if oc.ViewsErr = drawViews(opt.Views, rd.Partial, cohort.Regions); oc.ViewsErr != nil {
		log.Error("report failed", "error", oc.ViewsErr.Error())
	}
	log.Info("run finished")
	return oc, rd.Commit()
}

// interruptedError is a run stopped by its context (Ctrl-C, SIGTERM): its
// message says how to resume, and it wraps the context's error.
type interruptedError struct {
	msg string
	err error
}

func (e *interruptedError) Error() string { return e.msg }
func (e *interruptedError) Unwrap() error { return e.err }

// writeResults writes into the work folder of rd everything a run
// concludes besides its checkpoints and models: the report's files, the
// sweep ranking, the versions, the sample-size plot and, against an
// earlier run, the drift verdict, which it returns.
func writeResults(rd *RunDir, exp *Experiment, variants []Variant, rep *Report, against *Folder) (*DriftReport, error) {
	if err := rep.Write(rd); err != nil {
		return nil, err
	}
	if err := writeSweep(rd, exp, variants, rep.Result); err != nil {
		return nil, err
	}
	if err := rd.WriteFile(VersionsFile, []byte(Versions(exp.Seed))); err != nil {
		return nil, err
	}
	return writeNightly(rd, rep, against, exp.Drift)
}

// drawViews runs views on the work folder dir, turning a panic into an
// error so that the run is kept.
func drawViews(views func(dir string, regions []string) error, dir string, regions []string) (err error) {
	if views == nil {
		return nil
	}
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("drawing the report: %v", p)
		}
	}()
	return views(dir, regions)
}

// Versions records what made a run: Go, the machine, the seed, and
// skein's and its modules' versions (the content of VersionsFile).
func Versions(seed int64) string {
	var b strings.Builder
	fmt.Fprintf(&b, "go %s %s/%s, %d CPUs\nseed %d\n", runtime.Version(), runtime.GOOS, runtime.GOARCH, runtime.NumCPU(), seed)
	if info, ok := debug.ReadBuildInfo(); ok {
		fmt.Fprintf(&b, "%s %s\n", info.Main.Path, info.Main.Version)
		for _, s := range info.Settings {
			if s.Key == "vcs.revision" || s.Key == "vcs.modified" || s.Key == "-tags" {
				fmt.Fprintf(&b, "%s %s\n", s.Key, s.Value)
			}
		}
		for _, dep := range info.Deps {
			fmt.Fprintf(&b, "%s %s\n", dep.Path, dep.Version)
		}
	}
	return b.String()
}

// messages returns a printf that writes "PREFIX: message" lines to w, or
// nothing when w is nil.
func messages(w io.Writer, prefix string) func(format string, args ...any) {
	return func(format string, args ...any) {
		if w != nil {
			fmt.Fprintf(w, prefix+": "+format+"\n", args...)
		}
	}
}
