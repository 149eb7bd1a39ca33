// Package connectivity estimates connectomes from regional time series:
// the sample and Ledoit–Wolf shrinkage covariance of one participant's
// T × p series, the Pearson and partial correlation derived from a
// covariance, and the tangent-space embedding of covariances at a
// reference mean (the log-Euclidean or the affine-invariant geometric
// mean) with its usual vectorisation.
//
// Estimators of one participant (Covariance, LedoitWolf, Correlation,
// PartialCorrelation) learn nothing from other participants. The
// reference of a tangent space is learned from a set of participants
// (LogEuclideanMean, GeometricMean) and so must be fitted on a training
// fold only; train.TangentSpace does that inside skein's folds.
//
// Matrix functions of a symmetric matrix (logarithm, exponential, square
// root) are computed from its eigendecomposition (gonum's EigenSym):
// f(A) = V diag(f(λ)) Vᵀ.
//
// connectivity imports no skein package.
package connectivity
