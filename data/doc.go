// Package data turns a lab's files into checked, preprocessed participant
// records: the participants table, per-participant functional and structural
// connectomes, region labels, the preprocessing of each matrix and the graph
// operators built from structure.
//
// Data flow: files on disk -> Load -> *Cohort, whose Participants every model
// learns from. Nothing in this package is fitted across participants, so
// nothing here can leak information between cross-validation folds.
// Every file error names its place (FileError, matched by ErrBadFile).
//
// Functional connectomes may also be estimated from each participant's
// regional time series (Modality.Series, with the estimators of package
// data/connectivity); an estimator that learns from the cohort (the
// tangent space) is left to the fold's preparation (Cohort.Series).
//
// A cohort's matrices are kept as p × p float64 matrices, or, with
// cohort.storage = "float32" (Source.Storage), as float32 upper triangles
// (Compact) read through Participant.FunctionalMatrix and
// StructuralMatrix.
//
// data is the bottom of skein's layers: it imports no other skein package
// but its own data/connectivity and internal helpers.
package data
