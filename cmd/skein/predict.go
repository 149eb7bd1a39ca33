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
		fmt.Fprintln(cio.stderr, "\nMODEL_DIR is a saved model of a run (RUN/models/NAME/all or RUN/models/NAME/rR-fF);")
		fmt.Fprintln(cio.stderr, "COHORT.toml an experiment file whose [cohort] table describes the participants to predict")
		fmt.Fprintln(cio.stderr, "(score columns are not needed). Their matrices are preprocessed as at training time, and")
		fmt.Fprintln(cio.stderr, "the preparation fitted on the model's training participants (fitted.json) is replayed:")
		fmt.Fprintln(cio.stderr, "\"predicted\" is in score units, \"predicted_residual\" without the confound fit.")
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
