// Package eval scores predictions: Pearson and Spearman correlation, MAE,
// median absolute error, RMSE, R² and normalized mutual information, pooled
// and per fold, and the statistics that say whether a result beats chance or
// another model. It is usable alone, on predictions made anywhere.
package eval
