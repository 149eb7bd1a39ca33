package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/experiment"
)

// cmdCheck loads and checks the cohort of an experiment file and prints
// what it found: skein check EXPERIMENT.toml [--json].
func cmdCheck(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	asJSON := fs.Bool("json", false, "print the report as JSON for scripts")
	fs.Usage = func() {
		describe(fs.Output(), "check")
		fmt.Fprintln(fs.Output(), "usage: skein check EXPERIMENT.toml [--json]")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one experiment file")
	if err != nil {
		return err
	}
	exp, err := experiment.ReadExperiment(positional[0])
	if err != nil {
		return badInput(err)
	}
	_, report, err := data.Check(exp.Cohort, exp.Preprocess, exp.Dir)
	if report != nil {
		if werr := writeReport(cio, report, *asJSON); werr != nil {
			return werr
		}
	}
	if err != nil {
		return badInput(err)
	}
	return nil
}

func writeReport(cio commandIO, r *data.Report, asJSON bool) error {
	if !asJSON {
		return r.WriteText(cio.stdout)
	}
	enc := json.NewEncoder(cio.stdout)
	enc.SetIndent("", "  ")
	return enc.Encode(r)
}
