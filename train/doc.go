// Package train cross-validates models on a cohort: it splits the cohort
// into repeated (grouped, optionally stratified by a target or by site)
// k-fold folds or leave-k-sites-out folds (Folds), fits the fold's
// preparation on its training participants only (Prep, Pipeline: ComBat
// harmonisation of the edges across sites (Harmonizer, FitComBat), target
// standardisation and confound regression, site one-hot included, shared
// by every model of the fold, then the input steps of a model's own kind,
// such as the per-edge standardization of networks, EdgeScaler), picks
// the inner validation part, trains every model of a Design under the same
// splits and collects their test predictions (Runner, Result).
//
// A run is made of independent units, one model on one fold of one repeat,
// each seeded from the design's seed, the repeat and the fold (never the
// model's name or settings: every model of a fold draws from the same
// seed), so results do not depend on how many run at once. Finished units are kept as
// checkpoints (Checkpoints) so that an interrupted run resumes and units
// run on separate machines can be gathered. The package also repeats the
// cross-validation under permutations of the participants table
// (Permutations, Runner.RunPermutations) and on nested training subsets
// for sample-size curves (Runner.RunSampleSizes); saves fold models with
// what was fitted beside them (Fitted, LoadModel); and chooses the
// parallelism of a run (ChooseParallelism).
//
// train owns the Runner, the fold preparation, checkpoints and saved fold
// models. It imports data and model (and model kinds through the registry)
// and must not import eval or experiment: scoring is eval's, the
// experiment file and the run folder are experiment's.
package train
