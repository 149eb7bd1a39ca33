// Package linear holds the baselines every graph network is judged against:
// the mean predictor, ridge and kernel ridge regression on connectome edges,
// and connectome-based predictive modelling. Each is a model.Regressor.
package linear
