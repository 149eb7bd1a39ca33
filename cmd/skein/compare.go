package main

import (
	"context"
	"errors"
	"flag"
	"fmt"

	"github.com/skein-neuro/skein/experiment"
)

func cmdCompare(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("compare", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	markdown := fs.Bool("markdown", false, "write Markdown tables instead of text")
	asJSON := fs.Bool("json", false, "write JSON instead of text")
	fs.Usage = func() {
		describe(cio.stderr, "compare")
		fmt.Fprintln(cio.stderr, "usage: skein compare RUN_A RUN_B [--markdown | --json]")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 2, "two run folders")
	if err != nil {
		return err
	}
	if *markdown && *asJSON {
		return badInput(errors.New("choose one of --markdown and --json"))
	}
	var read [2]*experiment.Folder
	for i, dir := range positional {
		if read[i], err = experiment.ReadFolder(dir); err != nil {
			return badInput(err)
		}
	}
	c := experiment.CompareRuns(read[0], read[1])
	switch {
	case *markdown:
		return c.WriteMarkdown(cio.stdout)
	case *asJSON:
		return c.WriteJSON(cio.stdout)
	}
	return c.WriteText(cio.stdout)
}
