// Package train runs an experiment: it reads the experiment file
// (Experiment, ReadExperiment), splits the cohort into repeated (grouped,
// optionally stratified) k-fold cross-validation folds (Folds), fits
// everything learned from data on training parts only (TargetPrep, inner
// validation), trains every model under the same splits and collects their
// test predictions (Runner, Result).
//
// A run is made of independent units, one model on one fold of one repeat,
// each seeded from the experiment's seed and its own identity, so results
// do not depend on how many run at once. Units are checkpointed in the
// run's work folder (RunDir) so that an interrupted run resumes, and the
// same units can be spread over a batch cluster (BatchUnit) and merged.
// The package also repeats the cross-validation under permuted scores for
// the permutation test (Permutations, Runner.RunPermutations), on nested
// training subsets for sample-size curves, and over sweep grids; saves
// fold models with what was fitted beside them (Fitted, LoadModel); and
// chooses the parallelism of a run (ChooseParallelism).
//
// Scoring the predictions is package eval's.
package train
