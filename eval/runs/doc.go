// Package runs reads finished run folders of skein run and relates runs to
// one another, for labs that rerun an experiment every night as their
// cohort grows: Compare sets two runs side by side (participants added and
// removed, settings, versions, every metric with its change against the
// fold-to-fold spread), CheckDrift applies an experiment's [drift] rule to
// a rerun, the history file keeps each run's headline figures, and
// PlotHistory and PlotSampleSize draw them as PNG images.
//
// skein is research software: it is not a diagnostic device.
package runs
