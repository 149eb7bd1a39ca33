// Package linear holds the baselines every graph network is judged against:
// the mean predictor (Mean), ridge regression on connectome edges (Ridge),
// kernel ridge regression between participants (KernelRidge) and
// connectome-based predictive modelling (CPM). Each is a model.Regressor
// and a model.ColumnWise, registered as a model.Kind named by its table of
// an experiment file: [model.mean], [model.ridge], [model.kernel_ridge] or
// [model.cpm], whose settings are MeanConfig, RidgeConfig,
// KernelRidgeConfig and CPMConfig. Config groups the four tables; a saved
// mean predictor or ridge model is read back by Load.
//
// For a class label (a diagnosis) there are three model.Classifier
// baselines: the majority-class predictor (Majority, [model.majority]),
// L2-penalised logistic regression on edges (Logistic, [model.logistic]:
// the binary model for two classes, softmax for more, as scikit-learn's
// LogisticRegression) and kernel logistic regression with kernel ridge's
// kernels (KernelLogistic, [model.kernel_logistic]), with settings
// MajorityConfig, LogisticConfig and KernelLogisticConfig; Config groups
// these tables too (Config.NewClassifier), and LoadClassifier reads a
// saved one back. Logistic and KernelLogistic choose their penalty by
// inner k-fold cross-validation on log loss, folds stratified by class,
// and fit by L-BFGS (gonum's optimize) on the exact objective; with no
// more participants than edges both solve in the n-dimensional span of the
// training participants (the square root of their kernel), where every
// solution lies.
//
// The baselines read a participant's connectome as its edges: the upper
// triangle (i < j) of the p × p matrix, p(p−1)/2 values in the order of
// Edges; input = "both" puts the structural edges after the functional
// ones. Scores come as the n × T matrix of a model.Dataset, NaN where a
// score is missing; each column is fitted on the participants whose score
// it holds (standardization and inner folds included) and columns are
// independent of each other, so the permutation test may stack permuted
// scores as extra columns. Columns that miss the same scores share their
// work; a different missing pattern costs its own factorization, so
// permuted columns should keep each score's missing participants.
//
// Ridge and KernelRidge choose their penalty per column by inner k-fold
// cross-validation over the training fold (train and valid together),
// keeping participants who share a Group in one inner fold; Ridge can
// instead choose by efficient leave-one-out (inner = "loo"), exact from the
// one factorization its final fit uses. Both solve every penalty of the
// grid from one Householder reduction of the n × n kernel to tridiagonal
// form per inner fold, K = QTQᵀ, then an O(n) solve of T + aI per penalty
// (about 4n³/3 flops, against about 9n³ for an eigendecomposition; for
// ridge with fewer edges than participants, one SVD of the edges), so a
// grid and many columns cost little more than one fit. The reduction runs
// in gonum's pure-Go LAPACK, or in OpenBLAS's with the openblas build tag
// (see internal/lapack).
package linear

// The matrix products go through gonum's blas64, which the openblas build
// tag points at OpenBLAS (see internal/blas).
import _ "github.com/skein-neuro/skein/internal/blas"
