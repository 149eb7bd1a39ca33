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
// data is the bottom of skein's layers: it imports no other skein package.
package data
