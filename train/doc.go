// Package train runs an experiment: it reads the experiment file, splits the
// cohort into repeated (grouped, optionally stratified) k-fold
// cross-validation folds, fits everything learned from data on training
// parts only, trains every model under the same splits and collects their
// test predictions.
package train
