// Package model defines what every model kind of skein is: a Regressor,
// fitted on the training part of a cross-validation fold and asked to predict
// its test part. The graph-filter networks live in model/graphnet and the
// baselines in model/linear; the experiment runner in package train treats
// them all alike.
package model
