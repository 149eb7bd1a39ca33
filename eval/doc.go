// Package eval scores predictions: Pearson and Spearman correlation, MAE,
// median absolute error, RMSE, R² and normalized mutual information, pooled
// and per fold (Score, Summarize), and the statistics that say whether a
// result beats chance or another model: permutation p-values
// (PermutationPValue, and PermutationTest, which reruns a train.Runner
// under permuted scores), the corrected resampled t-test (CorrectedTTest),
// bootstrap intervals (BootstrapCI) and the comparison of every model with
// the best baseline (Compare). The metrics are usable alone, on predictions
// made anywhere (ReadPredictions); Evaluate and Report turn a finished run
// into the files of its run folder.
//
// Figures and the HTML report are in eval/report; comparisons of runs and
// drift rules in eval/runs.
package eval
