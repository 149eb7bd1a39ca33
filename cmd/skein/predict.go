package main

import (
	"context"
	"encoding/csv"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strconv"

	"github.com/skein-neuro/skein/data"
	"github.com/skein-neuro/skein/experiment"
	"github.com/skein-neuro/skein/train"
)

func cmdPredict(ctx context.Context, cio commandIO, args []string) error {
	fs := flag.NewFlagSet("predict", flag.ContinueOnError)
	fs.SetOutput(cio.stderr)
	out := fs.String("out", "", "write the predictions to this CSV file instead of standard output")
	fs.Usage = func() {
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
	saved, err := train.LoadModel(positional[0])
	if err != nil {
		return badInput(err)
	}
	exp, err := experiment.ReadExperiment(positional[1])
	if err != nil {
		return badInput(err)
	}
	pre := saved.Fitted.Preprocess
	if !reflect.DeepEqual(exp.Preprocess, pre) {
		fmt.Fprintf(cio.stderr, "skein predict: %s: [preprocess] differs from the model's; the model's preprocessing is used\n", positional[1])
	}
	cohort, _, err := data.CheckUnscored(exp.Cohort, pre, exp.Dir)
	if err != nil {
		return badInput(err)
	}
	for _, x := range cohort.Excluded {
		fmt.Fprintf(cio.stderr, "skein predict: %s not predicted: %s\n", x.ID, x.Reason)
	}
	score, residual, err := saved.Predict(cohort)
	if err != nil {
		return badInput(fmt.Errorf("%s: %w", positional[0], err))
	}
	w := cio.stdout
	var file *os.File
	if *out != "" {
		if file, err = os.CreateTemp(filepath.Dir(*out), "."+filepath.Base(*out)+".tmp-*"); err != nil {
			return err
		}
		defer os.Remove(file.Name())
		w = file
	}
	cw := csv.NewWriter(w)
	cw.Write([]string{"participant_id", "model", "target", "predicted", "predicted_residual"})
	for i, p := range cohort.Participants {
		for t, target := range saved.Fitted.Targets {
			cw.Write([]string{p.ID, saved.Fitted.Model, target,
				strconv.FormatFloat(score.At(i, t), 'g', -1, 64), strconv.FormatFloat(residual.At(i, t), 'g', -1, 64)})
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return err
	}
	if file != nil {
		if err := file.Close(); err != nil {
			return err
		}
		if err := os.Rename(file.Name(), *out); err != nil {
			return err
		}
	}
	fmt.Fprintf(cio.stderr, "skein predict: %d participants × %d targets; %s\n",
		len(cohort.Participants), len(saved.Fitted.Targets), data.Notice)
	return nil
}
