// Command scenarios cross-validates skein's baselines and a set of graph
// networks on invented cohorts whose score follows a known truth (package
// bench/scenario) and prints one table per scenario: how close each model
// comes to the generator's oracle r, and whether it beats the reference
// baseline.
//
// Usage:
//
//	scenarios [-scenarios fc-linear,sc-linear,...] [-n 300] [-p 60] [-seed 1]
//	          [-oracle 0.6] [-models FILE] [-baselines-only] [-quick] [-jobs J]
//
// Every scenario runs the baselines mean, ridge-fc (ridge on functional
// edges), ridge-both (functional and structural edges), kernel-ridge
// (correlation kernel on functional edges) and cpm (functional edges), and
// the networks ([[model]] tables with a [model.network] table; other
// tables of the file are ignored) of FILE: by default
// examples/networks.toml when it exists, else a built-in pair, a
// two-branch e2n network (functional, and functional propagated over the
// structural graph) and a single-branch one (functional). All models see
// the same folds: 5 folds × 2 repeats.
//
// Columns: r, the headline r (Pearson r within folds, pooled over the
// test folds of both repeats); fold r, the mean ± SD of Pearson r over the
// 10 folds; MAE in score units (the score is 50 + 10·(g + noise)); Δr
// and p, the model's fold-wise r minus the reference baseline's and the
// two-sided p of the corrected resampled t-test (eval.CorrectedTTest),
// the reference being the baseline with the lowest error on the inner
// validation parts (never the test folds); s/unit, the mean wall time of
// one fold's training and testing (units run Jobs at a time, so it
// includes contention). The oracle r heads each table: the generator's ρ
// and the sample correlation of noiseless and observed score.
//
// -quick sizes the cohorts for a smoke run (N = 150, p = 20, at most 30
// epochs per network). skein is research software, not a diagnostic
// device.
package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strings"
	"sync"
	"text/tabwriter"
	"time"

	"gonum.org/v1/gonum/stat"

	"github.com/skein-neuro/skein/bench/scenario"
	"github.com/skein-neuro/skein/eval"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/model/linear"
	"github.com/skein-neuro/skein/train"
)

// defaultModelsFile is read for the networks when -models is not given and
// it exists (relative to the working folder, the repository root).
const defaultModelsFile = "examples/networks.toml"

// builtinNetworks are the networks run when no models file is given and
// defaultModelsFile does not exist.
const builtinNetworks = `
[[model]]
name = "e2n-two-branch"
[model.network]
head = [32]
[model.network.optimizer]
weight_decay = 1e-2
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 16}, {kind = "n2g", size = 32}]
[[model.network.branch]]
input = "propagated"
operator = "renormalized-adjacency"
layers = [{kind = "e2n", channels = 16}, {kind = "n2g", size = 32}]

[[model]]
name = "e2n-fc"
[model.network]
head = [32]
[model.network.optimizer]
weight_decay = 1e-2
[[model.network.branch]]
input = "functional"
layers = [{kind = "e2n", channels = 16}, {kind = "n2g", size = 32}]
`

// options are the command's flags.
type options struct {
	scenarios     []scenario.Kind
	n, p          int
	seed          int64
	oracle        float64
	models        string
	baselinesOnly bool
	quick         bool
	jobs          int
}

func main() {
	var o options
	var kinds string
	fs := flag.NewFlagSet("scenarios", flag.ContinueOnError)
	fs.StringVar(&kinds, "scenarios", joinKinds(scenario.Kinds), "comma-separated scenarios to run")
	fs.IntVar(&o.n, "n", 300, "participants per cohort")
	fs.IntVar(&o.p, "p", 60, "regions")
	fs.Int64Var(&o.seed, "seed", 1, "seed of the cohorts and of the runs")
	fs.Float64Var(&o.oracle, "oracle", 0.6, "oracle r of every non-null scenario, in (0, 1]")
	fs.StringVar(&o.models, "models", "", "TOML file whose [[model]] networks are run (default "+defaultModelsFile+" if it exists, else a built-in pair)")
	fs.BoolVar(&o.baselinesOnly, "baselines-only", false, "run the baselines only")
	fs.BoolVar(&o.quick, "quick", false, "smoke run: N = 150, p = 20, at most 30 epochs per network")
	fs.IntVar(&o.jobs, "jobs", 0, "units run at once (0: the number of CPUs)")
	if err := fs.Parse(os.Args[1:]); err != nil {
		os.Exit(2)
	}
	for k := range strings.SplitSeq(kinds, ",") {
		o.scenarios = append(o.scenarios, scenario.Kind(strings.TrimSpace(k)))
	}
	if o.quick {
		o.n, o.p = 150, 20
	}
	if err := run(context.Background(), os.Stdout, o); err != nil {
		fmt.Fprintln(os.Stderr, "scenarios:", err)
		os.Exit(1)
	}
}

