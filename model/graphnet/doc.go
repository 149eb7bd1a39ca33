// Package graphnet builds and trains graph-filter networks on gorgonia:
// edge-to-edge, edge-to-node and node-to-graph filters, graph convolution
// over the structural graph, two-branch fusion of modalities and a
// multi-layer perceptron head. A Network is a model.Regressor.
package graphnet
