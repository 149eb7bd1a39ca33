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
		fmt.Fprintln(fs.Output(), "usage: skein check EXPERIMENT.toml [--json]")
		fmt.Fprintln(fs.Output(), "\nLoads the [cohort] of the experiment file, checks every file and prints a summary:")
		fmt.Fprintln(fs.Output(), "included and excluded participants with reasons, regions, per-modality statistics,")
		fmt.Fprintln(fs.Output(), "scores, covariate codings and outlier flags. It also checks every setting against the")
		fmt.Fprintln(fs.Output(), "cohort as skein run does (folds, inner validation, columns, model names), lists every")
		fmt.Fprintln(fs.Output(), "problem at once and exits with code 2 when there is one.")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 1, "one experiment file")
	if err != nil {
		return err
	}
	// The same checks as skein run's, all problems at once.
	in, err := experiment.CheckFile(positional[0])
	if in.Report != nil {
		if werr := writeReport(cio, in.Report, *asJSON); werr != nil {
			return werr
		}
	}
	return err
}

func writeReport(cio commandIO, r *data.Report, asJSON bool) error {
	if !asJSON {
		return r.WriteText(cio.stdout)
	}
	enc := json.NewEncoder(cio.stdout)
	enc.SetIndent("", "  ")
	return enc.Encode(r)
}
