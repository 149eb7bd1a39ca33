package main

import (
	"context"
	"flag"
	"fmt"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/atomicfile"
)

func cmdPredict(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("predict", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "write the predictions to this CSV file instead of standard output")
	fs.Usage = func() {
		describe(cio.stderr, "predict")
		fmt.Fprintln(cio.stderr, "usage: skein predict MODEL_DIR COHORT.toml [--out FILE]")
		fmt.Fprintln(cio.stderr, "\nMODEL_DIR is a saved model of a run: RUN/models/NAME/all (refitted on all participants,")
		fmt.Fprintln(cio.stderr, "with [output] refit = true) or RUN/models/NAME/rR-fF (one fold's). COHORT.toml is an")
		fmt.Fprintln(cio.stderr, "experiment file of which only the [cohort] table is read: it needs no targets and no score")
		fmt.Fprintln(cio.stderr, "columns, min_participants does not apply, and matrix files of participants its table does")
		fmt.Fprintln(cio.stderr, "not list are passed over. \"predicted\" is in score units, \"predicted_residual\" without")
		fmt.Fprintln(cio.stderr, "the confound fit.")
		fs.PrintDefaults()
	}
	positional, err := positionalArgs(fs, args, 2, "a model folder and a cohort file")
	if err != nil {
		return err
	}
	pred, err := experiment.Predict(positional[0], positional[1])
	if err != nil {
		return err
	}
	if pred.PreprocessDiffers {
		fmt.Fprintf(cio.stderr, "skein predict: %s: [preprocess] differs from the model's; the model's preprocessing is used\n", positional[1])
	}
	for _, x := range pred.Cohort.Excluded {
		fmt.Fprintf(cio.stderr, "skein predict: %s not predicted: %s\n", x.ID, x.Reason)
	}
	if *out == "" {
		err = pred.WriteCSV(cio.stdout)
	} else {
		err = atomicfile.WriteWith(*out, pred.WriteCSV)
	}
	if err != nil {
		return err
	}
	fmt.Fprintf(cio.stderr, "skein predict: %d participants × %d targets; %s\n",
		len(pred.Cohort.Participants), len(pred.Targets), data.Notice)
	return nil
}
