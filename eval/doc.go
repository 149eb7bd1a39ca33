// Package eval scores predictions: Pearson correlation within folds (the
// headline r, PearsonWithinFolds) and pooled, Spearman correlation, MAE,
// median absolute error, RMSE, R², and normalized and adjusted mutual
// information (NMI, AMI) of equal-frequency bins, with NMI's chance level,
// pooled and per fold (Score, Summarize), and the statistics that say
// whether a result beats chance or another model: permutation p-values
// (PermutationPValue; null distributions assembled from the scores of
// permuted runs, AssembleNulls), the
// corrected resampled t-test over distinct folds (CorrectedTTest,
// DuplicateFolds), bootstrap intervals (BootstrapCI) and the comparison of
// every model with a reference baseline chosen without the test folds
// (ChooseReference, Compare). The metrics are usable alone, on predictions
// made anywhere (ReadPredictions, Summary.WriteText).
//
// For a categorical target (a class label such as a diagnosis), eval scores
// predicted class probabilities: ROC AUC within folds (the headline AUC,
// AUCWithinFolds) and pooled (ROCAUC, one-vs-rest for more classes,
// OneVsRestAUC) and the ROC curve (ROCCurve), balanced accuracy and
// accuracy, log loss, the Brier score, sensitivity and specificity at a
// threshold (ScoreClasses, PredictedClasses), confusion matrices (Confusion)
// and reliability curves (Calibration), and bootstrap intervals of any of
// them over participants (BootstrapClassCI).
//
// Pooled Pearson r of cross-validated predictions is biased downwards by
// the folds' training means; r within folds is not. Likewise pooled AUC
// is biased downwards by the training folds' class frequencies unless the
// folds are stratified on the label; AUC within folds is not. Binning keeps tied
// values together (EqualFrequencyBins), so NMI and AMI do not depend on
// the order of the rows. NMI is biased upwards in small samples: compare
// it with Scores.NMIChance, its mean under random pairing, or read AMI,
// which subtracts that chance agreement. Predictions that are constant up
// to rounding on the scale of the scores (ConstantPredictions) have no
// correlation (NaN) and NMI and AMI 0.
//
// eval works on numbers and prediction files only: it imports data (for
// positioned file errors) and model (for the Prediction row) and must not
// import train or experiment. Running cross-validation, the permutation
// test's reruns and the run folder are package experiment's; figures and
// the HTML report are in experiment/report.
package eval
