package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"strings"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/internal/atomicfile"
)

func cmdPredict(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("predict", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "write the predictions to this CSV file instead of standard output")
	classes := fs.String("classes", "", "write the class probabilities of a model fitted to class labels to this CSV file")
	fs.Usage = func() {
		describe(cio.stderr, "predict")
		fmt.Fprintln(cio.stderr, "usage: skein predict MODEL_DIR COHORT.toml [--out FILE] [--classes FILE]")
		fmt.Fprintln(cio.stderr, "\nMODEL_DIR is a saved model of a run: RUN/models/NAME/all (refitted on all participants,")
		fmt.Fprintln(cio.stderr, "with [output] refit = true) or RUN/models/NAME/rR-fF (one fold's). COHORT.toml is an")
		fmt.Fprintln(cio.stderr, "experiment file of which only the [cohort] table is read: it needs no targets and no score")
		fmt.Fprintln(cio.stderr, "columns, min_participants does not apply, and matrix files of participants its table does")
		fmt.Fprintln(cio.stderr, "not list are passed over. \"predicted\" is in score units, \"predicted_residual\" without")
		fmt.Fprintln(cio.stderr, "the confound fit.")
		fmt.Fprintln(cio.stderr, "\nA model fitted to class labels writes participant_id,model,target,class,probability,")
		fmt.Fprintln(cio.stderr, "predicted_class: one line per participant, label and class, the class predicted at the run's")
		fmt.Fprintln(cio.stderr, "[cv] threshold. They go to --classes FILE; without it, to --out (or standard output) when the")
		fmt.Fprintln(cio.stderr, "model learnt no scores.")
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
	write := func(path string, w func(io.Writer) error) error {
		if path == "" {
			return w(cio.stdout)
		}
		return atomicfile.WriteWith(path, w)
	}
	hasLabels := len(pred.Labels) > 0
	switch {
	case len(pred.Targets) > 0:
		if err := write(*out, pred.WriteCSV); err != nil {
			return err
		}
		if hasLabels && *classes == "" {
			fmt.Fprintf(cio.stderr, "skein predict: the model also classifies %s; pass --classes FILE for the class probabilities\n", labelNames(pred))
		}
	case *classes == "":
		*classes = *out
	}
	if hasLabels && (*classes != "" || len(pred.Targets) == 0) {
		if err := write(*classes, pred.WriteClassesCSV); err != nil {
			return err
		}
	}
	fmt.Fprintf(cio.stderr, "skein predict: %d participants × %d targets and %d labels; %s\n",
		len(pred.Cohort.Participants), len(pred.Targets), len(pred.Labels), data.Notice)
	return nil
}

// labelNames joins the names of the labels the model of pred learnt.
func labelNames(pred *experiment.Predicted) string {
	names := make([]string, len(pred.Labels))
	for i, l := range pred.Labels {
		names[i] = l.Name
	}
	return strings.Join(names, ", ")
}
