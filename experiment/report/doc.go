// Package report draws the figures of a finished run and writes its HTML
// report.
//
// Build reads a run folder (the files skein run writes: experiment.toml,
// cohort.json, predictions.csv, metrics.json, comparison.csv, summary.md,
// learning_curves.csv, permutations.csv, versions.txt,
// class_predictions.csv of a run with categorical targets (labels), the unit
// checkpoints under units/ and the saved fold networks under models/),
// draws its figures with gonum.org/v1/plot into its figures/ folder, each
// as PNG and SVG (in the style of internal/figure: one or two journal
// columns wide, Liberation Sans at 8–9 pt, keys under the data),
// writes the fold-averaged edge importance as importance.csv, and writes
// report.html: one self-contained page, its images embedded as data: URIs,
// that opens from disk in any browser without a network or scripts.
// Nothing is retrained: every figure is computed from the files. During a
// run, WriteRegions first stores the region labels as regions.txt so that
// maps rebuilt later are labelled.
//
// report.html opens with the answer (Run.Answer, the sentence summary.md
// opens with) and the answer charts; every table and figure lists models
// in the experiment's order, then scores in the order of its targets
// (labels in the order of its labels).
//
// The figures are
//
//	answer-TARGET.png             every model's r within folds and MAE with bootstrap intervals
//	observed-MODEL-TARGET.png     observed against predicted scores, pooled test predictions
//	roc-LABEL.png                 ROC curves of every model on a label, with their pooled AUCs
//	calibration-LABEL.png         observed share of a class against the mean predicted probability, per bin
//	comparison-TARGET.png         per-fold Pearson r and MAE of every model
//	learning-MODEL.png            training and inner-validation loss per epoch of each fold
//	null-MODEL-TARGET.png         permutation null distribution of r within folds
//	importance-MODEL-TARGET.png   fold-averaged edge importance, region × region
//	filters-MODEL-bB.png          first-layer filters of branch B of a network, region × channel
//	cohort.png                    functional mean connectivity and structural density of the cohort
//
// each with an .svg beside it. File names are made safe for any file
// system (see fileName). The ROC and calibration figures of a label are
// in its own section (SectionLabel), after the scores' predictions, with
// every model's confusion matrix at the threshold as a table of counts and
// row percentages (ConfusionTables); a run without labels has none.
//
// report reads the run folder through package experiment's names and
// readers and draws; it imports experiment, eval, train (for saved models),
// data and internal/figure, and nothing but the command imports it.
//
// skein is research software: its reports are not a diagnostic device.
package report