func joinKinds(ks []scenario.Kind) string {
	s := make([]string, len(ks))
	for i, k := range ks {
		s[i] = string(k)
	}
	return strings.Join(s, ",")
}

// baselines are the baselines every scenario runs.
func baselines() []train.ModelConfig {
	return []train.ModelConfig{
		{Name: "mean", Config: linear.Config{Mean: &linear.MeanConfig{}}},
		{Name: "ridge-fc", Config: linear.Config{Ridge: &linear.RidgeConfig{Input: "functional"}}},
		{Name: "ridge-both", Config: linear.Config{Ridge: &linear.RidgeConfig{Input: "both"}}},
		{Name: "kernel-ridge", Config: linear.Config{KernelRidge: &linear.KernelRidgeConfig{Input: "functional"}}},
		{Name: "cpm", Config: linear.Config{CPM: &linear.CPMConfig{Input: "functional"}}},
	}
}

// networks reads the networks of the models file of o, or the built-in
// ones. It returns the models and where they came from.
func networks(o options) ([]train.ModelConfig, string, error) {
	if o.baselinesOnly {
		return nil, "", nil
	}
	path, raw := o.models, []byte(nil)
	if path == "" {
		if _, err := os.Stat(defaultModelsFile); err == nil {
			path = defaultModelsFile
		}
	}
	if path != "" {
		var err error
		if raw, err = os.ReadFile(path); err != nil {
			return nil, "", err
		}
	} else {
		path, raw = "built-in", []byte(builtinNetworks)
	}
	ms, err := parseNetworks(raw)
	if err != nil {
		return nil, "", fmt.Errorf("%s: %w", path, err)
	}
	if len(ms) == 0 {
		return nil, "", fmt.Errorf("%s: no [[model]] with a [model.network] table", path)
	}
	return ms, path, nil
}

// parseNetworks returns the networks of a TOML file of [[model]] tables
// (an experiment file or one holding only models), checked as skein run
// checks them. A file without a [cohort] table gets a stand-in one, at its
// end, so that line numbers in errors stay right.
func parseNetworks(raw []byte) ([]train.ModelConfig, error) {
	if !bytes.Contains(raw, []byte("[cohort]")) {
		raw = append(bytes.Clone(raw), "\n[cohort]\nparticipants = \"scenario.tsv\"\ntargets = [\"score\"]\n[cohort.functional]\nfiles = \"{participant_id}_fc.tsv\"\n[cohort.structural]\nfiles = \"{participant_id}_sc.tsv\"\n"...)
	}
	exp, err := experiment.ParseExperiment(raw)
	if err != nil {
		return nil, err
	}
	var ms []train.ModelConfig
	for _, m := range exp.Models {
		if m.Network != nil {
			ms = append(ms, m)
		}
	}
	return ms, nil
}

func run(ctx context.Context, w io.Writer, o options) error {
	nets, from, err := networks(o)
	if err != nil {
		return err
	}
	if o.quick {
		for i := range nets {
			if e := nets[i].Network.Epochs; e == nil || *e > 30 {
				nets[i].Network.Epochs = new(30)
			}
		}
	}
	fmt.Fprintf(w, "Scenario benchmark: N = %d, p = %d, seed %d, oracle r %.2f, 5 folds × 2 repeats", o.n, o.p, o.seed, o.oracle)
	if from != "" {
		fmt.Fprintf(w, ", networks from %s", from)
	}
	fmt.Fprintln(w)
	for _, k := range o.scenarios {
		if err := runScenario(ctx, w, o, k, nets); err != nil {
			return fmt.Errorf("scenario %s: %w", k, err)
		}
	}
	fmt.Fprintln(w, "\n"+eval.Disclaimer)
	return nil
}

