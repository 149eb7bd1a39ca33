// Package experiment owns an experiment and its run folder: the experiment
// file and its parts (Experiment, ReadExperiment: cohort, preprocessing,
// cross-validation, models, permutation test, sample size, output, drift
// rule, comparison, sweeps), the checks of its inputs before anything is
// trained, shared by skein check and skein run (CheckInputs), running a
// whole experiment (Run), evaluating
// it (Evaluate: metrics, the permutation test, sample-size curves, the
// comparison with a reference baseline and the statistical cautions), the
// run folder (RunDir, the file names of files.go, one writer and one
// reader of each file: Report.Write and ReadFolder), a run spread over a
// batch cluster (Plan, RunUnit, Merge), comparisons of two runs
// (CompareRuns), drift verdicts (CheckDrift), the history of an
// experiment file (UpdateHistory, DefaultHistory) and the record of
// versions (Versions).
//
// Data flows data → model → train → eval → experiment → cmd/skein: the
// package imports data, model, train and eval, and nothing imports it but
// its subpackage report (figures and report.html) and the command. A
// library user reproduces skein run with ReadExperiment and Run.
//
// skein is research software: it is not a diagnostic device.
package experiment
