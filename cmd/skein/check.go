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