func runScenario(ctx context.Context, w io.Writer, o options, k scenario.Kind, nets []train.ModelConfig) error {
	sc, err := scenario.Generate(k, scenario.Config{N: o.n, P: o.p, Oracle: o.oracle, Seed: uint64(o.seed)})
	if err != nil {
		return err
	}
	exp := &experiment.Experiment{
		Seed:   o.seed,
		CV:     train.CV{Folds: new(5), Repeats: new(2)},
		Models: append(baselines(), nets...),
	}
	exp.SetDefaults()
	for _, m := range exp.Models {
		if err := m.Validate(); err != nil {
			return fmt.Errorf("model %q: %w", m.Name, err)
		}
	}
	timer := newUnitTimer()
	r := &train.Runner{Design: exp.Design(), Cohort: sc.Cohort, Jobs: o.jobs, OnEvent: timer.event}
	res, err := r.Run(ctx)
	if err != nil {
		return err
	}
	exp.Comparison.Reference = bestBaseline(exp, res)
	rep, err := experiment.Evaluate(ctx, exp, r, res, 0)
	if err != nil {
		return err
	}
	oracle := "0 (the score is independent of the connectomes)"
	if k != scenario.Null {
		y := make([]float64, len(sc.Noiseless))
		for i, p := range sc.Cohort.Participants {
			y[i] = p.Scores[0]
		}
		oracle = fmt.Sprintf("%.2f (this cohort %.3f)", sc.Oracle, stat.Correlation(sc.Noiseless, y, nil))
	}
	fmt.Fprintf(w, "\n## %s: oracle r %s; reference %s\n\n", k, oracle, exp.Comparison.Reference)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "model\tr\tfold r ± SD\tMAE\tΔr\tp\ts/unit\t")
	for _, m := range exp.Models {
		g := rep.Summary.Group(m.Name, "score")
		if g == nil {
			return fmt.Errorf("no figures for model %q", m.Name)
		}
		dr, p := "ref", ""
		if c := comparison(rep.Comparisons, m.Name); c != nil && !c.IsReference {
			dr, p = num("%+.3f", c.DiffR.MeanDiff), num("%.3f", c.DiffR.P)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s ± %s\t%.2f\t%s\t%s\t%.3f\t\n", m.Name, num("%.3f", g.Pooled.PearsonWithin),
			num("%.3f", g.FoldMean.Pearson), num("%.3f", g.FoldSD.Pearson), g.Pooled.MAE, dr, p, timer.mean(m.Name).Seconds())
	}
	return tw.Flush()
}

func comparison(cs []eval.Comparison, name string) *eval.Comparison {
	for i := range cs {
		if cs[i].Model == name {
			return &cs[i]
		}
	}
	return nil
}

// num formats x, or "–" when it is NaN (an r of constant predictions).
func num(format string, x float64) string {
	if math.IsNaN(x) {
		return "–"
	}
	return fmt.Sprintf(format, x)
}

// bestBaseline returns the baseline other than the mean predictor with the
// lowest mean error on the inner validation parts of the training folds
// (train.Result.InnerLoss), never looking at the test folds. The mean
// predictor is left out: its r is undefined, so Δr against it would be too.
func bestBaseline(exp *experiment.Experiment, res *train.Result) string {
	sum, count := map[int]float64{}, map[int]int{}
	for u, losses := range res.InnerLoss {
		if l := losses[0]; !math.IsNaN(l) {
			sum[u.Model] += l
			count[u.Model]++
		}
	}
	best, bestLoss := "", math.Inf(1)
	for i, m := range exp.Models {
		if m.Network != nil || m.Mean != nil || count[i] == 0 {
			continue
		}
		if l := sum[i] / float64(count[i]); l < bestLoss {
			best, bestLoss = m.Name, l
		}
	}
	return best
}

// unitTimer keeps the wall time of every unit from the runner's events.
type unitTimer struct {
	mu      sync.Mutex
	started map[train.Unit]time.Duration
	total   map[string]time.Duration
	count   map[string]int
}

func newUnitTimer() *unitTimer {
	return &unitTimer{started: map[train.Unit]time.Duration{}, total: map[string]time.Duration{}, count: map[string]int{}}
}

func (t *unitTimer) event(e train.Event) {
	t.mu.Lock()
	defer t.mu.Unlock()
	switch e.Kind {
	case train.UnitStarted:
		t.started[e.Unit] = e.Elapsed
	case train.UnitFinished:
		if s, ok := t.started[e.Unit]; ok {
			t.total[e.Model] += e.Elapsed - s
			t.count[e.Model]++
		}
	}
}

// mean returns the mean wall time of the model's units, 0 when none was
// timed.
func (t *unitTimer) mean(name string) time.Duration {
	t.mu.Lock()
	defer t.mu.Unlock()
	if t.count[name] == 0 {
		return 0
	}
	return t.total[name] / time.Duration(t.count[name])
}
