package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"path/filepath"

	"github.com/skein-neuro/skein/data"

	"github.com/skein-neuro/skein/data/synth"
)

// cmdSynth invents a synthetic cohort and writes it as a lab's files:
// skein synth --out DIR [options].
func cmdSynth(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("synth", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "folder to write the cohort into (required); must not exist or be empty")
	force := fs.Bool("force", false, "replace the folder --out if it exists and is not empty")
	format := fs.String("format", synth.FormatTSV, `matrix files: "tsv" (text) or "npy" (NumPy)`)
	var cfg synth.Config
	fs.IntVar(&cfg.N, "n", 150, "number of participants")
	fs.IntVar(&cfg.P, "p", 32, "number of regions")
	fs.Int64Var(&cfg.Seed, "seed", 1, "seed: the same options give the same cohort")
	fs.IntVar(&cfg.Targets, "targets", synth.DefaultTargets, fmt.Sprintf("number of scores (%d at most)", len(synth.ScoreNames)))
	fs.Float64Var(&cfg.Ceiling, "ceiling", synth.DefaultCeiling, "Pearson r between the planted signal and each score: the best any model can reach")
	fs.BoolVar(&cfg.Null, "null", false, "scores independent of the connectomes (a cohort where nothing should beat chance)")
	siblings := fs.Bool("siblings", false, "participants come in families (column \"family\") sharing part of their scores and connectomes")
	fs.IntVar(&cfg.FamilySize, "family-size", 2, "family size with --siblings")
	fs.Float64Var(&cfg.Motion, "motion", 0, "strength of a head-motion confound added to functional matrices and scores (0: none)")
	fs.Float64Var(&cfg.Missing, "missing", 0, "fraction of scores left missing (n/a)")
	fs.IntVar(&cfg.TimePoints, "timepoints", synth.DefaultTimePoints, "length of the simulated time series behind each functional matrix")
	fs.Float64Var(&cfg.StructuralShare, "structural-share", 0, "share of the planted signal carried by structural edges, in [0, 1]")
	fs.BoolVar(&cfg.Series, "series", false, "also write each participant's regional time series (ts/), read by the experiment file to estimate the connectomes")
	fs.BoolVar(&cfg.Amplitudes, "amplitudes", false, "plant the signal in the amplitude of regions' fluctuations (covariances, tangent coordinates; no correlation sees it) instead of shared sources")
	fs.BoolVar(&cfg.Couplings, "couplings", false, "plant the signal in direct couplings between region pairs (partial correlations, precision) instead of shared sources")
	var label synth.Label
	fs.StringVar(&label.Name, "label", "", fmt.Sprintf("add a class label column of this name (classes %q, %q) with a planted group difference on functional edges; \"\" for none", synth.LabelClasses[0], synth.LabelClasses[1]))
	fs.Float64Var(&label.Prevalence, "prevalence", synth.DefaultPrevalence, fmt.Sprintf("with --label, the share of %q", synth.LabelClasses[1]))
	fs.Float64Var(&label.AUC, "label-auc", synth.DefaultLabelAUC, "with --label, the ROC AUC of the planted difference: the best any classifier can reach")
	fs.BoolVar(&label.Null, "null-label", false, "with --label, a label independent of the connectomes (a cohort where no classifier should beat AUC 0.5)")
	fs.Usage = func() {
		describe(fs.Output(), "synth")
		fmt.Fprintln(fs.Output(), "usage: skein synth --out DIR [options]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return nil
		}
		return badInput(err)
	}
	switch {
	case fs.NArg() > 0:
		return badInput(fmt.Errorf("unexpected argument %q: synth takes options only (see skein synth -h)", fs.Arg(0)))
	case *out == "":
		return badInput(errors.New("option --out: a folder to write into is required"))
	case *format != synth.FormatTSV && *format != synth.FormatNPY:
		return badInput(fmt.Errorf("option --format: %q is not one of %q or %q", *format, synth.FormatTSV, synth.FormatNPY))
	}
	if *siblings {
		if cfg.FamilySize < 2 {
			return badInput(fmt.Errorf("option --family-size: got %d, want 2 or more with --siblings", cfg.FamilySize))
		}
	} else {
		cfg.FamilySize = 0
	}
	if label.Name != "" {
		cfg.Label = &label
	} else {
		for _, name := range []string{"prevalence", "label-auc", "null-label"} {
			if set(fs, name) {
				return badInput(fmt.Errorf("option --%s: goes with --label NAME", name))
			}
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}

	// synthFlags maps synth.Config fields to the options that set them, so
	// that a bad value is reported under the option the user typed.
	synthFlags := map[string]string{
		"N":                "n",
		"P":                "p",
		"Targets":          "targets",
		"Ceiling":          "ceiling",
		"FamilySize":       "family-size",
		"Motion":           "motion",
		"Missing":          "missing",
		"TimePoints":       "timepoints",
		"StructuralShare":  "structural-share",
		"Couplings":        "couplings",
		"Amplitudes":       "amplitudes",
		"Label.Name":       "label",
		"Label.Prevalence": "prevalence",
		"Label.AUC":        "label-auc",
	}

	c, err := synth.Generate(cfg)
	if err != nil {
		var ce *synth.ConfigError
		if errors.As(err, &ce) && synthFlags[ce.Field] != "" {
			return badInput(fmt.Errorf("option --%s: got %v, want %s", synthFlags[ce.Field], ce.Value, ce.Want))
		}
		return err
	}
	write := synth.Write
	if *force {
		write = synth.Replace
	}
	if err := write(*out, c, *format); err != nil {
		if errors.Is(err, synth.ErrExists) {
			return badInput(fmt.Errorf("%w; use --force to replace it", err))
		}
		return err
	}

	w := cio.stdout
	fmt.Fprintf(w, "wrote %d participants, %d regions (%s matrices) to %s\n", len(c.Participants), c.P(), *format, *out)
	if c.Grouped() {
		fmt.Fprintf(w, "families of %d in column \"family\"\n", cfg.FamilySize)
	}
	for _, pt := range c.Truth {
		if pt.Signal == nil {
			fmt.Fprintf(w, "  %-10s null: independent of the connectomes", pt.Target)
			if pt.MotionWeight > 0 {
				fmt.Fprint(w, " except through the motion confound")
			}
			fmt.Fprintln(w)
			continue
		}
		fmt.Fprintf(w, "  %-10s planted signal on %d+%d functional", pt.Target, len(pt.Positive), len(pt.Negative))
		if n := len(pt.StructuralPositive) + len(pt.StructuralNegative); n > 0 {
			fmt.Fprintf(w, " and %d structural", n)
		}
		fmt.Fprintf(w, " edges; ceiling r = %.3f\n", pt.Ceiling)
	}
	if lt := c.LabelTruth; lt != nil {
		if lt.Signal == nil {
			fmt.Fprintf(w, "  %-10s null label: independent of the connectomes; %s share %.2f\n", lt.Label, synth.LabelClasses[1], lt.Prevalence)
		} else {
			fmt.Fprintf(w, "  %-10s planted group difference on %d+%d functional edges; %s share %.2f; oracle AUC = %.3f\n",
				lt.Label, len(lt.Positive), len(lt.Negative), synth.LabelClasses[1], lt.Prevalence, lt.AUC)
		}
	}
	fmt.Fprintf(w, "next: skein check %s\n", filepath.Join(*out, "experiment.toml"))
	fmt.Fprintln(w, "The data are invented (no real participants). skein is "+data.Notice+".")
	return nil
}

// set reports whether the option name was given on the command line.
func set(fs *flag.FlagSet, name string) bool {
	given := false
	fs.Visit(func(f *flag.Flag) { given = given || f.Name == name })
	return given
}
